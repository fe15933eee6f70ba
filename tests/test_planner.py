"""plan_buckets(): statuses, shortfall diagnosis, shadow prices, determinism, tables.

Plants are invented (tests._planner_cases); expected values are worked out
by hand in the comments.
"""

from __future__ import annotations

import dataclasses

import pytest

from optimizer.planning.inputs import Objective, OrderData, PlanInputs, SolveOptions
from optimizer.planning.results import (
    CAUTION,
    ELASTIC_STOPPED,
    SolveStatus,
    bottleneck,
    oven_table,
    plan_tables,
    summary_text,
    totals_table,
    tunnel_table,
    utilisation_table,
)
from optimizer.planning.solve import plan_buckets
from tests._planner_cases import dwell_row, one_line

SOLVERS = ["highs", "cbc"]


@pytest.mark.parametrize("solver", SOLVERS)
def test_shadow_price_of_the_oven(solver):
    # Oven-bound: one more oven hour = one more 60-min batch of 100 kg -> +100 kg/h.
    r = plan_buckets(one_line(), SolveOptions(solver=solver))
    price = {s.machine: s.per_hour for s in r.shadow_prices}
    assert price["oven-1"] == pytest.approx(100.0, rel=1e-4)
    assert price["tunnel-1"] == pytest.approx(0.0, abs=1e-6)
    bn = bottleneck(r)
    assert (bn.machine, bn.reason) == ("oven-1", "highest shadow price")


@pytest.mark.parametrize("solver", SOLVERS)
def test_shadow_price_of_the_tunnel(solver):
    # Tunnel-bound at 1 kg/min -> one more belt hour = +60 kg.
    r = plan_buckets(one_line(products={"A": (10.0, 50.0, 0.1, {})}), SolveOptions(solver=solver))
    price = {s.machine: s.per_hour for s in r.shadow_prices}
    assert price["tunnel-1"] == pytest.approx(60.0, rel=1e-4)
    assert price["oven-1"] == pytest.approx(0.0, abs=1e-6)
    assert bottleneck(r).machine == "tunnel-1"


def test_shortfall_names_the_order():
    # 700 kg fit in s1 (7 batches out by 460 min, 20 min residence before the end);
    # an order of 720 kg due s1 is 20 kg short (20/720 = 2.8 % beats the 20 more oven
    # minutes an 8th batch needs, 4.2 % of the shift).
    inp = one_line(orders=[OrderData("A", min_kg=720.0, due_shift="s1")], n_shifts=2)
    r = plan_buckets(inp)
    assert r.status is SolveStatus.INFEASIBLE
    assert len(r.shortfalls) == 1
    s = r.shortfalls[0]
    assert (s.kind, s.subject, s.shift) == ("order", "A", "s1")
    assert s.amount == pytest.approx(20.0, rel=1e-6)
    assert s.message == "order for A: 20 kg short by s1"
    text = summary_text(r)
    assert "20 kg short by s1" in text
    # proven smallest here; an elastic re-solve stopped with a gap says so instead
    assert "the smallest changes that would make it fit" in text
    assert not any(m.startswith("elastic re-solve") for m in r.messages)
    stopped = dataclasses.replace(r, messages=(*r.messages, ELASTIC_STOPPED + " at a 2.0% gap"))
    text = summary_text(stopped)
    assert "smallest" not in text.split(ELASTIC_STOPPED)[0]
    assert "changes that would make it fit (see the note)" in text


