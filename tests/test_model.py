"""The plan MILP on small plants solvable by hand: exact objectives.

All plants are invented. The standard line (tests._planner_cases.one_line)
is one oven (10 trays, 1000 kg, 10 min load+unload), one tunnel (1 m wide,
belt density 10 kg/m2, full coverage), 480-min shifts. Each expected value
is worked out by hand in the test.
"""

from __future__ import annotations

import pytest

from optimizer.planning.inputs import Objective, OrderData, SolveOptions
from optimizer.planning.loads import candidates
from optimizer.planning.model import build_model, demand_groups, to_matrices
from optimizer.planning.results import SolveStatus
from optimizer.planning.solve import plan
from tests._planner_cases import dwell_row, one_line

OPT = SolveOptions(shadow_prices=False)


def test_oven_bound_single_product():
    # Cycle 50 + 10 = 60 min -> 8 batches x 10 trays x 10 kg = 800 kg.
    r = plan(one_line(), OPT)
    assert r.status is SolveStatus.OPTIMAL
    assert r.objective_value == pytest.approx(800.0)
    (b,) = r.batches
    assert (b.batches, b.setting, b.minutes) == (8, "hot", 480.0)


def test_tunnel_bound_single_product():
    # Belt 0.1 m/min x 1 m x 10 kg/m2 = 1 kg/min -> 480 kg; oven would give 800.
    r = plan(one_line(products={"A": (10.0, 50.0, 0.1, {})}), OPT)
    assert r.objective_value == pytest.approx(480.0)
    (run,) = r.runs
    assert run.belt_speed_m_per_min == pytest.approx(0.1)
    assert run.minutes == pytest.approx(480.0)


def test_two_shifts_add_up():
    r = plan(one_line(n_shifts=2), OPT)
    assert r.objective_value == pytest.approx(1600.0)


def test_mixed_batches_fill_capped_orders():
    # 8 batches of 100 kg fit. A capped at 350 kg, B at 450 kg.
    # Single loads only: A needs 4 batches (3.5), B 5 (4.5) -> best 3A + 4B + one
    # partial = 750 kg. With a 5+5 mixed batch: 300 + 400 + 100 = 800 kg.
    # Both cook 50 min, so every batch cycles 60 min.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})}
    orders = [OrderData("A", max_kg=350.0), OrderData("B", max_kg=450.0)]
    inp = one_line(products=prods, orders=orders)
    single = plan(inp, SolveOptions(max_mix_products=1, shadow_prices=False))
    mixed = plan(inp, OPT)
    assert single.objective_value == pytest.approx(750.0)
    assert mixed.objective_value == pytest.approx(800.0)
    assert any(len(b.contents) == 2 for b in mixed.batches)


def test_setting_changeover_costs_a_batch():
    # A cooks only at 'hot', B only at 'mild', 60-min changeover. Mins 100 kg each:
    # both settings run -> 420 min -> 7 batches -> 700 kg.
    rows = [dwell_row("B", "oven-1", "mild", "tunnel-1", "cold", "full", 50.0, 1.0)]
    orders = [OrderData("A", min_kg=100.0), OrderData("B", min_kg=100.0)]
    inp = one_line(
        products={"A": (10.0, 50.0, 1.0, {})},
        oven_changeover=60.0,
        orders=orders,
        extra_rows=rows,
        extra_products=("B",),
    )
    r = plan(inp, OPT)
    assert r.objective_value == pytest.approx(700.0)
    oven_use = next(u for u in r.machine_use if u.kind == "oven")
    assert oven_use.changeover_min == pytest.approx(60.0)
    # Without the B minimum only 'hot' runs: 800 kg, no changeover.
    inp2 = _replace_orders(inp, [OrderData("A", min_kg=100.0), OrderData("B")])
    assert plan(inp2, OPT).objective_value == pytest.approx(800.0)


def test_tunnel_changeover_between_products():
    # Tunnel-bound: 1 kg/min for both products, 30-min changeover. Mins 100 kg each ->
    # both run -> 450 belt minutes -> 450 kg.
    prods = {"A": (10.0, 50.0, 0.1, {}), "B": (10.0, 50.0, 0.1, {})}
    orders = [OrderData("A", min_kg=100.0), OrderData("B", min_kg=100.0)]
    r = plan(one_line(products=prods, orders=orders, tunnel_changeover=30.0), OPT)
    assert r.objective_value == pytest.approx(450.0)


def test_most_value():
    # A: 8 batches x 100 kg at value 1 = 800. B: cook 110 -> cycle 120 -> 4 batches
    # -> 400 kg at value 3 = 1200. Mixing not allowed (cook times far apart).
    prods = {"A": (10.0, 50.0, 1.0, {"value_per_kg": 1.0}), "B": (10.0, 110.0, 1.0, {})}
    inp = one_line(products=prods, objective=Objective.MOST_VALUE)
    inp = _set_value(inp, "B", 3.0)
    r = plan(inp, OPT)
    assert r.objective_value == pytest.approx(1200.0)
    assert {run.product for run in r.runs} == {"B"}


