"""The plan MILP against independent paths.

* Brute force: every integer combination of batches on small random plants,
  each scored with its own LP (scipy.optimize.linprog) written here from the
  documented rules, not from optimizer.planning.model. Time on the belt
  counts: the belt feeds from the fill (shortest load/unload + cook) on; the
  slowest run fed drains its residence (length / speed, a run's residence
  being that of its fastest route) before the shift ends, which the brute
  force tries as every possible slowest run; each route alone drains too;
  and the oven's batches are out by the shift end less the quickest
  residence.
* A second solver path: the model's matrices solved with
  scipy.optimize.milp (HiGHS inside scipy, a separate build).
* HiGHS (in-process) against CBC on the same plans, every objective.

Solves stop at a relative gap of 1e-5: tighter gaps make the solver chase
the tie-break term (at most 1e-3 objective units), which changes nothing
the comparisons look at.

Plants are random but seeded and invented.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy.optimize import Bounds, LinearConstraint, linprog, milp

from optimizer.planning.inputs import (
    LoadingOption,
    Objective,
    OrderData,
    OvenData,
    PlanInputs,
    ProductData,
    ShiftData,
    SolveOptions,
    TunnelData,
)
from optimizer.planning.loads import candidates
from optimizer.planning.model import build_model, to_matrices
from optimizer.planning.results import SolveStatus
from optimizer.planning.solve import plan
from tests._planner_cases import dwell_row, table

GAP = 1e-5


def random_plant(seed: int, *, shift_minutes: float = 140.0, n_shifts: int = 2, trays: int = 3):
    """One oven (hot, mild), one tunnel, three products; everything drawn from ``seed``."""
    rng = np.random.default_rng(seed)
    oven = OvenData("ov", trays, 1000.0, ("hot", "mild"), 10.0, float(rng.choice([0.0, 25.0])))
    tun = TunnelData("tu", 10.0, 1.0, 0.05, 5.0, ("cold",), (LoadingOption("full", 1.0),))
    prods, rows, orders = [], [], []
    for i, name in enumerate(["A", "B", "C"]):
        kgpt = float(rng.integers(5, 15))
        prods.append(ProductData(name, kgpt, 10.0, value_per_kg=float(rng.integers(1, 5))))
        for os_ in ("hot", "mild"):
            if i == 2 and os_ == "hot":
                continue  # C only at mild
            cook = float(rng.integers(40, 60)) * (1.0 if os_ == "hot" else 1.2)
            speed = float(rng.uniform(0.1, 0.5))
            rows.append(
                dwell_row(
                    name,
                    "ov",
                    os_,
                    "tu",
                    "cold",
                    "full",
                    cook,
                    speed,
                    heat_in=float(rng.integers(200, 400)),
                    heat_out=float(rng.integers(150, 300)),
                )
            )
        mn = float(rng.choice([0.0, 20.0, 40.0]))
        orders.append(
            OrderData(
                name,
                min_kg=mn,
                max_kg=float(rng.choice([60.0, 90.0, np.inf])),
                due_shift=str(rng.choice(["s1", "s2"])),
            )
        )
    shifts = tuple(ShiftData(f"s{k + 1}", shift_minutes) for k in range(n_shifts))
    return PlanInputs((oven,), (tun,), tuple(prods), shifts, tuple(orders), table(rows))


def brute_force_most_kg(inp: PlanInputs, max_mix: int) -> float | None:
    """Best kg over every integer batch combination; None when none is feasible."""
    cand = candidates(inp, 0.15, max_mix)
    loads = list(cand.singles) + (list(cand.mixed_pool) if max_mix > 1 else [])
    oven = inp.ovens[0]
    tun = inp.tunnels[0]
    shifts = [s.name for s in inp.shifts]
    routes = {(r.product, r.oven_setting): r.rate_kg_per_min for r in cand.routes}
    residence = {
        (r.product, r.oven_setting): tun.length_m / r.belt_speed_m_per_min for r in cand.routes
    }
    keys = sorted(routes)
    run_res = {p: min(v for (q, _), v in residence.items() if q == p) for p, _ in keys}
    fill = min(oven.load_unload_min + cand.cook[(p, oven.name, os_)].cook_min for p, os_ in keys)

    def shift_options(minutes: float):
        out = []
        max_n = [int(minutes // ld.cycle_min) for ld in loads]
        for counts in itertools.product(*[range(m + 1) for m in max_n]):
            settings = {ld.setting for ld, c in zip(loads, counts, strict=True) if c}
            used = sum(ld.cycle_min * c for ld, c in zip(loads, counts, strict=True))
            used += oven.changeover_min * max(0, len(settings) - 1)
            if used > minutes + 1e-9:
                continue
            # A batch more at a setting already running never hurts (it may run
            # under-filled): keep only combinations where none fits.
            if any(
                ld.setting in settings and used + ld.cycle_min <= minutes + 1e-9 for ld in loads
            ):
                continue
            out.append(counts)
        return out

    quickest = min(residence.values())
    per_shift = [
        shift_options(min(s.available(oven.name), s.minutes - quickest)) for s in inp.shifts
    ]
    # LP in x[key, shift] >= 0, maximise sum x.
    nv = len(keys) * len(shifts)

    def idx(k, s):
        return s * len(keys) + k

    caps: dict[str, float] = {}
    for o in inp.orders:
        caps[o.product] = caps.get(o.product, 0.0) + o.max_kg
    minimums = []
    running_min: dict[str, float] = {}
    for o in sorted(inp.orders, key=lambda o: inp.shift_index(o.due_shift)):
        running_min[o.product] = running_min.get(o.product, 0.0) + o.min_kg
        minimums.append((o.product, inp.shift_index(o.due_shift), running_min[o.product]))
    best = None
    slowest_runs = list(itertools.product(sorted(set(run_res.values())), repeat=len(shifts)))
    for combo, slowest in itertools.product(itertools.product(*per_shift), slowest_runs):
        supply = {
            (k, s): sum(
                ld.kg_of(p) * c for ld, c in zip(loads, counts, strict=True) if ld.setting == os_
            )
            for s, counts in enumerate(combo)
            for k, (p, os_) in enumerate(keys)
        }
        # Cheap valid bound (no tunnel, no minimums): skip combinations that cannot win.
        made = {p: 0.0 for p, _ in keys}
        for (k, _s), kg in supply.items():
            made[keys[k][0]] += kg
        if best is not None and sum(min(m, caps[p]) for p, m in made.items()) <= best:
            continue
        # Minimums need the oven kg by their due shift (tunnel ignored): a valid filter.
        if any(
            sum(kg for (k, s), kg in supply.items() if keys[k][0] == p and s <= due) < need - 1e-9
            for p, due, need in minimums
        ):
            continue
        a_ub, b_ub = [], []
        for s in range(len(combo)):
            span = inp.shifts[s].available(tun.name) - fill
            for k, key in enumerate(keys):
                row = np.zeros(nv)
                row[idx(k, s)] = 1.0
                a_ub.append(row)
                # no run slower than the shift's slowest; each route drains alone
                runs = run_res[key[0]] <= slowest[s] + 1e-9
                b_ub.append(min(supply[(k, s)], routes[key] * (span - residence[key])) * runs)
            row = np.zeros(nv)
            for k, key in enumerate(keys):
                row[idx(k, s)] = 1.0 / routes[key]
            a_ub.append(row)
            b_ub.append(span - slowest[s])
        running: dict[str, float] = {}
        for o in sorted(inp.orders, key=lambda o: inp.shift_index(o.due_shift)):
            due = inp.shift_index(o.due_shift)
            running[o.product] = running.get(o.product, 0.0) + o.min_kg
            row = np.zeros(nv)
            for s in range(due + 1):
                for k, (p, _) in enumerate(keys):
                    if p == o.product:
                        row[idx(k, s)] = -1.0
            a_ub.append(row)
            b_ub.append(-running[o.product])
            if np.isfinite(o.max_kg):
                row = np.zeros(nv)
                for s in range(len(shifts)):
                    for k, (p, _) in enumerate(keys):
                        if p == o.product:
                            row[idx(k, s)] = 1.0
                a_ub.append(row)
                b_ub.append(o.max_kg)
        res = linprog(-np.ones(nv), A_ub=np.array(a_ub), b_ub=np.array(b_ub), method="highs")
        if res.status == 0 and (best is None or -res.fun > best):
            best = -res.fun
    return best


@pytest.mark.parametrize("seed", [1, 2, 4, 5, 6, 7, 8])
@pytest.mark.parametrize("max_mix", [1, 2])
def test_milp_matches_brute_force(seed, max_mix):
    inp = random_plant(seed)
    best = brute_force_most_kg(inp, max_mix)
    r = plan(
        inp,
        SolveOptions(max_mix_products=max_mix, shadow_prices=False, diagnose=False, gap_rel=GAP),
    )
    if best is None:
        assert r.status is SolveStatus.INFEASIBLE
    else:
        assert r.status is SolveStatus.OPTIMAL
        assert r.objective_value == pytest.approx(best, rel=2 * GAP, abs=2e-3)


@pytest.mark.parametrize("seed", [11, 12, 13])
@pytest.mark.parametrize("objective", [Objective.MOST_KG, Objective.MOST_VALUE, Objective.SOONEST])
def test_scipy_milp_agrees_on_the_exported_model(seed, objective):
    base = random_plant(seed, shift_minutes=240.0, n_shifts=3, trays=4)
    inp = PlanInputs(
        base.ovens, base.tunnels, base.products, base.shifts, base.orders, base.dwell, objective
    )
    cand = candidates(inp, 0.15, 2)
    model = build_model(inp, cand, cand.mixed_pool)
    mat = to_matrices(model)
    res = milp(
        mat.c,
        constraints=LinearConstraint(mat.a, mat.row_lb, mat.row_ub),
        integrality=mat.integrality,
        bounds=Bounds(mat.lb, mat.ub),
        options={"mip_rel_gap": GAP},
    )
    r = plan(inp, SolveOptions(shadow_prices=False, diagnose=False, gap_rel=GAP))
    if res.status == 2:  # infeasible
        assert r.status is SolveStatus.INFEASIBLE
        return
    assert res.status == 0
    assert r.status is SolveStatus.OPTIMAL
    # milp minimises c @ v + c0, with the tie-break (<= 1e-3 objective units) inside.
    raw = res.fun + mat.c0
    natural = -raw if objective in (Objective.MOST_KG, Objective.MOST_VALUE) else raw
    assert r.objective_value == pytest.approx(natural, rel=2 * GAP, abs=2e-3)


@pytest.mark.parametrize("seed", [21, 22])
@pytest.mark.parametrize("objective", list(Objective))
def test_highs_and_cbc_agree(seed, objective):
    base = random_plant(seed, shift_minutes=240.0, n_shifts=3, trays=4)
    inp = PlanInputs(
        base.ovens,
        base.tunnels,
        base.products,
        base.shifts,
        base.orders,
        base.dwell,
        objective,
        60.0 if objective is Objective.LEAST_ENERGY else None,
    )
    opts = dict(shadow_prices=False, diagnose=False, gap_rel=GAP)
    h = plan(inp, SolveOptions(solver="highs", **opts))
    c = plan(inp, SolveOptions(solver="cbc", **opts))
    assert h.status is c.status
    if h.status.has_plan:
        assert h.objective_value == pytest.approx(c.objective_value, rel=2 * GAP, abs=2e-3)
