"""Candidate batch loads and tunnel routes (optimizer.planning.loads), on hand-made plants.

Plants and numbers are invented for the tests; the expected values are
worked out by hand in the comments.
"""

from __future__ import annotations

import itertools
import math

import pytest

from optimizer.planning.inputs import (
    LoadingOption,
    OrderData,
    OvenData,
    PlanInputError,
    PlanInputs,
    ProductData,
    ShiftData,
    SolveOptions,
    TunnelData,
)
from optimizer.planning.loads import (
    best_shift_pattern,
    candidates,
    close_enough,
    pair_patterns,
    price_mixed_loads,
)
from tests._planner_cases import dwell_row, one_line, table


def test_single_load_fills_trays_or_kg_capacity():
    # 10 trays x 12 kg = 120 kg > 100 kg capacity -> 8 trays (96 kg).
    inp = one_line(capacity_kg=100.0, products={"A": (12.0, 50.0, 1.0, {})})
    cand = candidates(inp, 0.15, 2)
    (load,) = cand.singles
    assert load.trays == (("A", 8),)
    assert load.kg_of("A") == pytest.approx(96.0)
    assert load.cycle_min == pytest.approx(60.0)  # 50 cook + 10 load/unload


def test_route_rate_and_speed_caps():
    # Table allows 9 m/min, the belt only 5 m/min: rate = 10 kg/m2 * 1 * 2 m * 5 m/min.
    inp = one_line(tunnel_width=2.0, products={"A": (10.0, 50.0, 9.0, {})})
    (route,) = candidates(inp, 0.15, 2).routes
    assert route.belt_speed_m_per_min == pytest.approx(5.0)
    assert route.rate_kg_per_min == pytest.approx(100.0)


def test_route_below_minimum_speed_is_ruled_out():
    # Belt minimum is 0.05 m/min; a table speed of 0.01 m/min cannot run.
    inp = one_line(products={"A": (10.0, 50.0, 0.01, {})})
    cand = candidates(inp, 0.15, 2)
    assert cand.routes == () and cand.singles == ()
    assert "A" in cand.excluded


def test_hot_hold_caps_trays_and_filters_slow_routes():
    # Fastest route 10 kg/min, hot hold 3 min -> at most 30 kg per batch -> 3 trays of 10 kg.
    slow = dwell_row("A", "oven-1", "hot", "tunnel-1", "cold", "half", 50.0, 1.0)
    inp = one_line(products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 3.0})}, extra_rows=[slow])
    inp = PlanInputs(
        inp.ovens,
        (
            TunnelData(
                "tunnel-1",
                20.0,
                1.0,
                0.05,
                5.0,
                ("cold",),
                (LoadingOption("full", 1.0), LoadingOption("half", 0.5)),
            ),
        ),
        inp.products,
        inp.shifts,
        inp.orders,
        inp.dwell,
    )
    cand = candidates(inp, 0.15, 2)
    (load,) = cand.singles
    assert load.trays == (("A", 3),)
    # The half loading (5 kg/min) would need 6 min for 30 kg > 3 min: dropped.
    assert [r.loading for r in cand.routes] == ["full"]


def test_dominated_loading_is_pruned():
    # Same speed, coverage 0.5 -> half the rate and same heat out: dominated.
    half = dwell_row("A", "oven-1", "hot", "tunnel-1", "cold", "half", 50.0, 1.0)
    base = one_line(extra_rows=[half])
    inp = PlanInputs(
        base.ovens,
        (
            TunnelData(
                "tunnel-1",
                20.0,
                1.0,
                0.05,
                5.0,
                ("cold",),
                (LoadingOption("full", 1.0), LoadingOption("half", 0.5)),
            ),
        ),
        base.products,
        base.shifts,
        base.orders,
        base.dwell,
    )
    assert [r.loading for r in candidates(inp, 0.15, 2).routes] == ["full"]


def test_excluded_product_carries_the_table_reason():
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
        reason="core does not reach 72 °C",
    )
    base = one_line(extra_rows=[bad])
    inp = PlanInputs(
        base.ovens,
        base.tunnels,
        (*base.products, ProductData("B", 10.0, 10.0)),
        base.shifts,
        (*base.orders, OrderData("B", min_kg=10.0)),
        base.dwell,
    )
    cand = candidates(inp, 0.15, 2)
    assert cand.excluded["B"] == ("core does not reach 72 °C",)
    assert all(r.product != "B" for r in cand.routes)


