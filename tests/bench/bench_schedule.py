"""Benchmark of plan + timed schedule on the demo and the large plant (a script, not a test).

For each scenario it runs :func:`optimizer.planning.solve.plan` twice in the
same process: the named baseline, the bucketed plan scheduled as it is
(``schedule_rounds=0``), and the default, corrected by cut and resolve. It
prints the kg and objective the schedule delivers against the bucketed bound
(the first MILP's optimum: machine minutes per shift with fill and drain;
target: at least 98 %), and the time split between planning (the first
bucketed solve) and scheduling (placing the plan in time plus the re-solves
of the correction; target for the large plant: plan + schedule at most 60 s
on 2 cores). It never fails on time or on the targets.

A scenario whose orders no plan can meet (the large plant's, once the
belt's fill and drain count) is reported with its diagnosis, then run again
with its order minimums dropped (maximums kept), and the output says so.

The dwell tables come from the on-disk cache (``--cache-dir``, default the
command's); their build time is printed apart and is not part of either
figure.

Run::

    .venv/bin/python tests/bench/bench_schedule.py
    .venv/bin/python tests/bench/bench_schedule.py --only demo
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import time
from pathlib import Path

from optimizer.dwell.table import build_dwell_table
from optimizer.planning.adapter import plan_inputs
from optimizer.planning.inputs import SolveOptions
from optimizer.planning.solve import plan
from optimizer.scenario.models import load_scenario

ROOT = Path(__file__).resolve().parents[2]
SCENARIOS = {"demo": ROOT / "configs" / "demo.yaml", "large": ROOT / "configs" / "large.yaml"}


def _cache() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "corepace" / "dwell"


def run(name: str, path: Path, cache: Path) -> None:
    t0 = time.perf_counter()
    scenario = load_scenario(path)
    dwell = build_dwell_table(scenario, cache_dir=cache)
    inputs = plan_inputs(scenario, dwell)
    print(f"\n{name}: {path.name} (dwell table {time.perf_counter() - t0:.1f} s, not counted)")
    first = plan(inputs, SolveOptions(schedule_rounds=0))
    if not first.status.has_plan:
        print(f"  as given: {first.status.value}; diagnosis:")
        for s in first.shortfalls[:6]:
            print(f"    [{s.rule}] {s.message}")
        inputs = dataclasses.replace(
            inputs, orders=tuple(dataclasses.replace(o, min_kg=0.0) for o in inputs.orders)
        )
        print("  run again with the order minimums dropped (maximums kept):")
    compare(inputs)


def compare(inputs) -> None:
    """The baseline and the corrected plan of ``inputs``, side by side."""
    rows = []
    for label, rounds in (("as planned (baseline)", 0), ("cut and resolve", None)):
        opts = SolveOptions() if rounds is None else SolveOptions(schedule_rounds=rounds)
        t1 = time.perf_counter()
        r = plan(inputs, opts)
        wall = time.perf_counter() - t1
        if r.schedule is None or r.bucket_kg is None:
            print(f"  {label}: no plan ({r.status.value})")
            continue
        kg_share = r.total_kg / r.bucket_kg if r.bucket_kg else float("nan")
        value_share = r.objective_value / r.bucket_value if r.bucket_value else float("nan")
        planning = wall - r.schedule_seconds
        rows.append((label, wall))
        print(
            f"  {label:22s} status {r.status.value:18s} schedule {r.total_kg:10,.0f} kg "
            f"of bound {r.bucket_kg:10,.0f} kg ({100 * kg_share:5.1f} %), objective "
            f"{100 * value_share:5.1f} % of bound; rounds {r.schedule_rounds}; "
            f"{len(r.schedule.unplaced)} items unplaced"
        )
        print(
            f"  {'':22s} time {wall:6.1f} s = planning {planning:6.1f} s + scheduling and "
            f"correction {r.schedule_seconds:6.1f} s   (targets: >= 98 % of bound; "
            "large <= 60 s)"
        )
    if len(rows) == 2:
        print(f"  time ratio cut-and-resolve / baseline: {rows[1][1] / rows[0][1]:.2f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", choices=sorted(SCENARIOS))
    ap.add_argument("--cache-dir", type=Path, default=_cache())
    args = ap.parse_args()
    for name, path in SCENARIOS.items():
        if args.only is None or args.only == name:
            run(name, path, args.cache_dir)


if __name__ == "__main__":
    main()