def test_least_energy_for_fixed_output():
    # A: 300 + 250 = 550 kJ/kg; B: 200 + 200 = 400 kJ/kg. 300 kg output, B capped at
    # 200 kg -> 200 * 400 + 100 * 550 = 135 000 kJ.
    rows = [
        dwell_row(
            "B", "oven-1", "hot", "tunnel-1", "cold", "full", 50.0, 1.0, heat_in=200, heat_out=200
        )
    ]
    inp = one_line(
        products={"A": (10.0, 50.0, 1.0, {})},
        orders=[OrderData("A"), OrderData("B", max_kg=200.0)],
        extra_rows=rows,
        objective=Objective.LEAST_ENERGY,
        fixed_output_kg=300.0,
        extra_products=("B",),
    )
    r = plan(inp, OPT)
    assert r.objective_value == pytest.approx(135_000.0, rel=1e-6)
    assert r.total_kg == pytest.approx(300.0)


def test_least_energy_meets_order_minimums_when_no_fixed_output():
    # Mins only: 150 kg of A at 550 kJ/kg = 82 500 kJ.
    inp = one_line(orders=[OrderData("A", min_kg=150.0)], objective=Objective.LEAST_ENERGY)
    r = plan(inp, OPT)
    assert r.objective_value == pytest.approx(82_500.0, rel=1e-6)


def test_soonest_orders_by_weight():
    # 800 kg per shift. A 800 kg (weight 1), B 800 kg (weight 2), both due s3:
    # B in s1 (2 x 1), A in s2 (1 x 2) -> 4; the other order gives 5.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})}
    orders = [
        OrderData("A", min_kg=800.0, due_shift="s3", weight=1.0),
        OrderData("B", min_kg=800.0, due_shift="s3", weight=2.0),
    ]
    inp = one_line(products=prods, orders=orders, n_shifts=3, objective=Objective.SOONEST)
    r = plan(inp, SolveOptions(shadow_prices=False, max_mix_products=1))
    assert r.objective_value == pytest.approx(4.0)
    s1 = {run.product for run in r.runs if run.shift == "s1"}
    assert s1 == {"B"}


def test_due_shift_forces_early_production():
    # A 700 kg due s1, value 1; B value 2 with no due; only one shift of A's worth
    # before s1 ends: s1 must carry >= 700 kg of A.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {"value_per_kg": 2.0})}
    orders = [OrderData("A", min_kg=700.0, due_shift="s1"), OrderData("B")]
    inp = one_line(products=prods, orders=orders, n_shifts=2, objective=Objective.MOST_VALUE)
    r = plan(inp, SolveOptions(shadow_prices=False, max_mix_products=1))
    a_s1 = sum(run.kg for run in r.runs if run.product == "A" and run.shift == "s1")
    assert a_s1 >= 700.0 - 1e-6
    # Value: 700 (A) + 100 (B rest of s1, one batch) * 2 + 800 * 2 (s2) = 2500.
    assert r.objective_value == pytest.approx(2500.0)


def test_hot_hold_limits_batch_size():
    # 10 kg/min belt, hot hold 5 min -> 50 kg per batch -> 5 trays; 8 batches = 400 kg.
    r = plan(one_line(products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 5.0})}), OPT)
    assert r.objective_value == pytest.approx(400.0)
    assert all(c.trays == 5 for b in r.batches for c in b.contents)


def test_machine_stop_in_one_shift():
    from optimizer.planning.inputs import PlanInputs, ShiftData

    base = one_line(n_shifts=2)
    shifts = (ShiftData("s1", 480.0), ShiftData("s2", 480.0, {"oven-1": 240.0}))
    inp = PlanInputs(base.ovens, base.tunnels, base.products, shifts, base.orders, base.dwell)
    # 8 + 4 batches = 1200 kg.
    assert plan(inp, OPT).objective_value == pytest.approx(1200.0)


def test_demand_groups_are_cumulative():
    prods = {"A": (10.0, 50.0, 1.0, {})}
    orders = [
        OrderData("A", min_kg=100.0, due_shift="s2"),
        OrderData("A", min_kg=50.0, due_shift="s1"),
        OrderData("A", min_kg=25.0),
    ]
    inp = one_line(products=prods, orders=orders, n_shifts=3)
    g = demand_groups(inp)
    assert [(x.due, x.cum_min_kg) for x in g] == [(0, 50.0), (1, 150.0), (2, 175.0)]


def test_model_is_a_minimisation_with_sorted_rows():
    inp = one_line(n_shifts=2)
    cand = candidates(inp, 0.15, 2)
    m = build_model(inp, cand, cand.mixed_pool)
    mat = to_matrices(m)
    assert m.prob.sense == 1  # LpMinimize
    assert mat.a.shape[0] == m.prob.numConstraints()
    assert mat.integrality.sum() == len(m.n)


def _replace_orders(inp, orders):
    from optimizer.planning.inputs import PlanInputs

    return PlanInputs(
        inp.ovens, inp.tunnels, inp.products, inp.shifts, tuple(orders), inp.dwell, inp.objective
    )


def _set_value(inp, name, value):
    from dataclasses import replace

    from optimizer.planning.inputs import PlanInputs

    prods = tuple(replace(p, value_per_kg=value) if p.name == name else p for p in inp.products)
    return PlanInputs(
        inp.ovens, inp.tunnels, prods, inp.shifts, inp.orders, inp.dwell, inp.objective
    )
