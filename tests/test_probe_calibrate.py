"""Calibrating h from probe logs: synthetic runs with a known h.

Synthetic logs come from two places: the project's own probe model (the fit
must then recover h to rounding, and its interval must cover the truth at
its stated rate under known noise), and an independent method-of-lines slab
written here (finite differences in space, scipy's BDF in time), which
checks the fit against physics the project did not compute.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.sparse import diags

from optimizer.probes.calibrate import CalibrationError, calibrate
from optimizer.probes.logs import read_log
from optimizer.probes.model import air_segments, probe_temperatures
from thermal.foods import ConstantProperties
from thermal.geometry import Slab

K, RHO, CP = 0.45, 1050.0, 3500.0
PROPS = ConstantProperties(K, RHO, CP)
SLAB = Slab(0.05)
COARSE = {"n_cells": 8, "steps": 30}


def _write_log(path, times, cores, air, *, decimals=None):
    """A logger CSV: elapsed seconds, core columns, an air column."""
    lines = ["time [s]," + ",".join(f"core {i + 1}" for i in range(len(cores))) + ",air"]
    for j, t in enumerate(times):
        vals = [c[j] for c in cores] + [air[j]]
        if decimals is not None:
            vals = [round(float(v), decimals) for v in vals]
        lines.append(f"{t:g}," + ",".join(repr(float(v)) for v in vals))
    path.write_text("\n".join(lines) + "\n")
    return path


def _own_model_curves(times, air, h, starts, *, offset=0.0, kf=1.0, **grid):
    segs = air_segments(times, air)
    n = len(starts)
    return probe_temperatures(
        SLAB,
        PROPS,
        segs,
        times,
        np.full(n, h),
        start_core=np.asarray(starts, dtype=float),
        offset=offset,
        conductivity_factor=kf,
        **grid,
    )


def test_noise_free_log_from_the_model_recovers_h_within_0_01_percent(tmp_path):
    times = np.arange(0.0, 4801.0, 60.0)
    air = np.full(times.size, 175.0)
    y = _own_model_curves(times, air, 32.0, [4.0, 5.0, 6.5], **COARSE)
    log = read_log(_write_log(tmp_path / "run.csv", times, list(y), air))
    fit = calibrate(log, SLAB, PROPS, **COARSE)
    assert fit.h.value == pytest.approx(32.0, rel=1e-4)
    # without noise both intervals shrink to the estimate
    assert fit.h.high / fit.h.low < 1 + 1e-5
    assert fit.h.boot_low is not None and fit.h.boot_high / fit.h.boot_low < 1 + 1e-5
    assert fit.rms < 1e-3
    assert [p.channel for p in fit.probes] == ["core 1", "core 2", "core 3"]
    assert fit.h.unit == "W/(m² K)"
    # the first reading is the start condition, not fitted
    assert not fit.probes[0].used[0] and fit.probes[0].used[1:].all()


def test_noise_free_recovers_h_with_the_probe_offset_and_a_conductivity_factor(tmp_path):
    times = np.arange(0.0, 4801.0, 60.0)
    air = np.full(times.size, 175.0)
    air[times >= 2400.0] = 150.0  # the set point lowered half way
    y = _own_model_curves(times, air, 40.0, [4.0, 6.0], offset=0.25, **COARSE)
    log = read_log(_write_log(tmp_path / "run.csv", times, list(y), air))
    fit = calibrate(log, SLAB, PROPS, fit_offset=True, bootstrap=0, **COARSE)
    assert fit.h.value == pytest.approx(40.0, rel=1e-4)
    assert fit.probe_offset is not None
    assert fit.probe_offset.value == pytest.approx(0.25, abs=1e-4)
    y = _own_model_curves(times, air, 40.0, [4.0, 6.0], kf=1.2, **COARSE)
    log = read_log(_write_log(tmp_path / "run2.csv", times, list(y), air))
    fit = calibrate(log, SLAB, PROPS, fit_conductivity=True, bootstrap=0, **COARSE)
    assert fit.h.value == pytest.approx(40.0, rel=1e-3)
    assert fit.conductivity_factor.value == pytest.approx(1.2, rel=1e-3)


def _method_of_lines_slab(times, air_times, air, h, t0, n=81):
    """Centre temperature of a slab by finite differences and scipy BDF (test reference).

    Nodes from the centre (symmetry) to the surface (convective, ghost node),
    second order in space; the air is linear between its logged readings.
    """
    half = SLAB.thickness / 2.0
    dx = half / (n - 1)
    alpha = K / (RHO * CP)
    main = np.full(n, -2.0)
    upper = np.ones(n - 1)
    lower = np.ones(n - 1)
    upper[0] = 2.0  # symmetry: T[-1] = T[1]
    lower[-1] = 2.0  # surface ghost node T[n] = T[n-2] - 2 dx h/k (T[n-1] - Ta)
    main[-1] = -2.0 - 2.0 * dx * h / K
    a = diags([lower, main, upper], [-1, 0, 1]).tocsc() * (alpha / dx**2)
    gain = 2.0 * dx * h / K * alpha / dx**2

    def rhs(t, y):
        out = a @ y
        out[-1] += gain * np.interp(t, air_times, air)
        return out

    sol = solve_ivp(
        rhs,
        (times[0], times[-1]),
        np.full(n, t0),
        method="BDF",
        jac=a,
        t_eval=times,
        rtol=1e-9,
        atol=1e-9,
        max_step=30.0,
    )
    return sol.y[0]


def test_independent_method_of_lines_log_quantised_to_0_1_K_gives_h_within_2_percent(tmp_path):
    times = np.arange(0.0, 5401.0, 30.0)
    air = np.minimum(120.0 + 55.0 * times / 1200.0, 175.0)  # oven heating up for 20 min
    h_true = 28.0
    cores = [_method_of_lines_slab(times, times, air, h_true, t0) for t0 in (4.0, 7.0)]
    log = read_log(_write_log(tmp_path / "run.csv", times, cores, air, decimals=1))
    fit = calibrate(log, SLAB, PROPS, bootstrap=0, n_cells=12, steps=40)
    assert fit.h.value == pytest.approx(h_true, rel=0.02)
    assert fit.rms < 0.2


@pytest.mark.slow
def test_jacobian_interval_covers_the_true_h_in_at_least_90_percent_of_50_seeded_runs(tmp_path):
    times = np.arange(0.0, 3601.0, 60.0)
    air = np.full(times.size, 175.0)
    h_true = 30.0
    grid = {"n_cells": 6, "steps": 12}  # the data come from the same grid: exact model
    (clean,) = _own_model_curves(times, air, h_true, [5.0], **grid)
    covered = 0
    widths = []
    for seed in range(50):
        rng = np.random.default_rng(seed)
        noisy = clean + rng.normal(0.0, 0.3, clean.size)
        noisy[0] = 5.0
        path = _write_log(tmp_path / f"run{seed}.csv", times, [noisy], air, decimals=1)
        fit = calibrate(read_log(path), SLAB, PROPS, bootstrap=0, **grid)
        covered += fit.h.low <= h_true <= fit.h.high
        widths.append(fit.h.high / fit.h.low)
    assert covered >= 45, f"covered {covered} of 50"
    # an interval that covers by being wide is no use: it stays narrow here
    assert max(widths) < 1.1


def test_bootstrap_over_probes_sees_piece_to_piece_spread(tmp_path):
    times = np.arange(0.0, 3601.0, 60.0)
    air = np.full(times.size, 175.0)
    hs = [24.0, 27.0, 30.0, 33.0, 36.0]
    cores = [_own_model_curves(times, air, h, [5.0], **COARSE)[0] for h in hs]
    log = read_log(_write_log(tmp_path / "run.csv", times, cores, air, decimals=1))
    fit = calibrate(log, SLAB, PROPS, bootstrap=100, **COARSE)
    assert fit.h.boot_low is not None
    assert fit.h.boot_low < fit.h.value < fit.h.boot_high
    # the pieces differ by ±20 %: the resampled spread is far wider than the
    # reading noise alone allows
    assert fit.h.boot_high / fit.h.boot_low > 1.05
    assert (fit.h.boot_high - fit.h.boot_low) > 3 * (fit.h.high - fit.h.low)
    assert any("residuals follow a trend" in w for w in fit.warnings)
    assert any("quote the bootstrap interval" in w for w in fit.warnings)


def test_warnings_name_what_the_run_cannot_identify(tmp_path):
    times = np.arange(0.0, 241.0, 20.0)
    air = np.full(times.size, 175.0)
    y = _own_model_curves(times, air, 30.0, [5.0], **COARSE)
    log = read_log(_write_log(tmp_path / "short.csv", times, list(y), air, decimals=1))
    fit = calibrate(log, SLAB, PROPS, **COARSE)
    assert any(w.startswith("run too short") for w in fit.warnings)

    times = np.arange(0.0, 3601.0, 60.0)
    air = np.full(times.size, 175.0)
    y = _own_model_curves(times, air, 600.0, [5.0], **COARSE)
    log = read_log(_write_log(tmp_path / "high.csv", times, list(y), air, decimals=1))
    fit = calibrate(log, SLAB, PROPS, **COARSE)
    assert fit.biot > 20
    assert any("Bi = " in w and "follows the air" in w for w in fit.warnings)

    y = _own_model_curves(times, air, 30.0, [5.0], **COARSE)
    rng = np.random.default_rng(3)
    noisy = y[0] + rng.normal(0, 0.3, y.shape[1])
    log = read_log(_write_log(tmp_path / "hk.csv", times, [noisy], air, decimals=1))
    fit = calibrate(log, SLAB, PROPS, fit_conductivity=True, **COARSE)
    assert any("strongly correlated" in w for w in fit.warnings)

    fit = calibrate(log, SLAB, PROPS, h_bounds=(1.0, 10.0), **COARSE)
    assert fit.h.at_bound
    assert any("at its bound" in w for w in fit.warnings)


def test_bad_calibration_requests(tmp_path):
    path = tmp_path / "noair.csv"
    path.write_text("time [s],core\n" + "".join(f"{60 * i},{5 + 2 * i}\n" for i in range(12)))
    log = read_log(path)
    with pytest.raises(CalibrationError, match="no air channel"):
        calibrate(log, SLAB, PROPS, **COARSE)
    fit = calibrate(log, SLAB, PROPS, air_temperature=175.0, bootstrap=0, **COARSE)
    assert fit.h.value > 0
    with pytest.raises(CalibrationError, match="probe 'T9'"):
        calibrate(log, SLAB, PROPS, probes=["T9"], air_temperature=175.0)
    with pytest.raises(CalibrationError, match="window"):
        calibrate(log, SLAB, PROPS, window=(100.0, 50.0), air_temperature=175.0)
    with pytest.raises(CalibrationError, match="h_bounds"):
        calibrate(log, SLAB, PROPS, h_bounds=(0.0, 10.0), air_temperature=175.0)