def test_shortfall_names_the_machine_minutes():
    # A only at 'hot', B only at 'mild', 60-min changeover, mins A 100, B 600: one A
    # batch + 6 B batches + changeover = 480 min > 460 (the last batch must be out
    # 20 min before the end for its residence). Cheapest relaxation: 20 more oven
    # minutes (4 %) rather than 100 kg of B (17 %) or of A (100 %).
    rows = [dwell_row("B", "oven-1", "mild", "tunnel-1", "cold", "full", 50.0, 1.0)]
    inp = one_line(
        oven_changeover=60.0,
        orders=[OrderData("A", min_kg=100.0), OrderData("B", min_kg=600.0)],
        extra_rows=rows,
        extra_products=("B",),
    )
    r = plan_buckets(inp)
    assert r.status is SolveStatus.INFEASIBLE
    (s,) = r.shortfalls
    assert (s.kind, s.subject, s.shift, s.unit) == ("machine", "oven-1", "s1", "min")
    assert s.amount == pytest.approx(20.0, rel=1e-6)
    assert s.message == "oven-1 needs 20 more minutes in s1"


def test_shortfall_for_a_product_the_plant_cannot_make():
    bad = dwell_row(
        "B",
        "oven-1",
        "hot",
        "tunnel-1",
        "cold",
        "full",
        0,
        0,
        feasible=False,
        reason="core does not reach 72 °C at this setting",
    )
    inp = one_line(
        orders=[OrderData("A"), OrderData("B", min_kg=50.0)],
        extra_rows=[bad],
        extra_products=("B",),
    )
    r = plan_buckets(inp)
    assert r.status is SolveStatus.INFEASIBLE
    (s,) = r.shortfalls
    assert s.amount == pytest.approx(50.0)
    assert "cannot be made on this plant: core does not reach 72 °C" in s.message
    assert "Cannot make B" in summary_text(r)


def test_infeasible_without_diagnosis_has_no_shortfalls():
    inp = one_line(orders=[OrderData("A", min_kg=900.0)])
    r = plan_buckets(inp, SolveOptions(diagnose=False))
    assert r.status is SolveStatus.INFEASIBLE and r.shortfalls == ()


def _plan_signature(r):
    return (
        r.objective_value,
        [(b.oven, b.shift, b.load, b.batches, tuple(c.kg for c in b.contents)) for b in r.batches],
        [(x.tunnel, x.shift, x.product, x.oven_setting, x.loading, x.kg) for x in r.runs],
    )


@pytest.mark.parametrize("solver", SOLVERS)
def test_same_input_same_plan(solver):
    # Many equal-value plans exist (A and B identical): the chosen one must repeat.
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {}), "C": (8.0, 55.0, 0.5, {})}
    orders = [OrderData("A", max_kg=900.0), OrderData("B", min_kg=200.0), OrderData("C")]
    inp = one_line(products=prods, orders=orders, n_shifts=3, oven_changeover=20.0)
    opts = SolveOptions(solver=solver)
    assert _plan_signature(plan_buckets(inp, opts)) == _plan_signature(plan_buckets(inp, opts))


def test_tables_and_summary():
    inp = one_line(n_shifts=2)
    r = plan_buckets(inp)
    # 7 batches per shift (out by 460 min), 420 of 480 oven minutes.
    ov = oven_table(r)
    assert list(ov["batches"]) == [7, 7]
    assert ov["minutes"].sum() == pytest.approx(840.0)
    tu = tunnel_table(r)
    assert set(tu.columns) >= {"belt_speed_m_per_min", "kg", "loading", "tunnel_setting"}
    assert tu["kg"].sum() == pytest.approx(1400.0)
    tot = totals_table(r)
    assert tot.loc["A", "total"] == pytest.approx(1400.0)
    ut = utilisation_table(r)
    oven_u = ut[ut["machine"] == "oven-1"]["utilisation"]
    assert list(oven_u) == pytest.approx([0.875, 0.875])
    assert set(plan_tables(r)) >= {"ovens", "tunnels", "totals", "utilisation", "slack"}
    text = summary_text(r)
    assert "1,400.0 kg" in text and CAUTION in text
    # 40 of the 460 oven minutes are left in each shift, too few for a 60-min batch.
    slack = {s.group: s for s in r.slacks}
    assert slack["oven_time"].binding == 0
    assert slack["oven_time"].smallest_slack == pytest.approx(40.0)