def test_unordered_products_are_not_planned():
    base = one_line(products={"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})})
    inp = PlanInputs(
        base.ovens, base.tunnels, base.products, base.shifts, (OrderData("A"),), base.dwell
    )
    cand = candidates(inp, 0.15, 2)
    assert {ld.products for ld in cand.singles} == {("A",)}
    assert cand.mixed_pool == ()


@pytest.mark.parametrize(
    ("cook_b", "mixed"),
    [(57.0, True), (57.6, False)],  # 57.5 = 1.15 * 50 is the edge
)
def test_mix_tolerance(cook_b, mixed):
    inp = one_line(products={"A": (10.0, 50.0, 1.0, {}), "B": (10.0, cook_b, 1.0, {})})
    pool = candidates(inp, 0.15, 2).mixed_pool
    assert bool(pool) is mixed
    if mixed:
        # 10 trays, pattern (a, 10 - a) for a = 1..9, all maximal; batch as long as B.
        assert len(pool) == 9
        assert all(ld.cook_min == pytest.approx(cook_b) for ld in pool)
    assert close_enough(50.0, 57.5, 0.15)
    assert not close_enough(50.0, 57.51, 0.15)


def test_no_mixing_when_one_product_per_batch():
    inp = one_line(products={"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 50.0, 1.0, {})})
    assert candidates(inp, 0.15, 1).mixed_pool == ()


@pytest.mark.parametrize(
    ("trays", "cap", "ka", "kb", "ma", "mb"),
    [(10, 1000.0, 10.0, 10.0, 10, 10), (12, 100.0, 10.0, 6.0, 12, 12), (8, 75.0, 9.0, 13.0, 3, 8)],
)
def test_pair_patterns_are_exactly_the_maximal_ones(trays, cap, ka, kb, ma, mb):
    feasible = [
        (a, b)
        for a, b in itertools.product(range(1, trays + 1), repeat=2)
        if a + b <= trays and a * ka + b * kb <= cap + 1e-9 and a <= ma and b <= mb
    ]
    maximal = sorted(
        p for p in feasible if not any(q != p and q[0] >= p[0] and q[1] >= p[1] for q in feasible)
    )
    assert pair_patterns(trays, cap, ka, kb, ma, mb) == maximal


def test_pricing_picks_the_best_pattern_by_brute_force():
    # A: 10 kg/tray, B: 6 kg/tray, 12 trays, 100 kg. Dual values 1.0 and 2.0 per kg.
    inp = one_line(
        trays=12,
        capacity_kg=100.0,
        products={"A": (10.0, 50.0, 1.0, {}), "B": (6.0, 52.0, 1.0, {})},
    )
    cand = candidates(inp, 0.15, 2)
    value = {("A", "oven-1", "hot", "s1"): 1.0, ("B", "oven-1", "hot", "s1"): 2.0}
    cost = {("oven-1", "hot", "s1"): 0.1}
    ((gain, load),) = price_mixed_loads(inp, cand.cook, 0.15, value, cost)
    best = max(
        a * 10 * 1.0 + b * 6 * 2.0
        for a in range(1, 12)
        for b in range(1, 12)
        if a + b <= 12 and 10 * a + 6 * b <= 100
    )
    assert gain == pytest.approx(best - 0.1 * (52 + 10))
    a, b = load.trays[0][1], load.trays[1][1]
    assert 10 * a * 1.0 + 6 * b * 2.0 == pytest.approx(best)


def test_pricing_skips_pairs_with_a_worthless_product():
    inp = one_line(products={"A": (10.0, 50.0, 1.0, {}), "B": (10.0, 52.0, 1.0, {})})
    cand = candidates(inp, 0.15, 2)
    value = {("A", "oven-1", "hot", "s1"): 1.0, ("B", "oven-1", "hot", "s1"): 0.0}
    assert price_mixed_loads(inp, cand.cook, 0.15, value, {}) == []


def test_cook_too_long_for_any_shift_is_excluded():
    inp = one_line(shift_minutes=100.0, products={"A": (10.0, 95.0, 1.0, {})})
    cand = candidates(inp, 0.15, 2)
    assert cand.singles == ()
    assert "does not fit in a shift" in cand.excluded["A"][0]


@pytest.mark.parametrize(
    ("make", "field"),
    [
        (lambda: OvenData("o", 0, 100.0, ("a",)), "trays"),
        (lambda: OvenData("o", 5, -1.0, ("a",)), "capacity_kg"),
        (lambda: OvenData("o", 5, 100.0, ()), "settings"),
        (lambda: LoadingOption("l", 1.5), "coverage"),
        (lambda: ProductData("p", 0.0, 10.0), "kg_per_tray"),
        (lambda: ProductData("p", 1.0, 10.0, hot_hold_min=math.nan), "hot_hold_min"),
        (lambda: OrderData("p", min_kg=10.0, max_kg=5.0), "max_kg"),
        (lambda: ShiftData("s", -1.0), "minutes"),
        (lambda: SolveOptions(solver="glpk"), "solver"),
        (lambda: SolveOptions(max_mix_products=3), "max_mix_products"),
        (
            lambda: TunnelData("t", 10, 1, 2.0, 1.0, ("c",), (LoadingOption("f", 1.0),)),
            "max_speed_m_per_min",
        ),
    ],
)
def test_bad_input_names_the_field(make, field):
    with pytest.raises(PlanInputError, match=field) as err:
        make()
    assert "\n" not in str(err.value)


def test_bad_plan_inputs_name_the_field():
    base = one_line()
    with pytest.raises(PlanInputError, match=r"order\.product"):
        PlanInputs(
            base.ovens, base.tunnels, base.products, base.shifts, (OrderData("Z"),), base.dwell
        )
    with pytest.raises(PlanInputError, match="due_shift"):
        PlanInputs(
            base.ovens,
            base.tunnels,
            base.products,
            base.shifts,
            (OrderData("A", due_shift="s9"),),
            base.dwell,
        )
    with pytest.raises(PlanInputError, match="missing columns"):
        PlanInputs(
            base.ovens,
            base.tunnels,
            base.products,
            base.shifts,
            base.orders,
            table([{"product": "A"}]),
        )
    with pytest.raises(PlanInputError, match="machine_minutes"):
        PlanInputs(
            base.ovens,
            base.tunnels,
            base.products,
            (ShiftData("s1", 480.0, {"oven-9": 10.0}),),
            base.orders,
            base.dwell,
        )


@pytest.mark.parametrize("seed", range(12))
def test_shift_pattern_pricing_matches_brute_force(seed):
    # Random oven-shift knapsacks: 1-3 settings with 1-3 loads each, a changeover
    # between settings (first free); every batch-count combination is tried.
    import random

    rng = random.Random(seed)
    items = {
        f"s{j}": [
            (rng.uniform(20, 90), rng.uniform(-1, 5), f"L{j}{i}") for i in range(rng.randint(1, 3))
        ]
        for j in range(rng.randint(1, 3))
    }
    avail = rng.uniform(60, 250)
    co = rng.choice([0.0, 15.5, 40.0])
    got = best_shift_pattern(items, avail, co)
    flat = [(c, v, k, s) for s, lst in items.items() for c, v, k in lst]
    # The search rounds minutes up to whole minutes (so its patterns always fit).
    best = 0.0
    ranges = [range(int(avail // math.ceil(c)) + 1) for c, _v, _k, _s in flat]
    for combo in itertools.product(*ranges):
        used = sum(math.ceil(c) * n for (c, _v, _k, _s), n in zip(flat, combo, strict=True))
        nset = len({s for (_c, _v, _k, s), n in zip(flat, combo, strict=True) if n})
        used += math.ceil(co) * max(0, nset - 1)
        if used <= math.floor(avail):
            best = max(best, sum(v * n for (_c, v, _k, _s), n in zip(flat, combo, strict=True)))
    value = sum(v * got.get(k, 0) for _c, v, k, _s in flat)
    assert value == pytest.approx(best, abs=1e-9)
    exact = sum(c * got.get(k, 0) for c, _v, k, _s in flat)
    nset = len({s for _c, _v, k, s in flat if got.get(k, 0)})
    assert exact + co * max(0, nset - 1) <= avail + 1e-9


def _two_setting_line(colder_speed_mild: float, objective=None, heat_out_colder=250.0):
    """Tunnel settings 'cold' and 'colder'; product A cooked at 'hot' and 'mild'.

    From 'hot' the 'colder' setting runs the belt at 1.5 m/min against 1.0;
    from 'mild' at ``colder_speed_mild`` against 1.0 at 'cold'.
    """
    from optimizer.planning.inputs import Objective

    rows = [
        dwell_row(
            "A", "oven-1", "hot", "tunnel-1", "colder", "full", 50.0, 1.5, heat_out=heat_out_colder
        ),
        dwell_row("A", "oven-1", "mild", "tunnel-1", "cold", "full", 70.0, 1.0),
        dwell_row(
            "A",
            "oven-1",
            "mild",
            "tunnel-1",
            "colder",
            "full",
            70.0,
            colder_speed_mild,
            heat_out=heat_out_colder,
        ),
    ]
    base = one_line(
        extra_rows=rows,
        objective=objective or Objective.MOST_KG,
        fixed_output_kg=100.0 if objective is Objective.LEAST_ENERGY else None,
    )
    tunnel = TunnelData(
        "tunnel-1", 20.0, 1.0, 0.05, 5.0, ("cold", "colder"), (LoadingOption("full", 1.0),), 10.0
    )
    return PlanInputs(
        base.ovens,
        (tunnel,),
        base.products,
        base.shifts,
        base.orders,
        base.dwell,
        base.objective,
        base.fixed_output_kg,
    )


def test_tunnel_setting_beaten_from_every_source_is_pruned():
    # 'colder' is faster than 'cold' from both 'hot' (1.5 > 1.0) and 'mild' (1.2 > 1.0).
    inp = _two_setting_line(1.2)
    assert {r.tunnel_setting for r in candidates(inp, 0.15, 2).routes} == {"colder"}
    # From 'mild' 'colder' is slower (0.8 < 1.0): neither setting beats the other.
    inp = _two_setting_line(0.8)
    assert {r.tunnel_setting for r in candidates(inp, 0.15, 2).routes} == {"cold", "colder"}


def test_setting_pruning_keeps_heat_out_for_least_energy():
    from optimizer.planning.inputs import Objective

    # Faster but takes out more heat: pruned for most kg, kept for least energy.
    inp = _two_setting_line(1.2, heat_out_colder=400.0)
    assert {r.tunnel_setting for r in candidates(inp, 0.15, 2).routes} == {"colder"}
    inp = _two_setting_line(1.2, objective=Objective.LEAST_ENERGY, heat_out_colder=400.0)
    assert {r.tunnel_setting for r in candidates(inp, 0.15, 2).routes} == {"cold", "colder"}


def test_setting_pruning_leaves_the_optimum_unchanged():
    # Solve with and without the pruning: the same best kg (most kg objective).
    from optimizer.planning import loads
    from optimizer.planning.solve import plan

    inp = _two_setting_line(1.2)
    pruned = plan(inp, SolveOptions(shadow_prices=False))
    original = loads._without_dominated_settings
    try:
        loads._without_dominated_settings = lambda routes, *, energy: routes
        whole = plan(inp, SolveOptions(shadow_prices=False))
    finally:
        loads._without_dominated_settings = original
    assert pruned.objective_value == pytest.approx(whole.objective_value, rel=1e-9)


def test_hot_hold_window_is_the_limit_less_the_transfer():
    # Hot hold 8 min, transfer 5 min: the belt has 3 min at 10 kg/min = 30 kg -> 3 trays.
    from dataclasses import replace

    inp = one_line(products={"A": (10.0, 50.0, 1.0, {"hot_hold_min": 8.0})})
    assert candidates(inp, 0.15, 1).cook[("A", "oven-1", "hot")].max_trays == 8
    inp = replace(inp, tunnels=(replace(inp.tunnels[0], transfer_min=5.0),))
    assert candidates(inp, 0.15, 1).cook[("A", "oven-1", "hot")].max_trays == 3
    # A transfer as long as the limit leaves no time: A cannot be made.
    inp = replace(inp, tunnels=(replace(inp.tunnels[0], transfer_min=8.0),))
    cand = candidates(inp, 0.15, 1)
    assert cand.cook == {} and "hot-hold" in " ".join(cand.excluded["A"])


def test_a_mixed_batch_on_one_tunnel_feeds_one_product_then_the_other():
    # A feeds at 10 kg/min, B at 5 kg/min, 10 kg trays, hot hold 10 min, tunnel
    # changeover 2 min between the two runs. a trays of A take a min, b trays of B
    # 2b min; either order needs a + 2 + 2b <= 10 (and each alone within 10): the
    # maximal patterns with both products in a 10-tray oven are (6,1), (4,2), (2,3).
    prods = {
        "A": (10.0, 50.0, 1.0, {"hot_hold_min": 10.0}),
        "B": (10.0, 50.0, 0.5, {"hot_hold_min": 10.0}),
    }
    cand = candidates(one_line(products=prods, tunnel_changeover=2.0), 0.15, 2)
    assert sorted(ld.trays for ld in cand.mixed_pool) == [
        (("A", 2), ("B", 3)),
        (("A", 4), ("B", 2)),
        (("A", 6), ("B", 1)),
    ]
    # Each product alone keeps its own cap: 10 trays of A, 5 of B.
    assert {ld.trays for ld in cand.singles} == {(("A", 10),), (("B", 5),)}
