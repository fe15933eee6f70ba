"""Tests of thermal.numeric: cross-method against exact series, energy, orders.

Constant-property cases are checked against the exact series solution of
transient conduction with a convective surface (the project's
thermal.series when present, else an independent series built here with
scipy's brentq), products of 1-D series for finite cylinders and blocks, and
lumped radiation against scipy's solve_ivp.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq
from scipy.special import j0, j1, jn_zeros

from thermal.errors import ThermalInputError
from thermal.numeric import (
    STEFAN_BOLTZMANN,
    Profile,
    Segment,
    SimulationResult,
    resample,
    simulate,
    zone_segments,
)

try:  # cross-method: prefer the project's own series when it has landed
    from thermal import series as _series
except ImportError:  # pragma: no cover - depends on the tree state
    _series = None


class Constant:
    """Constant properties (duck-typed property object)."""

    def __init__(self, k: float = 0.5, rho: float = 1050.0, cp: float = 3500.0):
        self.k, self.rho, self.cp = k, rho, cp

    def conductivity(self, t):
        return np.full_like(np.asarray(t, dtype=float), self.k)

    def density(self, t):
        return np.full_like(np.asarray(t, dtype=float), self.rho)

    def enthalpy(self, t):
        return self.cp * (np.asarray(t, dtype=float) + 40.0)

    def temperature_from_enthalpy(self, h):
        return np.asarray(h, dtype=float) / self.cp - 40.0

    @property
    def alpha(self) -> float:
        return self.k / (self.rho * self.cp)


class Shape:
    """Minimal geometry object: the ``directions`` contract of thermal.geometry."""

    def __init__(self, kind: str, *directions: tuple[str, float]):
        self.kind = kind
        self.directions = tuple(directions)


# --- independent series (Source: Incropera et al., Fundamentals of Heat and
# Mass Transfer, ch. 5, eigen-equations zeta tan zeta = Bi, zeta J1/J0 = Bi,
# 1 - zeta cot zeta = Bi, and the series coefficients there)


def _roots(shape: str, bi: float, n: int = 150) -> np.ndarray:
    out = np.empty(n)
    z0 = np.concatenate([[0.0], jn_zeros(0, n + 1)])
    z1 = np.concatenate([[0.0], jn_zeros(1, n + 1)])
    for i in range(n):
        if shape == "slab":
            f = lambda z: z * np.sin(z) - bi * np.cos(z)  # noqa: E731
            lo, hi = i * np.pi, i * np.pi + np.pi / 2
        elif shape == "sphere":
            f = lambda z: (1.0 - bi) * np.sin(z) - z * np.cos(z)  # noqa: E731
            lo, hi = i * np.pi, (i + 1) * np.pi
        else:
            f = lambda z: z * j1(z) - bi * j0(z)  # noqa: E731
            lo, hi = z1[i], z0[i + 1]
        out[i] = brentq(f, lo + 1e-10, hi - 1e-10, xtol=1e-14)
    return out


def _local_ratio(shape: str, bi: float, fo: np.ndarray, x: float = 0.0) -> np.ndarray:
    z = _roots(shape, bi)
    if shape == "slab":
        c = 4 * np.sin(z) / (2 * z + np.sin(2 * z))
        mode = np.cos(z * x)
    elif shape == "cylinder":
        c = 2 / z * j1(z) / (j0(z) ** 2 + j1(z) ** 2)
        mode = j0(z * x)
    else:
        c = 4 * (np.sin(z) - z * np.cos(z)) / (2 * z - np.sin(2 * z))
        mode = np.sinc(z * x / np.pi)
    fo = np.asarray(fo, dtype=float)[..., None]
    return (c * mode * np.exp(-(z**2) * fo)).sum(axis=-1)


def _local_mean_ratio(shape: str, bi: float, fo: np.ndarray) -> np.ndarray:
    z = _roots(shape, bi)
    m = {"slab": 1, "cylinder": 2, "sphere": 3}[shape]
    # mean ratio = sum (m Bi^2 / z^2) * c_n' exp(-z^2 Fo); written per shape
    if shape == "slab":
        c = 2 * bi**2 / (z**2 * (z**2 + bi**2 + bi))
    elif shape == "cylinder":
        c = 4 * bi**2 / (z**2 * (z**2 + bi**2))
    else:
        c = 6 * bi**2 / (z**2 * (z**2 + bi**2 - bi))
    del m
    fo = np.asarray(fo, dtype=float)[..., None]
    return (c * np.exp(-(z**2) * fo)).sum(axis=-1)


def ratio(shape: str, bi: float, fo: np.ndarray, x: float = 0.0) -> np.ndarray:
    if _series is not None:
        return np.asarray(_series.temperature_ratio(shape, bi, fo, position=x), dtype=float)
    return _local_ratio(shape, bi, fo, x)


def mean_ratio(shape: str, bi: float, fo: np.ndarray) -> np.ndarray:
    if _series is not None:
        return np.asarray(_series.mean_temperature_ratio(shape, bi, fo), dtype=float)
    return _local_mean_ratio(shape, bi, fo)


PROPS = Constant()
T0, TAIR, H = 5.0, 90.0, 40.0


def _product_series(dirs, times, which="centre"):
    th = np.ones_like(times)
    for shape, length in dirs:
        bi = H * length / PROPS.k
        fo = PROPS.alpha * times / length**2
        th = th * (ratio(shape, bi, fo) if which == "centre" else mean_ratio(shape, bi, fo))
    return TAIR + (T0 - TAIR) * th


# --- cross-method: numeric vs exact series, every shape -----------------------

CASES = [
    # (kind, directions, n_cells, dt [s])
    ("slab", (("slab", 0.03),), 32, 30.0),
    ("cylinder", (("cylinder", 0.03),), 40, 20.0),
    ("sphere", (("sphere", 0.03),), 48, 20.0),
    ("finite_cylinder", (("cylinder", 0.03), ("slab", 0.04)), 28, 25.0),
    ("block", (("slab", 0.03), ("slab", 0.04), ("slab", 0.05)), (26, 22, 20), 30.0),
]


@pytest.mark.parametrize(("kind", "dirs", "n", "dt"), CASES, ids=[c[0] for c in CASES])
def test_core_matches_exact_series(kind, dirs, n, dt):
    # Source: exact series (Incropera et al., ch. 5; product solution for
    # multidimensional shapes, same text). Tolerance 0.05 K is the project's.
    res = simulate(Shape(kind, *dirs), PROPS, T0, [Segment(3600.0, TAIR, H)], n_cells=n, dt=dt)
    t = res.times[0, 1:]
    assert np.abs(res.core[0, 1:] - _product_series(dirs, t)).max() < 0.05
    # mean temperature, and heat per kg = cp (mean change), against the series;
    # the mean is dominated by the steep surface layer early on: 0.1 K there
    mean_ref = _product_series(dirs, t, which="mean")
    assert np.abs(res.mean[0, 1:] - mean_ref).max() < 0.1
    heat_ref = PROPS.cp * (mean_ref[-1] - T0)
    assert res.heat_in[0] == pytest.approx(heat_ref, rel=1e-3)


@pytest.mark.parametrize(("kind", "dirs", "n", "dt"), CASES, ids=[c[0] for c in CASES])
def test_adaptive_steps_match_exact_series_in_fewer_steps(kind, dirs, n, dt):
    # Source: exact series as above; adaptive steps (step doubling) held to
    # 0.02 K per step keep the core within the project's 0.05 K of it, with
    # a cooling segment after the heating one (a jump the control must catch).
    segs = [Segment(3600.0, TAIR, H), Segment(1800.0, T0, H)]
    shape = Shape(kind, *dirs)
    fixed = simulate(shape, PROPS, T0, segs, n_cells=n, dt=dt)
    res = simulate(shape, PROPS, T0, segs, n_cells=n, dt=dt, step_tolerance=0.02)
    t = res.times[0]
    first = t <= 3600.0
    assert np.abs(res.core[0, first][1:] - _product_series(dirs, t[first][1:])).max() < 0.05
    # the second segment starts from the first one's profile: compare with the fixed run
    t_fixed = fixed.times[0]
    core_fixed = np.interp(t[~first], t_fixed, fixed.core[0])
    assert np.abs(res.core[0, ~first] - core_fixed).max() < 0.05
    assert res.times.shape[1] < fixed.times.shape[1]
    assert t[res.segment_end[0]] == pytest.approx(3600.0, abs=1e-9)
    assert t[-1] == pytest.approx(5400.0, abs=1e-9)
    # heat in per kg against the exact mean at the end of heating (0.1 %)
    mean_ref = _product_series(dirs, np.array([3600.0]), which="mean")[0]
    assert res.heat_in_segments[0, 0] == pytest.approx(PROPS.cp * (mean_ref - T0), rel=1e-3)


def test_adaptive_steps_shrink_when_the_tolerance_is_tighter():
    segs = [Segment(1800.0, TAIR, H)]
    counts = [
        simulate(SLAB, PROPS, T0, segs, n_cells=24, dt=30.0, step_tolerance=tol).times.shape[1]
        for tol in (0.1, 0.01, 0.001)
    ]
    assert counts[0] < counts[1] < counts[2]


def test_surface_temperature_matches_series_slab():
    # Source: exact series at x/L = 1 (Incropera et al., ch. 5).
    L = 0.02
    res = simulate(
        Shape("slab", ("slab", L)), PROPS, T0, [Segment(1800.0, TAIR, H)], n_cells=40, dt=15.0
    )
    t = res.times[0, 1:]
    ref = TAIR + (T0 - TAIR) * ratio("slab", H * L / PROPS.k, PROPS.alpha * t / L**2, 1.0)
    assert np.abs(res.surface[0, 1:] - ref)[t > 60].max() < 0.05


def test_fixed_surface_temperature_with_infinite_h():
    # Source: series at Bi -> inf (Incropera et al., ch. 5; first root pi for a sphere).
    R = 0.03
    res = simulate(
        Shape("sphere", ("sphere", R)),
        PROPS,
        T0,
        [Segment(1800.0, TAIR, np.inf)],
        n_cells=48,
        dt=10.0,
    )
    t = res.times[0, 1:]
    # Bi -> inf: eigenvalues n pi; C_n = 2 (-1)^(n+1)
    n = np.arange(1, 200)
    fo = PROPS.alpha * t[:, None] / R**2
    ref = TAIR + (T0 - TAIR) * (2 * (-1.0) ** (n + 1) * np.exp(-((n * np.pi) ** 2) * fo)).sum(1)
    assert np.allclose(res.surface[0, 1:], TAIR)
    assert np.abs(res.core[0, 1:] - ref).max() < 0.05


# --- energy conservation ------------------------------------------------------


@pytest.mark.parametrize("shape", ["slab", "cylinder", "sphere"])
def test_energy_balance_surface_flux_equals_content_change(shape):
    # Heat in through the surface, integrated over time from the reported
    # surface temperatures, equals the change of enthalpy content (0.1 %).
    R = 0.025
    eps, wall = 0.8, 250.0
    segs = [Segment(900.0, 180.0, 25.0, wall, eps), Segment(900.0, 20.0, 10.0)]
    res = simulate(Shape(shape, (shape, R)), PROPS, 4.0, segs, n_cells=32, dt=10.0, scheme="euler")
    area_per_kg = {"slab": 1.0, "cylinder": 2.0, "sphere": 3.0}[shape] / (R * PROPS.rho)
    ts = res.surface[0, 1:]
    first = res.times[0, 1:] <= 900.0 + 1e-9
    q = np.where(
        first,
        25.0 * (180.0 - ts) + eps * STEFAN_BOLTZMANN * ((wall + 273.15) ** 4 - (ts + 273.15) ** 4),
        10.0 * (20.0 - ts),
    )
    # backward Euler takes the end-of-step flux: right-point rule is exact
    flux_in = q * np.diff(res.times[0]) * area_per_kg
    assert flux_in[first].sum() == pytest.approx(res.heat_in_segments[0, 0], rel=1e-3)
    assert flux_in[~first].sum() == pytest.approx(res.heat_in_segments[0, 1], rel=1e-3)
    assert res.heat_in[0] == pytest.approx(res.heat_in_segments[0].sum())
    # and against the content change from the final profile
    vol = res.grid.cell_volumes()[0]
    h_final = PROPS.enthalpy(res.final[0])
    content = (vol * (h_final - PROPS.enthalpy(4.0))).sum() / vol.sum()
    assert content == pytest.approx(res.heat_in[0], rel=1e-6)


def test_radiation_only_lumped_body_matches_ode():
    # A very conductive small sphere behaves as a lumped body:
    # rho c V dT/dt = A eps sigma (Tw^4 - T^4). Reference: scipy solve_ivp.
    R, eps, wall = 0.01, 0.9, 300.0
    metal = Constant(k=2000.0, rho=1000.0, cp=1000.0)
    res = simulate(
        Shape("sphere", ("sphere", R)),
        metal,
        20.0,
        [Segment(1200.0, 20.0, 0.0, wall, eps)],
        n_cells=8,
        dt=5.0,
    )

    def rhs(_, y):
        gain = eps * STEFAN_BOLTZMANN * ((wall + 273.15) ** 4 - (y[0] + 273.15) ** 4)
        return [3 / R * gain / (metal.rho * metal.cp)]

    ode = solve_ivp(rhs, (0, 1200.0), [20.0], t_eval=res.times[0], rtol=1e-10, atol=1e-10)
    assert np.abs(res.mean[0] - ode.y[0]).max() < 0.05
    assert res.heat_in[0] == pytest.approx(metal.cp * (ode.y[0, -1] - 20.0), rel=1e-3)


# --- convergence orders ---------------------------------------------------------


def _core_end(n, dt, scheme, shape="sphere"):
    res = simulate(
        Shape(shape, (shape, 0.02)),
        PROPS,
        T0,
        [Segment(1200.0, TAIR, H)],
        n_cells=n,
        dt=dt,
        scheme=scheme,
    )
    return res.core[0, -1]


@pytest.mark.parametrize(
    ("scheme", "low", "high"), [("euler", 0.8, 1.2), ("extrapolated", 1.7, 2.4)]
)
def test_time_order(scheme, low, high):
    # Self-convergence: differences between successive halvings of dt.
    c = [_core_end(16, dt, scheme) for dt in (120.0, 60.0, 30.0, 15.0)]
    d = np.abs(np.diff(c))
    orders = np.log2(d[:-1] / d[1:])
    assert ((orders > low) & (orders < high)).all(), orders


def test_space_order():
    # Cell-centred finite volumes: second order in space (measured against the series).
    L = 0.02
    t_end = 1200.0
    ref = TAIR + (T0 - TAIR) * ratio("sphere", H * L / PROPS.k, PROPS.alpha * t_end / L**2)
    errs = [abs(_core_end(n, 5.0, "extrapolated") - ref) for n in (6, 12, 24)]
    orders = np.log2(np.array(errs[:-1]) / np.array(errs[1:]))
    assert ((orders > 1.7) & (orders < 2.4)).all(), orders


# --- batching, segments, profiles ------------------------------------------------


def test_batched_equals_individual_runs():
    shapes = [Shape("cylinder", ("cylinder", r)) for r in (0.01, 0.02, 0.035)]
    props = [Constant(0.45, 1000.0, 3600.0), PROPS, Constant(0.6, 1100.0, 3300.0)]
    t_air = np.array([150.0, 170.0, 120.0])
    hs = np.array([20.0, 35.0, 50.0])
    durations = np.array([1800.0, 1800.0, 1800.0])
    segs = [Segment(durations, t_air, hs, emissivity=0.5), Segment(600.0, 20.0, 8.0)]
    tight = {"n_cells": 16, "dt": 30.0, "tolerance": 1e-10}
    batch = simulate(shapes, props, np.array([4.0, 6.0, 2.0]), segs, **tight)
    assert batch.core.shape == batch.times.shape == (3, batch.times.shape[1])
    for i in range(3):
        one = simulate(
            shapes[i],
            props[i],
            [4.0, 6.0, 2.0][i],
            [Segment(durations[i], t_air[i], hs[i], emissivity=0.5), Segment(600.0, 20.0, 8.0)],
            **tight,
        )
        assert one.times.shape == (1, batch.times.shape[1])
        np.testing.assert_allclose(one.core[0], batch.core[i], atol=1e-6)
        np.testing.assert_allclose(one.heat_in_segments[0], batch.heat_in_segments[i], rtol=1e-7)


def test_segments_equal_chained_runs():
    shape = Shape("slab", ("slab", 0.025))
    segs = [Segment(1200.0, 160.0, 30.0), Segment(900.0, 2.0, 20.0)]
    whole = simulate(shape, PROPS, 5.0, segs, n_cells=24, dt=20.0)
    first = simulate(shape, PROPS, 5.0, segs[:1], n_cells=24, dt=20.0)
    second = simulate(shape, PROPS, first.final_state(), segs[1:], dt=20.0)
    np.testing.assert_allclose(second.final, whole.final, atol=1e-6)
    np.testing.assert_allclose(
        np.concatenate([first.core[0], second.core[0, 1:]]), whole.core[0], atol=1e-6
    )
    assert second.heat_in[0] == pytest.approx(whole.heat_in_segments[0, 1], rel=1e-8)
    assert first.heat_in[0] + second.heat_in[0] == pytest.approx(whole.heat_in[0], rel=1e-8)


def test_zone_segments_at_belt_speed():
    segs = zone_segments(
        [6.0, 6.0, 3.0], np.array([0.01, 0.02]), [-10.0, -20.0, -5.0], [25, 30, 20]
    )
    assert [s.t_air for s in segs] == [-10.0, -20.0, -5.0]
    np.testing.assert_allclose(segs[0].duration, [600.0, 300.0])
    res = simulate([Shape("slab", ("slab", 0.02))] * 2, PROPS, 60.0, segs, n_cells=12, dt=30.0)
    np.testing.assert_allclose(res.times[:, -1], [1500.0, 750.0])
    np.testing.assert_allclose(res.times[:, res.segment_end[0]], [600.0, 300.0])
    assert res.core[0, -1] < res.core[1, -1]  # slower belt -> colder


def test_profile_recording_and_resample():
    shape = Shape("finite_cylinder", ("cylinder", 0.02), ("slab", 0.03))
    res = simulate(
        shape,
        PROPS,
        5.0,
        [Segment(1000.0, 80.0, 30.0)],
        n_cells=(10, 12),
        dt=50.0,
        profile_times=[0.0, 500.0, 1000.0],
    )
    assert res.profiles.shape == (1, 3, 10, 12)
    np.testing.assert_allclose(res.profiles[0, 0], 5.0)
    np.testing.assert_allclose(res.profiles[0, 2], res.final[0])
    # 500 s falls on a step end (20 steps of 50 s)
    mid = simulate(shape, PROPS, 5.0, [Segment(500.0, 80.0, 30.0)], n_cells=(10, 12), dt=50.0)
    np.testing.assert_allclose(res.profiles[0, 1], mid.final[0], atol=1e-9)
    fine = resample(res.final_state(), (20, 24))
    assert fine.temperature.shape == (1, 20, 24)
    back = resample(fine, (10, 12))
    np.testing.assert_allclose(back.temperature, res.final, atol=0.3)
    # a uniform field stays uniform under resampling
    np.testing.assert_allclose(resample(np.full((2, 7), 3.0), 13).temperature, 3.0)


def test_carried_profile_keeps_density_and_nonuniform_start():
    shape = Shape("slab", ("slab", 0.02))
    cook = simulate(shape, PROPS, 5.0, [Segment(1200.0, 150.0, 30.0)], n_cells=20)
    start = cook.final_state()
    assert isinstance(start, Profile)
    chill = simulate(shape, PROPS, start, [Segment(3000.0, 0.0, 20.0)])
    assert chill.core[0, 0] == pytest.approx(cook.core[0, -1])
    assert chill.heat_in[0] < 0
    assert isinstance(chill, SimulationResult)
    # surface hotter than core at the start of the chill: an uneven start
    assert chill.surface[0, 0] > chill.core[0, 0]


# --- bad input ------------------------------------------------------------------


SLAB = Shape("slab", ("slab", 0.02))


@pytest.mark.parametrize(
    ("kwargs", "name"),
    [
        ({"segments": [Segment(0.0, 20.0, 10.0)]}, "segments[0].duration"),
        (
            {"segments": [Segment(60.0, 20.0, 10.0), Segment(-5.0, 20.0, 10.0)]},
            "segments[1].duration",
        ),
        ({"segments": [Segment(60.0, 20.0, -1.0)]}, "segments[0].h"),
        ({"segments": [Segment(60.0, float("nan"), 10.0)]}, "segments[0].t_air"),
        ({"segments": [Segment(60.0, 20.0, 10.0, emissivity=1.5)]}, "segments[0].emissivity"),
        ({"segments": [Segment([60.0, 70.0], 20.0, 10.0)]}, "segments[0].duration"),
        ({"segments": []}, "segments"),
        ({"initial": np.zeros((1, 2, 3))}, "initial"),
        ({"initial": float("nan")}, "initial"),
        ({"initial": np.zeros(3)}, "initial"),
        ({"n_cells": 1}, "n_cells"),
        ({"dt": 0.0}, "dt"),
        ({"profile_times": [1e9]}, "profile_times"),
        ({"geometry": object()}, "geometry[0]"),
        ({"geometry": Shape("slab", ("slab", -1.0))}, "geometry[0]"),
        ({"geometry": [SLAB, Shape("sphere", ("sphere", 0.01))]}, "geometry[1]"),
        ({"scheme": "rk4"}, "scheme"),
        ({"step_tolerance": 0.0}, "step_tolerance"),
        ({"step_tolerance": float("nan")}, "step_tolerance"),
        ({"step_tolerance": 0.01, "scheme": "euler"}, "step_tolerance"),
    ],
)
def test_bad_input_names_the_argument(kwargs, name):
    args = {
        "geometry": SLAB,
        "properties": PROPS,
        "initial": 5.0,
        "segments": [Segment(60.0, 20.0, 10.0)],
    }
    args.update(kwargs)
    geometry, properties, initial, segments = (
        args.pop(k) for k in ("geometry", "properties", "initial", "segments")
    )
    with pytest.raises(ThermalInputError) as err:
        simulate(geometry, properties, initial, segments, **args)
    msg = str(err.value)
    assert msg.startswith(name) and "\n" not in msg


def test_bad_properties_are_refused():
    class Falling(Constant):
        def enthalpy(self, t):
            return -super().enthalpy(t)

    with pytest.raises(ThermalInputError, match="enthalpy"):
        simulate(SLAB, Falling(), 5.0, [Segment(60.0, 20.0, 10.0)])
    with pytest.raises(ThermalInputError, match="properties"):
        simulate([SLAB, SLAB], [PROPS] * 3, 5.0, [Segment(60.0, 20.0, 10.0)])


def test_zone_segments_bad_input():
    with pytest.raises(ThermalInputError, match=r"^belt_speed"):
        zone_segments([5.0], 0.0, [2.0], [20.0])
    with pytest.raises(ThermalInputError, match=r"^zone_lengths"):
        zone_segments([5.0, -1.0], 0.1, [2.0, 2.0], [20.0, 20.0])
    with pytest.raises(ThermalInputError, match=r"^t_air"):
        zone_segments([5.0, 1.0], 0.1, [2.0], [20.0, 20.0])


# --- with the project's own shapes and property objects ----------------------


def test_project_shapes_and_constant_properties_against_product_solution():
    # Cross-method: thermal.geometry product solution (exact series) against
    # the LOD finite-volume solution for a finite cylinder, with
    # thermal.foods.ConstantProperties as the property object.
    geometry = pytest.importorskip("thermal.geometry")
    foods = pytest.importorskip("thermal.foods")
    shape = geometry.FiniteCylinder(radius=0.025, length=0.06)
    props = foods.ConstantProperties(conductivity=0.45, density=1080.0, specific_heat=3400.0)
    res = simulate(shape, props, 4.0, [Segment(2700.0, 85.0, 30.0)], n_cells=28, dt=25.0)
    t = res.times[0, 10::10]
    ref = geometry.temperature_at(
        shape, k=0.45, h=30.0, time=t, t_initial=4.0, t_air=85.0, rho=1080.0, cp=3400.0
    )
    assert np.abs(res.core[0, 10::10] - ref).max() < 0.05
    assert res.grid.kind == "finite_cylinder"