def test_plan_exposes_what_the_thermal_recheck_needs():
    r = plan_buckets(one_line())
    (run,) = r.runs
    assert (run.product, run.oven, run.oven_setting, run.tunnel_setting, run.loading) == (
        "A",
        "oven-1",
        "hot",
        "cold",
        "full",
    )
    assert run.belt_speed_m_per_min == pytest.approx(1.0)
    (b,) = r.batches
    assert (b.oven, b.setting, b.contents[0].product) == ("oven-1", "hot", "A")


def test_column_generation_finds_an_lp_improving_mix():
    # 10 trays, 100 kg. A: 20 kg/tray, value 1; B: 5 kg/tray, value 3. Singles: A 5
    # trays = 100 kg = 100; B 10 trays = 50 kg = 150. Best mix: 3 A + 7 B = 60 + 35 kg
    # = 60 + 105 = 165 per 60-min batch (A at 50 min, B at 52 min: cycle 62 min).
    # 480 min -> 7 batches = 1155 (7 x 62 = 434 min; an 8th would need 496).
    prods = {
        "A": (20.0, 50.0, 5.0, {"value_per_kg": 1.0}),
        "B": (5.0, 52.0, 5.0, {"value_per_kg": 3.0}),
    }
    inp = one_line(products=prods, capacity_kg=100.0, objective=Objective.MOST_VALUE)
    cg = plan_buckets(inp, SolveOptions(column_generation=True, shadow_prices=False))
    full = plan_buckets(inp, SolveOptions(column_generation=False, shadow_prices=False))
    assert cg.column_generation_rounds >= 1 and cg.mixed_loads >= 1
    assert cg.mixed_loads < full.mixed_loads
    # Singles only: 7 B batches (434 min) = 1050; an A batch no longer fits.
    single = plan_buckets(inp, SolveOptions(max_mix_products=1, shadow_prices=False))
    assert single.objective_value == pytest.approx(1050.0)
    assert full.objective_value == pytest.approx(1155.0)
    assert cg.objective_value == pytest.approx(1155.0)
    (b,) = cg.batches
    assert b.contents[0].trays == 3 and b.contents[1].trays == 7


def test_column_generation_stays_between_singles_and_the_full_pool():
    prods = {
        f"P{i}": (8.0 + i, 40.0 + 2 * i, 0.6 + 0.1 * i, {"value_per_kg": 1.0 + 0.2 * i})
        for i in range(6)
    }
    orders = [OrderData(p, max_kg=300.0 + 50 * i) for i, p in enumerate(prods)]
    inp = one_line(products=prods, orders=orders, n_shifts=2)
    opts = dict(shadow_prices=False, time_limit_s=60.0, gap_rel=1e-6)
    single = plan_buckets(inp, SolveOptions(max_mix_products=1, **opts))
    full = plan_buckets(inp, SolveOptions(column_generation=False, **opts))
    cg = plan_buckets(inp, SolveOptions(column_generation=True, **opts))
    # The singles optimum is proven; both mixed runs start from it and may only improve.
    assert single.status is SolveStatus.OPTIMAL
    assert cg.objective_value >= single.objective_value - 1e-6
    assert full.objective_value >= single.objective_value - 1e-6
    # Nothing beats the full pool's proven bound.
    assert cg.objective_value <= full.best_bound + 1e-6


def test_time_limit_reports_a_typed_status():
    # Whatever the solver manages in the limit, the status is one of the enum members
    # and a plan is present exactly when the status says so.
    prods = {f"P{i}": (8.0 + i, 40.0 + 3 * i, 0.5 + 0.1 * i, {}) for i in range(5)}
    inp = one_line(products=prods, n_shifts=3, oven_changeover=15.0, tunnel_changeover=10.0)
    r = plan_buckets(inp, SolveOptions(time_limit_s=2.0))
    assert isinstance(r.status, SolveStatus)
    assert r.status.has_plan == bool(r.runs)


