"""The plan MILP on small plants solvable by hand: exact objectives.

All plants are invented. The standard line (tests._planner_cases.one_line)
is one oven (10 trays, 1000 kg, 10 min load+unload), one tunnel (20 m long,
1 m wide, belt density 10 kg/m2, full coverage, no transfer), 480-min
shifts. Each expected value is worked out by hand in the test.

Time on the belt counts (fill and drain, see optimizer.planning.model): the
belt takes nothing before the first batch is out (fill = load/unload + cook,
60 min at a 50-min cook) and its last pieces need their residence L / v
before the shift ends (20 min at 1 m/min, 200 min at 0.1 m/min); an oven's
last batch must be out by then too, so at 1 m/min the oven has 460 of its
480 minutes: 7 batches of 60 min, not 8.
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
    # Cycle 50 + 10 = 60 min; batches must be out by 480 - 20 (residence) = 460 min
    # -> 7 batches x 10 trays x 10 kg = 700 kg (an 8th would unload at 480).
    r = plan(one_line(), OPT)
    assert r.status is SolveStatus.OPTIMAL
    assert r.objective_value == pytest.approx(700.0)
    (b,) = r.batches
    assert (b.batches, b.setting, b.minutes) == (7, "hot", 420.0)


def test_tunnel_bound_single_product():
    # Belt 0.1 m/min x 1 m x 10 kg/m2 = 1 kg/min, residence 20 m / 0.1 = 200 min:
    # feed from 60 (fill) to 480 - 200 = 280 min -> 220 kg; the oven would give
    # 4 batches (out by 280 min) = 400 kg.
    r = plan(one_line(products={"A": (10.0, 50.0, 0.1, {})}), OPT)
    assert r.objective_value == pytest.approx(220.0)
    (run,) = r.runs
    assert run.belt_speed_m_per_min == pytest.approx(0.1)
    assert run.minutes == pytest.approx(220.0)


def test_two_shifts_add_up():
    r = plan(one_line(n_shifts=2), OPT)
    assert r.objective_value == pytest.approx(1400.0)


def test_mixed_batches_fill_capped_orders():
    # 7 batches of 100 kg fit. A and B capped at 350 kg each.
    # Single loads only: A needs 4 batches (3.5), B 4 (3.5) -> best 3A + 3B + one
    # partial = 650 kg. With a 5+5 mixed batch: 300 + 300 + 100 = 700 kg.
    # Both cook 50 min, so every batch cycles 60 min.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})}
    orders = [OrderData("A", max_kg=350.0), OrderData("B", max_kg=350.0)]
    inp = one_line(products=prods, orders=orders)
    single = plan(inp, SolveOptions(max_mix_products=1, shadow_prices=False))
    mixed = plan(inp, OPT)
    assert single.objective_value == pytest.approx(650.0)
    assert mixed.objective_value == pytest.approx(700.0)
    assert any(len(b.contents) == 2 for b in mixed.batches)


def test_setting_changeover_costs_a_batch():
    # A cooks only at 'hot', B only at 'mild', 60-min changeover. Mins 100 kg each:
    # both settings run -> 460 - 60 = 400 min -> 6 batches -> 600 kg.
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
    assert r.objective_value == pytest.approx(600.0)
    oven_use = next(u for u in r.machine_use if u.kind == "oven")
    assert oven_use.changeover_min == pytest.approx(60.0)
    # Without the B minimum only 'hot' runs: 700 kg, no changeover.
    inp2 = _replace_orders(inp, [OrderData("A", min_kg=100.0), OrderData("B")])
    assert plan(inp2, OPT).objective_value == pytest.approx(700.0)


def test_tunnel_changeover_between_products():
    # Tunnel-bound: 1 kg/min for both products, 30-min changeover, residence 200 min.
    # Mins 80 kg each -> both run -> 480 - 60 (fill) - 30 - 200 (drain) = 190 belt
    # minutes -> 190 kg.
    prods = {"A": (10.0, 50.0, 0.1, {}), "B": (10.0, 50.0, 0.1, {})}
    orders = [OrderData("A", min_kg=80.0), OrderData("B", min_kg=80.0)]
    r = plan(one_line(products=prods, orders=orders, tunnel_changeover=30.0), OPT)
    assert r.objective_value == pytest.approx(190.0)


def test_most_value():
    # 460 oven minutes. A: 7 batches x 100 kg at value 1 = 700. B: cook 110 -> cycle
    # 120 -> 3 batches (360 min) -> 300 kg at value 3 = 900, and one A batch in the
    # 100 min left: 1000 (2 B + 3 A = 900). Mixing not allowed (cook times far apart).
    prods = {"A": (10.0, 50.0, 1.0, {"value_per_kg": 1.0}), "B": (10.0, 110.0, 1.0, {})}
    inp = one_line(products=prods, objective=Objective.MOST_VALUE)
    inp = _set_value(inp, "B", 3.0)
    r = plan(inp, OPT)
    assert r.objective_value == pytest.approx(1000.0)
    kg = {p: sum(run.kg for run in r.runs if run.product == p) for p in ("A", "B")}
    assert kg == pytest.approx({"A": 100.0, "B": 300.0})


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
    # 700 kg per shift. A 700 kg (weight 1), B 700 kg (weight 2), both due s3:
    # B in s1 (2 x 1), A in s2 (1 x 2) -> 4; the other order gives 5.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})}
    orders = [
        OrderData("A", min_kg=700.0, due_shift="s3", weight=1.0),
        OrderData("B", min_kg=700.0, due_shift="s3", weight=2.0),
    ]
    inp = one_line(products=prods, orders=orders, n_shifts=3, objective=Objective.SOONEST)
    r = plan(inp, SolveOptions(shadow_prices=False, max_mix_products=1))
    assert r.objective_value == pytest.approx(4.0)
    s1 = {run.product for run in r.runs if run.shift == "s1"}
    assert s1 == {"B"}


def test_due_shift_forces_early_production():
    # A 600 kg due s1, value 1; B value 2 with no due; only one shift of A's worth
    # before s1 ends: s1 must carry >= 600 kg of A.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {"value_per_kg": 2.0})}
    orders = [OrderData("A", min_kg=600.0, due_shift="s1"), OrderData("B")]
    inp = one_line(products=prods, orders=orders, n_shifts=2, objective=Objective.MOST_VALUE)
    r = plan(inp, SolveOptions(shadow_prices=False, max_mix_products=1))
    a_s1 = sum(run.kg for run in r.runs if run.product == "A" and run.shift == "s1")
    assert a_s1 >= 600.0 - 1e-6
    # Value: 600 (A) + 100 (B rest of s1, one batch) * 2 + 700 * 2 (s2) = 2200.
    assert r.objective_value == pytest.approx(2200.0)


def test_hot_hold_limits_batch_size():
    # 10 kg/min belt, hot hold 5 min -> 50 kg per batch -> 5 trays; 7 batches = 350 kg.
    r = plan(one_line(products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 5.0})}), OPT)
    assert r.objective_value == pytest.approx(350.0)
    assert all(c.trays == 5 for b in r.batches for c in b.contents)


def test_machine_stop_in_one_shift():
    from optimizer.planning.inputs import PlanInputs, ShiftData

    base = one_line(n_shifts=2)
    shifts = (ShiftData("s1", 480.0), ShiftData("s2", 480.0, {"oven-1": 240.0}))
    inp = PlanInputs(base.ovens, base.tunnels, base.products, shifts, base.orders, base.dwell)
    # 7 + 4 batches = 1100 kg (s2's 240 oven minutes end well before the drain).
    assert plan(inp, OPT).objective_value == pytest.approx(1100.0)


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
    # Batches, and one residence-level binary per shift for the drain (no changeovers).
    assert len(m.u) == 2 and not m.y and not m.z
    assert mat.integrality.sum() == len(m.n) + len(m.u)


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


def _with(inp, **changes):
    from dataclasses import replace

    return replace(inp, **changes)


def test_transfer_shortens_the_hot_hold_window():
    # Hot hold 15 min, transfer 10 min: the belt has 5 min x 10 kg/min = 50 kg per
    # batch -> 5 trays. Batches out by 480 - 10 (transfer) - 20 (residence) = 450
    # min -> 7 batches -> 350 kg. Without the transfer the 15 min would take 150 kg,
    # so the batch is full (100 kg): 700 kg.
    from dataclasses import replace

    base = one_line(products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 15.0})})
    assert plan(base, OPT).objective_value == pytest.approx(700.0)
    tunnel = replace(base.tunnels[0], transfer_min=10.0)
    r = plan(_with(base, tunnels=(tunnel,)), OPT)
    assert r.objective_value == pytest.approx(350.0)
    assert all(c.trays == 5 for b in r.batches for c in b.contents)


def test_back_to_back_shifts_carry_the_drain_into_the_next_shift():
    # Tunnel-bound at 1 kg/min with a 200-min residence. Apart: each shift feeds from
    # 60 (fill) to 280 -> 220 + 220 kg. Back to back, s1's pieces may leave in s2: s1
    # feeds from 60 to 480 (420 kg; its oven batches need not drain either); the last
    # shift still clears: 220 kg.
    base = one_line(products={"A": (10.0, 50.0, 0.1, {})}, n_shifts=2)
    assert plan(base, OPT).objective_value == pytest.approx(440.0)
    r = plan(_with(base, back_to_back=True), OPT)
    assert r.objective_value == pytest.approx(640.0)
    assert sum(x.kg for x in r.runs if x.shift == "s1") == pytest.approx(420.0)


def test_a_tunnel_stop_inside_the_fill_costs_nothing():
    # The belt is empty for the 60-min fill: a 45-min belt wash fits in it and the
    # tunnel-bound plan keeps its 220 kg; a 100-min stop takes 40 min more than the
    # fill: 380 available, fed 380 - 200 (drain) = 180 kg.
    from optimizer.planning.inputs import ShiftData, StopData

    base = one_line(products={"A": (10.0, 50.0, 0.1, {})})
    for stop, kg in ((45.0, 220.0), (100.0, 180.0)):
        shift = ShiftData(
            "s1", 480.0, {"tunnel-1": 480.0 - stop}, stops=(StopData(stop, "tunnel-1"),)
        )
        r = plan(_with(base, shifts=(shift,)), OPT)
        assert r.objective_value == pytest.approx(kg), stop


def test_the_slowest_run_fed_sets_the_drain():
    # A: 1 m/min (residence 20 min, 10 kg/min); B: 0.1 m/min (residence 200 min,
    # 1 kg/min), at least 50 kg of B. A 40-tray oven makes 400-kg batches; 7 of them
    # (out by 460 min) = 2800 kg, not binding. With B in the shift the belt feeds from
    # 60 (fill) and B drains last: 50 (B) + A + 200 <= 420 -> A 170 min = 1700 kg.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 0.1, {})}
    inp = one_line(
        products=prods,
        trays=40,
        capacity_kg=4000.0,
        orders=[OrderData("A"), OrderData("B", min_kg=50.0)],
    )
    r = plan(inp, OPT)
    kg = {p: sum(x.kg for x in r.runs if x.product == p) for p in ("A", "B")}
    assert kg == pytest.approx({"A": 1700.0, "B": 50.0})
    # Without B only A runs and drains 20 min: 400 belt minutes would take 4000 kg;
    # the oven's 2800 kg bind.
    r2 = plan(_replace_orders(inp, [OrderData("A"), OrderData("B", max_kg=0.0)]), OPT)
    assert r2.objective_value == pytest.approx(2800.0)
