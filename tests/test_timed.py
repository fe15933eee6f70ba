"""plan() with the timed schedule: the reported plan is the schedule's, the MILP its bound.

Hand-made plants are invented (tests._planner_cases); the demo is the invented
demo plant. Every schedule here is checked by the test suite's own schedule
checker (tests._schedule_checker, written apart from the scheduler): no
overlap, no machine past its shift end, no hot-hold breach, every piece's
residence under the speed profile at least its required residence, whole
trays, kg balance.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from optimizer.planning.inputs import OrderData, SolveOptions
from optimizer.planning.results import SolveStatus
from optimizer.planning.solve import plan, plan_buckets
from optimizer.planning.timed import (
    schedule_cuts,
    schedule_objective,
    schedule_use,
    whole_trays,
)
from tests._planner_cases import one_line
from tests._schedule_checker import problems

ROOT = Path(__file__).resolve().parents[1]


def test_one_product_line_is_scheduled_as_planned():
    # The standard line (7 batches of 100 kg, 1 m/min belt, 20-min residence): the
    # schedule places every batch, so its kg equal the bucketed bound.
    inp = one_line()
    r = plan(inp)
    assert r.status is SolveStatus.OPTIMAL
    assert r.schedule is not None and not r.schedule.unplaced
    assert problems(inp, r.scheduled_plan, r.schedule) == []
    assert r.total_kg == pytest.approx(r.schedule.total_kg) == pytest.approx(700.0)
    assert r.bucket_kg == pytest.approx(700.0) and r.bucket_value == pytest.approx(700.0)
    assert r.objective_value == pytest.approx(schedule_objective(inp, r.schedule))
    assert sum(b.batches for b in r.batches) == len(r.schedule.batches) == 7
    assert sum(x.kg for x in r.runs) == pytest.approx(r.total_kg)


def test_schedule_false_gives_the_bucketed_plan():
    inp = one_line()
    r = plan(inp, SolveOptions(schedule=False))
    assert r.schedule is None and r.bucket_value is None
    assert r.objective_value == pytest.approx(plan_buckets(inp).objective_value)


def test_machine_use_is_the_schedules():
    # Oven: 7 batches of 60 min = 420 min busy. Tunnel: busy while its belt carries
    # product, the union of each feed's first-piece-in to last-piece-out span.
    inp = one_line()
    r = plan(inp)
    use = {(u.machine, u.shift): u for u in r.machine_use}
    assert use[("oven-1", "s1")].used_min == pytest.approx(420.0)
    feeds = r.schedule.feeds
    spans = sorted((f.start, f.last_exit) for f in feeds)
    busy, end = 0.0, -1.0
    for a, b in spans:  # union of the spans, computed here
        if b > end:
            busy += b - max(a, end)
            end = b
    assert use[("tunnel-1", "s1")].used_min == pytest.approx(busy)
    assert all(u.used_min <= 480.0 + 1e-9 for u in r.machine_use)
    assert schedule_use(inp, r.schedule) == r.machine_use


def test_whole_trays_round_the_total_up_to_meet_a_minimum():
    # 7 trays' worth split 3.5 + 3.5 over two lines would be scheduled as 3 + 3 trays,
    # short of a 70-kg minimum; rounded here to 4 + 3 (the larger part first, ties in
    # line order) it is met, and never past the order's maximum.
    inp = one_line(orders=[OrderData("A", min_kg=70.0, max_kg=70.0)], n_shifts=2)
    r = plan_buckets(inp)
    first = r.batches[0]
    half = dataclasses.replace(first.contents[0], kg=35.0)
    lines = (
        dataclasses.replace(first, shift="s1", contents=(half,)),
        dataclasses.replace(first, shift="s2", contents=(half,)),
    )
    fixed = whole_trays(inp, dataclasses.replace(r, batches=lines))
    assert [b.contents[0].kg for b in fixed.batches] == [40.0, 30.0]
    capped = whole_trays(
        dataclasses.replace(inp, orders=(OrderData("A", max_kg=65.0),)),
        dataclasses.replace(r, batches=lines),
    )
    assert sum(b.contents[0].kg for b in capped.batches) == pytest.approx(60.0)


def test_cuts_go_to_the_machine_that_stopped_the_kg():
    # A hand-made unplaced item per rule: oven minutes cut the oven by whole batch
    # cycles; a belt rule cuts the route's tunnel by the kg's belt minutes (+1 min).
    from optimizer.planning.schedule import Schedule, ShiftSchedule, Unplaced

    inp = one_line()
    r = plan_buckets(inp)
    (line,) = r.batches
    items = (
        Unplaced("s1", "oven-1", line.load, 150.0, "oven_minutes", "x"),
        Unplaced("s1", "oven-1", line.load, 50.0, "hot_hold", "y"),
    )
    sched = Schedule((ShiftSchedule("s1", 480.0, (), (), (), (), items),))
    cuts = schedule_cuts(inp, r, sched)
    # 150 kg = 2 batches of 100 kg x 60 min; 50 kg at 10 kg/min = 5 min.
    assert cuts == {("oven-1", "s1"): 121.0, ("tunnel-1", "s1"): 6.0}


@pytest.fixture(scope="module")
def demo():
    # The demo's dwell table as the committed sample report wrote it
    # (tests/test_sample_report.py keeps the sample in step with configs/demo.yaml).
    import pandas as pd

    from optimizer.planning.adapter import plan_inputs
    from optimizer.scenario.models import load_scenario

    scenario = load_scenario(ROOT / "configs" / "demo.yaml")
    dwell = pd.read_csv(ROOT / "reports" / "sample" / "dwell.csv", keep_default_na=False)
    for col in dwell.columns:
        if col.endswith(("_min", "_kj_per_kg", "_m_per_min")):
            dwell[col] = pd.to_numeric(dwell[col].replace("", float("nan")))
    dwell["feasible"] = dwell["feasible"].astype(str) == "True"
    inputs = plan_inputs(scenario, dwell)
    return inputs, plan(inputs)


def test_demo_schedule_keeps_every_rule(demo):
    # Independent checker: no machine past its shift end, no hot-hold breach, every
    # piece's residence at least its required one (and the rest of its rules).
    inputs, r = demo
    assert r.status.has_plan
    assert problems(inputs, r.scheduled_plan, r.schedule) == []
    for f in r.schedule.feeds:
        shift = next(s for s in inputs.shifts if s.name == f.shift)
        assert f.last_exit <= shift.window(f.tunnel) + 1e-6  # not back to back: clears
        assert f.end <= shift.window(f.tunnel) + 1e-6
    for b in r.schedule.batches:
        shift = next(s for s in inputs.shifts if s.name == b.shift)
        assert b.unload_end <= shift.window(b.oven) + 1e-6


def test_demo_reports_the_schedule_against_its_bound(demo):
    inputs, r = demo
    assert r.total_kg == pytest.approx(r.schedule.total_kg)
    assert r.total_kg <= r.bucket_kg + 1e-6
    assert r.objective_value == pytest.approx(schedule_objective(inputs, r.schedule))
    assert r.objective_value <= r.bucket_value + 1e-6 <= r.best_bound + 1e-3
    assert r.gap == pytest.approx((r.best_bound - r.objective_value) / r.objective_value)
    assert any(m.startswith("schedule: ") for m in r.messages)