def test_no_orders_for_a_product_means_it_is_not_made():
    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 30.0, 1.0, {})}
    base = one_line(products=prods)
    inp = PlanInputs(
        base.ovens, base.tunnels, base.products, base.shifts, (OrderData("A"),), base.dwell
    )
    r = plan_buckets(inp)
    assert {x.product for x in r.runs} == {"A"}


@pytest.mark.parametrize(
    ("make", "expected"),
    [
        (lambda: one_line(n_shifts=2), 1400.0),
        (lambda: one_line(products={"A": (10.0, 50.0, 0.1, {})}), 220.0),
        (
            lambda: one_line(
                oven_changeover=60.0,
                orders=[OrderData("A", min_kg=100.0), OrderData("B", min_kg=100.0)],
                extra_rows=[dwell_row("B", "oven-1", "mild", "tunnel-1", "cold", "full", 50, 1)],
                extra_products=("B",),
            ),
            600.0,
        ),
    ],
)
def test_pattern_formulation_on_hand_cases(make, expected):
    # Same hand cases as test_model (700 kg per 480-min shift, 1 kg/min belt with fill
    # and drain, a 60-min changeover costing a batch).
    r = plan_buckets(make(), SolveOptions(formulation="patterns"))
    assert r.status is SolveStatus.OPTIMAL
    assert r.objective_value == pytest.approx(expected)
    used = {(u.machine, u.shift): u.used_min for u in r.machine_use}
    for b in r.batches:
        assert b.kg <= b.batches * sum(c.kg_per_batch for c in b.contents) + 1e-6
    assert all(v <= 480.0 + 1e-9 for v in used.values())
    assert {s.machine for s in r.shadow_prices} == {"oven-1", "tunnel-1"}


