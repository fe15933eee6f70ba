"""Benchmark: a cold dwell table against its kernel floor.

* The cold demo dwell table (``configs/demo.yaml``, no cache, one process):
  every numerical cook and chill search of the table, their simulations run
  as batched solver jobs (:mod:`thermal.jobs`).
* Floor, measured in the same run: the same kernel work (the number of
  cell updates the table's solver calls made, counted while it ran) done in
  one batched :func:`thermal.numeric.simulate` call: slabs of the demo's
  first product, the table's grid, one segment with as many steps as it
  takes to do that much work. Target: the table within 3x of the floor.
* The cold ``configs/large.yaml`` table (all its products), in seconds, with
  its own floor (skip it with ``--demo-only``).

Times are CPU seconds of this process (``time.process_time``), so other work
on the machine does not skew the ratios; the numba kernel is compiled (or
read from its cache) before timing. Never fails on time. Run with
``.venv/bin/python tests/bench/bench_dwell.py [--demo-only]``.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from optimizer.dwell.convert import thermal_product
from optimizer.dwell.table import SolverOptions, build_dwell_table
from optimizer.scenario.models import load_scenario
from thermal import numeric

ROOT = Path(__file__).resolve().parents[2]


class KernelWork:
    """Counts the cell updates (cells x sweeps) of every compiled-kernel call."""

    def __init__(self) -> None:
        self.cells = 0
        self.calls = 0
        self._real = numeric._sweep_lines

    def __enter__(self) -> KernelWork:
        def counted(*args):
            self.cells += args[0].size
            self.calls += 1
            return self._real(*args)

        numeric._sweep_lines = counted
        return self

    def __exit__(self, *exc) -> None:
        numeric._sweep_lines = self._real


def cold_table(config: Path) -> tuple[float, int, int, int]:
    """(CPU seconds, table rows, cell updates, kernel calls) of a cold build."""
    scenario = load_scenario(config)
    with KernelWork() as work:
        start = time.process_time()
        table = build_dwell_table(scenario, cache_dir=None, workers=1)
        seconds = time.process_time() - start
    return seconds, len(table), work.cells, work.calls


def floor(config: Path, cell_updates: int) -> float:
    """CPU seconds of one batched simulate call doing ``cell_updates`` cell updates."""
    scenario = load_scenario(config)
    piece = thermal_product(scenario.products[0])
    cells = SolverOptions().cells(len(piece.geometry.directions))
    members = 96
    # extrapolated scheme: three implicit sweeps per step and direction; the graded
    # start adds six sub-steps to the segment's steps
    per_step = members * cells * 3 * len(piece.geometry.directions)
    n_steps = max(round(cell_updates / per_step) - 6, 1)
    geometry = [piece.geometry] * members
    segment = numeric.Segment(np.linspace(600.0, 3600.0, members), 160.0, 25.0, None, 0.9)
    start = time.process_time()
    numeric.simulate(geometry, piece.properties, 4.0, [segment], n_cells=cells, n_steps=[n_steps])
    return time.process_time() - start


def report(name: str, config: Path) -> None:
    seconds, rows, updates, calls = cold_table(config)
    base = floor(config, updates)
    print(
        f"{name}: cold dwell table {seconds:.2f} s CPU ({rows} rows, {calls:,} kernel calls, "
        f"{updates:,} cell updates) | floor, the same work in one batched call: {base:.2f} s "
        f"-> {seconds / base:.2f}x the floor (target <= 3x)"
    )


def main(demo_only: bool) -> None:
    # compile (or load) the kernel before timing
    piece = thermal_product(load_scenario(ROOT / "configs" / "demo.yaml").products[0])
    numeric.simulate(piece.geometry, piece.properties, 4.0, numeric.Segment(60.0, 90.0, 20.0))
    report("demo", ROOT / "configs" / "demo.yaml")
    if not demo_only:
        report("large", ROOT / "configs" / "large.yaml")


if __name__ == "__main__":
    main("--demo-only" in sys.argv[1:])
