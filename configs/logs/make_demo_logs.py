"""Make the INVENTED demo logger files in this folder from corepace's own model plus noise.

Nothing here was measured. The files imitate what a plant's data logger
exports so that ``corepace calibrate`` and ``corepace verify`` have something
to read in the demo: the demo scenario's chicken fillet (largest piece) in
rack oven 1 at its 180 °C setting, with three core probes and an air probe.

* ``trial-chicken-roast-180.csv``: a trial run for calibration, logged every
  10 s with a semicolon separator, decimal commas and dated timestamps.
  The "true" h is invented: 85 % of the correlation's h for the setting (a
  plant often finds less than the correlation).
* ``run-chicken-roast-180.csv``: a production run to verify against the
  poultry rule, logged every 15 s in elapsed minutes; one probe drops a
  reading and another is pulled out of its piece near the end.

Run from the repository root (the files are committed; re-running gives the
same bytes):

    python configs/logs/make_demo_logs.py
"""

from __future__ import annotations

from datetime import datetime, timedelta
from pathlib import Path

import numpy as np

from optimizer.dwell.checks import load_checked_scenario
from optimizer.dwell.convert import air_setting, thermal_product
from optimizer.probes.model import air_segments, probe_temperatures

HERE = Path(__file__).resolve().parent
SCENARIO = HERE.parent / "demo.yaml"
H_SHARE = 0.85
"""Invented: the demo's "true" h as a share of the correlation's h [-]."""


def _setup():
    scenario = load_checked_scenario(SCENARIO)
    product = scenario.product("chicken-fillet")
    setting = next(s for s in scenario.oven("rack-oven-1").settings if s.name == "roast-180")
    piece = thermal_product(product)
    h_corr = float(piece.surface_coefficient(air_setting(setting)).h)
    return piece, setting.air_temperature, H_SHARE * h_corr


def _air(times: np.ndarray, set_point: float, rng: np.random.Generator) -> np.ndarray:
    """Oven air: recovering from the door opening, then a burner cycling ± 3 K."""
    recovery = -25.0 * np.exp(-times / 90.0)
    cycling = 3.0 * np.sin(2 * np.pi * times / 240.0)
    return set_point + recovery + cycling + rng.normal(0.0, 0.3, times.size)


def _cores(piece, times, air, h, starts, offsets, rng):
    # the grid, steps and air segments are fixed here, not the library's defaults,
    # so that re-running the script gives the same files
    segs = air_segments(times, air, max_segments=60, merge_k=0.05)
    clean = probe_temperatures(
        piece.geometry,
        piece.properties,
        segs,
        times,
        np.full(len(starts), h),
        start_core=np.array(starts),
        offset=np.array(offsets),
        n_cells=24,
        steps=240,
    )
    return clean + rng.normal(0.0, 0.15, clean.shape)


def trial(piece, set_point: float, h: float) -> str:
    rng = np.random.default_rng(20260314)
    times = np.arange(0.0, 20 * 60 + 1, 10.0)
    air = _air(times, set_point, rng)
    cores = _cores(piece, times, air, h, [3.6, 4.1, 4.4], [0.05, 0.1, 0.0], rng)
    start = datetime(2026, 3, 14, 6, 30, 0)
    lines = [
        "INVENTED DEMO LOG - made by configs/logs/make_demo_logs.py from the corepace model",
        "Logger;demo-logger-7;channels 4",
        "Date/Time;Core 1 [°C];Core 2 [°C];Core 3 [°C];Air [°C]",
    ]
    for j, t in enumerate(times):
        stamp = (start + timedelta(seconds=float(t))).strftime("%d.%m.%Y %H:%M:%S")
        vals = [f"{round(float(c[j]), 1):.1f}".replace(".", ",") for c in cores]
        vals.append(f"{round(float(air[j]), 1):.1f}".replace(".", ","))
        lines.append(";".join([stamp, *vals]))
    return "\n".join(lines) + "\n"


def production(piece, set_point: float, h: float) -> str:
    rng = np.random.default_rng(20260402)
    times = np.arange(0.0, 30 * 60 + 1, 15.0)
    air = _air(times, set_point, rng)
    cores = _cores(piece, times, air, h, [4.2, 3.9, 4.6], [0.0, 0.08, 0.12], rng)
    rows = ["# INVENTED DEMO LOG - made by configs/logs/make_demo_logs.py from the corepace model"]
    rows.append("elapsed [min],core A,core B,core C,air")
    pulled = int(np.searchsorted(times, 28.5 * 60))
    for j, t in enumerate(times):
        vals = [f"{round(float(c[j]), 1):.1f}" for c in cores]
        if j == 37:
            vals[1] = ""  # a dropped reading
        if j >= pulled:
            vals[2] = f"{round(float(air[j]) - 0.8, 1):.1f}"  # probe C pulled into the air
        rows.append(",".join([f"{t / 60:.2f}", *vals, f"{round(float(air[j]), 1):.1f}"]))
    return "\n".join(rows) + "\n"


def main() -> None:
    piece, set_point, h = _setup()
    (HERE / "trial-chicken-roast-180.csv").write_text(trial(piece, set_point, h))
    (HERE / "run-chicken-roast-180.csv").write_text(production(piece, set_point, h))
    print(f"invented h {h:.2f} W/(m2 K) ({H_SHARE:.0%} of the correlation's)")


if __name__ == "__main__":
    main()