def test_pattern_formulation_is_honest_about_its_gap():
    # Capped orders (A <= 350, B <= 350) need a 5+5 mixed batch for 700 kg. The pattern
    # LP already reaches 700 by mixing "all A" and "all B" patterns, so pricing sees no
    # better pattern and the MILP over the generated patterns stops at 650 kg: the
    # result must say so through its gap against the LP bound, not claim optimality.
    inp = one_line(
        products={"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})},
        orders=[OrderData("A", max_kg=350.0), OrderData("B", max_kg=350.0)],
    )
    r = plan_buckets(inp, SolveOptions(formulation="patterns"))
    assert r.status is SolveStatus.FEASIBLE_WITH_GAP
    assert r.best_bound == pytest.approx(700.0, rel=1e-5)
    assert 650.0 - 1e-6 <= r.objective_value <= r.best_bound
    assert r.gap == pytest.approx((r.best_bound - r.objective_value) / r.objective_value, rel=1e-3)


def _constraint_violation(model) -> float:
    worst = 0.0
    for c in model.prob._constraints.values():
        v = c.value()
        viol = abs(v) if c.sense == 0 else max(0.0, -v if c.sense > 0 else v)
        worst = max(worst, viol)
    return worst


def _solved_single_product_loads(inp: PlanInputs, opts: SolveOptions):
    """The compact model of ``inp`` with single-product loads, solved to optimality."""
    from optimizer.planning import solve as S
    from optimizer.planning.loads import candidates
    from optimizer.planning.model import build_model

    model = build_model(inp, candidates(inp, opts.mix_tolerance, 1))
    status, *_ = S._run(model.prob, "highs", opts)
    assert status is SolveStatus.OPTIMAL
    return model, float(model.prob.objective.value())


@pytest.mark.parametrize("n_shifts", [2, 3])
def test_shift_window_improvement_reaches_a_better_feasible_plan(n_shifts):
    # A poor plan (no batches at all in the first shift) is improved two shifts at a
    # time; with two shifts the one window is the whole plan, so it reaches the optimum.
    from optimizer.planning import solve as S

    prods = {f"P{i}": (8.0 + i, 40.0 + 3 * i, 0.5 + 0.1 * i, {}) for i in range(4)}
    inp = one_line(products=prods, n_shifts=n_shifts, oven_changeover=15.0, tunnel_changeover=10.0)
    opts = SolveOptions(gap_rel=1e-9)
    model, best = _solved_single_product_loads(inp, opts)
    first = [v for (_lk, s), v in model.n.items() if s == "s1"]
    poor = S._restricted_plan(model, "highs", opts, first, 10.0)
    assert poor is not None and poor[0] > best + 1.0  # clearly worse (min form)
    better = S._improve_by_shift_windows(model, 20.0)
    assert better is not None and better < poor[0] - 1.0
    assert better >= best - 1e-6 * abs(best)  # never past the optimum
    assert _constraint_violation(model) < 1e-6
    assert float(model.prob.objective.value()) == pytest.approx(better, rel=1e-9)
    assert all(abs(v.varValue - round(v.varValue)) < 1e-9 for v in model.integer_vars)
    if n_shifts == 2:
        assert better == pytest.approx(best, rel=1e-7)


def _snapshot(model):
    return [(v.name, v.cat, v.lowBound, v.upBound) for v in model.prob.variables()]


@pytest.mark.parametrize("objective", [Objective.MOST_KG, Objective.SOONEST])
def test_relax_and_fix_gives_a_feasible_integer_plan_and_restores_the_model(objective):
    # Three shifts, changeovers on both machines and orders due in the first and
    # last shift: the shift-by-shift plan must be a plan of the whole MILP (every
    # row met, every integer whole) no better than its optimum, and the model must
    # come back with its bounds and integrality untouched.
    from optimizer.planning import solve as S

    prods = {f"P{i}": (8.0 + i, 40.0 + 3 * i, 0.5 + 0.1 * i, {}) for i in range(4)}
    orders = [
        OrderData("P0", min_kg=300.0, max_kg=900.0, due_shift="s1"),
        OrderData("P1", min_kg=200.0, max_kg=800.0),
        OrderData("P2", max_kg=700.0),
        OrderData("P3", min_kg=100.0, max_kg=600.0, due_shift="s2"),
    ]
    inp = one_line(
        products=prods,
        orders=orders,
        n_shifts=3,
        oven_changeover=15.0,
        tunnel_changeover=10.0,
        objective=objective,
    )
    opts = SolveOptions(gap_rel=1e-9)
    model, best = _solved_single_product_loads(inp, opts)
    before = _snapshot(model)
    if objective is Objective.SOONEST:
        assert model.f  # the completion binaries are in the model
    found = S._relax_and_fix(model, "highs", opts, 30.0)
    assert found is not None
    assert _snapshot(model) == before
    obj, values = found
    for v in model.prob.variables():
        v.varValue = values[v.name]
    assert _constraint_violation(model) < 1e-6
    assert all(abs(v.varValue - round(v.varValue)) < 1e-9 for v in model.integer_vars)
    assert float(model.prob.objective.value()) == pytest.approx(obj, rel=1e-9)
    assert obj >= best - 1e-6 * max(1.0, abs(best))  # a plan, never past the optimum


def test_relax_and_fix_without_a_plan_returns_none_and_restores_the_model():
    # The order minimum is more than the line can cook in the two shifts: no step
    # has a plan.
    from optimizer.planning import solve as S
    from optimizer.planning.loads import candidates
    from optimizer.planning.model import build_model

    inp = one_line(n_shifts=2, orders=[OrderData("A", min_kg=50_000.0)], tunnel_changeover=5.0)
    opts = SolveOptions()
    model = build_model(inp, candidates(inp, opts.mix_tolerance, 1))
    before = _snapshot(model)
    assert S._relax_and_fix(model, "highs", opts, 10.0) is None
    assert _snapshot(model) == before


def test_idle_batches_settings_and_runs_are_dropped_from_a_plan():
    # Two products and three shifts, so one shift is left empty; an optimal plan,
    # then padded by hand in the empty shift with two empty batches, their oven
    # setting switched on and a tunnel run with no kg (what a start held in place
    # can leave within the gap): the tidy step removes exactly those and the plan
    # stays feasible.
    from optimizer.planning import solve as S

    prods = {"A": (10.0, 50.0, 1.0, {}), "B": (8.0, 45.0, 0.8, {})}
    orders = [OrderData("A", max_kg=300.0), OrderData("B", max_kg=200.0)]
    inp = one_line(
        products=prods, orders=orders, n_shifts=3, oven_changeover=15.0, tunnel_changeover=10.0
    )
    model, _ = _solved_single_product_loads(inp, SolveOptions(gap_rel=1e-9))
    # the solver leaves settings and runs with nothing in them switched on when the
    # machines have time to spare (no objective term prices them): those go first
    assert S._drop_idle(model) > 0
    assert _constraint_violation(model) < 1e-6
    clean = {v.name: v.varValue for v in model.prob.variables()}
    assert S._drop_idle(model) == 0
    empty = next(
        s
        for s in ("s1", "s2", "s3")
        if all(v.varValue < 0.5 for (_, s2), v in model.n.items() if s2 == s)
    )
    pad_n = next(v for (_lk, s), v in model.n.items() if s == empty)
    pad_n.varValue = 2.0
    pad_z = next(v for (_o, _os, s), v in model.z.items() if s == empty)
    pad_z.varValue = 1.0
    pad_y, (t, p, ts, _) = next((v, k) for k, v in model.y.items() if k[3] == empty)
    pad_y.varValue = 1.0
    # a run fed means its residence level (and every faster one) drains
    level = model.caps.residence
    run_res = min(level[r.key] for r in model.routes.values() if r.run == (t, p, ts))
    pad_u = [
        v
        for (t2, li, s), v in model.u.items()
        if s == empty and t2 == t and model.u_level[(t2, li, s)] <= run_res + 1e-9
    ]
    for v in pad_u:
        v.varValue = 1.0
    assert _constraint_violation(model) < 1e-6  # padded, still a plan
    assert S._drop_idle(model) == 3 + len(pad_u)
    assert {v.name: v.varValue for v in model.prob.variables()} == clean


def test_a_full_milp_stopped_before_its_root_lp_reports_the_lp_bound(monkeypatch):
    # The full MILP is made to report a useless bound (as HiGHS does when its time
    # runs out before the root LP is solved); the plan's bound and gap must then come
    # from the LP relaxation solved before it, which bounds the MILP too.
    from optimizer.planning import solve as S
    from optimizer.planning.loads import candidates
    from optimizer.planning.model import build_model

    prods = {f"P{i}": (8.0 + i, 40.0 + 3 * i, 0.5 + 0.1 * i, {}) for i in range(3)}
    inp = one_line(products=prods, n_shifts=2, oven_changeover=15.0, tunnel_changeover=10.0)
    opts = SolveOptions(max_mix_products=1, shadow_prices=False)
    lp = build_model(inp, candidates(inp, opts.mix_tolerance, 1))
    S._set_relaxed(lp, True)
    assert S._run(lp.prob, "highs", opts, mip=False)[0] is SolveStatus.OPTIMAL
    lp_value = -float(lp.prob.objective.value())  # most kg, maximised

    real = S._run

    def weak_bound(prob, name, options, **kw):
        status, gap, bound, dt, msg = real(prob, name, options, **kw)
        if "start" in kw and status.has_plan:  # the full MILP
            return SolveStatus.FEASIBLE_WITH_GAP, 1e9, -1e12, dt, msg
        return status, gap, bound, dt, msg

    monkeypatch.setattr(S, "_run", weak_bound)
    r = plan_buckets(inp, opts)
    assert r.best_bound == pytest.approx(lp_value, rel=1e-9)
    # the gap is taken in the solver's objective, tie-break term included (< 1e-3)
    assert r.gap == pytest.approx((lp_value - r.objective_value) / r.objective_value, rel=1e-4)
    assert r.status is SolveStatus.FEASIBLE_WITH_GAP and r.gap < 0.1  # not the useless bound


def test_changes_between_solves_reach_highs():
    # The HiGHS path keeps the matrix between solves of the same model: a column
    # added afterwards (a generated mixed load) and bounds changed afterwards must
    # still reach the solver. Each solve is compared with a model built afresh.
    from optimizer.planning import solve as S
    from optimizer.planning.loads import candidates
    from optimizer.planning.model import build_model

    prods = {
        f"P{i}": (8.0 + i, 40.0 + 2 * i, 0.6 + 0.1 * i, {"value_per_kg": 1.0 + 0.2 * i})
        for i in range(3)
    }
    orders = [OrderData(p, max_kg=300.0 + 50 * i) for i, p in enumerate(prods)]
    inp = one_line(
        products=prods, orders=orders, n_shifts=2, tunnel_changeover=10.0, shift_minutes=240.0
    )
    opts = SolveOptions(gap_rel=1e-9)
    cand = candidates(inp, opts.mix_tolerance, 2)
    # a mixed load that improves this plan by 8 kg (found by trying the pool)
    (mixed,) = [ld for ld in cand.mixed_pool if ld.key == "oven-1|hot|P0:1+P1:9"]

    def solved(model):
        status, *_ = S._run(model.prob, "highs", opts)
        assert status is SolveStatus.OPTIMAL
        return float(model.prob.objective.value())

    model = build_model(inp, cand)
    singles_only = solved(model)
    assert model.add_load(mixed)
    with_mixed = solved(model)
    assert with_mixed == pytest.approx(solved(build_model(inp, cand, [mixed])), rel=1e-9)
    assert with_mixed < singles_only - 1.0  # minimisation: this mixed load helps
    # a bound change: no batches at all in the second shift
    for model_ in (model, fresh := build_model(inp, cand, [mixed])):
        for (_lk, s), v in model_.n.items():
            if s == "s2":
                v.upBound = 0
    assert solved(model) == pytest.approx(solved(fresh), rel=1e-9)
    assert solved(model) > with_mixed + 1.0  # and it cost plan


def test_a_plan_short_of_hot_hold_is_diagnosed_as_hot_hold():
    # A feeds at 10 kg/min; a 3-min hot hold lets the belt take 3 trays (30 kg) of a
    # batch in time, so the 7 batches of the shift carry 210 kg of the 400 kg ordered.
    # The elastic re-solve alone names a shortfall of the order (or of oven minutes);
    # the cause is the hot hold: at 6 min, 7 batches of 60 kg = 420 kg fit, at 5 min
    # 7 x 50 = 350 kg do not.
    inp = one_line(
        products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 3.0})},
        orders=[OrderData("A", min_kg=400.0)],
    )
    r = plan_buckets(inp)
    assert r.status is SolveStatus.INFEASIBLE
    assert r.shortfalls and all(s.rule == "hot_hold" for s in r.shortfalls)
    assert "hot-hold limit (hot_hold_max) of 6 min instead of 3 min" in r.shortfalls[0].message
    for limit, fits in ((5.0, False), (6.0, True)):
        p = dataclasses.replace(inp.products[0], hot_hold_min=limit)
        again = plan_buckets(dataclasses.replace(inp, products=(p,)))
        assert again.status.has_plan is fits, limit


def test_a_plan_short_of_oven_minutes_is_not_blamed_on_the_hot_hold():
    # No hot-hold limit: 720 kg due s1 against 700 that fit is a plain order shortfall.
    inp = one_line(orders=[OrderData("A", min_kg=720.0, due_shift="s1")], n_shifts=2)
    (s,) = plan_buckets(inp).shortfalls
    assert s.rule == "order" and "hot hold" not in s.message
