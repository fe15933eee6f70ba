"""Solve the shift plan: HiGHS in-process first, CBC as fallback.

:func:`plan` is the entry point: candidates from the dwell table, mixed loads
(enumerated or by column generation), the MILP, then - with a plan - the
shadow prices of machine time, or - without one - the elastic re-solve that
names the smallest shortfalls.

Only this module and :mod:`optimizer.model` import PuLP.

Status is read from ``prob.status`` and ``prob.sol_status``: a time limit
with an incumbent shows as ``LpStatusOptimal`` with ``sol_status ==
LpSolutionIntegerFeasible``, which is reported as ``FEASIBLE_WITH_GAP``.
"""

from __future__ import annotations

import math
import time
import warnings
from collections import defaultdict

import highspy
import pulp

from optimizer.inputs import Objective, PlanInputs, SolveOptions
from optimizer.loads import Candidates, candidates, price_mixed_loads
from optimizer.model import PlanModel, build_model
from optimizer.results import (
    OBJECTIVE_UNITS,
    BatchContent,
    ConstraintSlack,
    MachineUse,
    PlannedBatch,
    PlanResult,
    ShadowPrice,
    Shortfall,
    SolveStatus,
    TunnelRun,
)

MAX_PRICING_ROUNDS = 12
"""Most column-generation rounds [-]."""

LOADS_PER_ROUND = 4
"""Most mixed loads added per (oven, setting) and round [-]."""


class _HighsWithStart(pulp.HiGHS):
    """In-process HiGHS that hands the current variable values over as a start."""

    def __init__(self, *args, start: bool = False, **kwargs):
        super().__init__(*args, **kwargs)
        self.start = start

    def callSolver(self, lp):  # PuLP hook name
        if self.start:
            values = [0.0] * lp.solverModel.getNumCol()
            for v in lp.variables():
                values[v.index] = float(v.varValue or 0.0)
            sol = highspy.HighsSolution()
            sol.col_value = values
            sol.value_valid = True
            lp.solverModel.setSolution(sol)
        lp.solverModel.run()


def _solver(
    name: str,
    options: SolveOptions,
    *,
    mip: bool = True,
    time_limit: float | None = None,
    start: bool = False,
):
    limit = options.time_limit_s if time_limit is None else time_limit
    if name == "highs":
        return _HighsWithStart(
            mip=mip,
            msg=options.msg,
            timeLimit=limit,
            gapRel=options.gap_rel,
            threads=options.threads,
            random_seed=0,
            start=start,
        )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        return pulp.PULP_CBC_CMD(
            mip=mip,
            msg=options.msg,
            timeLimit=limit,
            gapRel=options.gap_rel,
            threads=1,
            warmStart=start,
        )


def _run(
    prob: pulp.LpProblem,
    name: str,
    options: SolveOptions,
    *,
    mip: bool = True,
    time_limit: float | None = None,
    start: bool = False,
):
    """Solve ``prob``; return (status, gap, bound (min form), seconds, message)."""
    t0 = time.perf_counter()
    limit = options.time_limit_s if time_limit is None else time_limit
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DeprecationWarning)
            prob.solve(_solver(name, options, mip=mip, time_limit=limit, start=start))
    except Exception as exc:  # solver crash: report, let the caller fall back
        return SolveStatus.ERROR, None, None, time.perf_counter() - t0, f"{name}: {exc}"
    dt = time.perf_counter() - t0
    st, sol = prob.status, prob.sol_status
    gap = bound = None
    if st == pulp.LpStatusOptimal and sol == pulp.LpSolutionOptimal:
        status = SolveStatus.OPTIMAL
    elif st == pulp.LpStatusOptimal and sol == pulp.LpSolutionIntegerFeasible:
        status = SolveStatus.FEASIBLE_WITH_GAP
    elif st == pulp.LpStatusInfeasible:
        status = SolveStatus.INFEASIBLE
    elif st == pulp.LpStatusUnbounded:
        status = SolveStatus.UNBOUNDED
    elif dt >= 0.9 * limit:
        status = SolveStatus.NO_SOLUTION_IN_TIME
    else:
        status = SolveStatus.ERROR
    if name == "highs" and status.has_plan and prob.isMIP() and mip:
        info = prob.solverModel.getInfo()
        gap = float(info.mip_gap) if math.isfinite(info.mip_gap) else None
        bound = float(info.mip_dual_bound) if math.isfinite(info.mip_dual_bound) else None
    elif status is SolveStatus.OPTIMAL:
        gap = 0.0
    return status, gap, bound, dt, ""


def _set_relaxed(model: PlanModel, relaxed: bool) -> None:
    for v in model.integer_vars:
        v.cat = pulp.LpContinuous if relaxed else pulp.LpInteger


def _generate_columns(
    model: PlanModel, inputs: PlanInputs, cand: Candidates, options: SolveOptions, solver: str
) -> tuple[int, list[str]]:
    """Column generation for mixed loads on the LP relaxation; returns (rounds, notes)."""
    notes = []
    rounds = 0
    for _ in range(MAX_PRICING_ROUNDS):
        _set_relaxed(model, True)
        status, *_ = _run(model.prob, solver, options, mip=False)
        if status is not SolveStatus.OPTIMAL:
            notes.append(f"column generation stopped: LP relaxation {status.value}")
            break
        rounds += 1
        kg_value = {k: float(r.pi or 0.0) for k, r in model.rows["flow"].items()}
        minute_cost: dict[tuple[str, str, str], float] = {}
        time_pi = {k: float(r.pi or 0.0) for k, r in model.rows["oven_time"].items()}
        link_pi = {k: float(r.pi or 0.0) for k, r in model.rows["oven_link"].items()}
        for c in cand.cook.values():
            for s in inputs.shifts:
                key = (c.oven, c.setting, s.name)
                minute_cost[key] = (
                    -(time_pi.get((c.oven, s.name), 0.0) + link_pi.get(key, 0.0))
                    + model.tie_per_min
                )
        priced = price_mixed_loads(
            inputs,
            cand.cook,
            options.mix_tolerance,
            kg_value,
            minute_cost,
            limit_per_oven_setting=LOADS_PER_ROUND,
        )
        added = sum(model.add_load(load) for _, load in priced)
        if added == 0:
            break
    _set_relaxed(model, False)
    return rounds, notes


def _extract(model: PlanModel):
    inputs = model.inputs
    shifts = [s.name for s in inputs.shifts]
    batches = []
    w_by_load: dict[tuple[str, str], dict[str, float]] = defaultdict(dict)
    for (lk, p, s), v in model.w.items():
        w_by_load[(lk, s)][p] = max(0.0, v.value() or 0.0)
    for (lk, s), v in model.n.items():
        count = round(v.value() or 0.0)
        if count < 1:
            continue
        load = model.loads[lk]
        contents = tuple(
            BatchContent(p, n, load.kg_of(p), w_by_load[(lk, s)].get(p, 0.0)) for p, n in load.trays
        )
        batches.append(
            PlannedBatch(
                load.oven,
                s,
                load.setting,
                lk,
                load.description,
                count,
                load.cook_min,
                load.cycle_min,
                contents,
            )
        )
    order = {s: i for i, s in enumerate(shifts)}
    batches.sort(key=lambda b: (b.oven, order[b.shift], b.load))
    runs = []
    for (rk, s), v in model.x.items():
        kg = v.value() or 0.0
        if kg <= 1e-6:
            continue
        r = model.routes[rk]
        runs.append(
            TunnelRun(
                r.tunnel,
                s,
                r.product,
                r.oven,
                r.oven_setting,
                r.tunnel_setting,
                r.loading,
                r.belt_speed_m_per_min,
                r.rate_kg_per_min,
                kg,
                r.chill_min,
            )
        )
    runs.sort(key=lambda r: (r.tunnel, order[r.shift], r.product, r.oven, r.oven_setting))
    use = []
    for oven in inputs.ovens:
        for s in shifts:
            mine = [b for b in batches if b.oven == oven.name and b.shift == s]
            nset = len({b.setting for b in mine})
            co = oven.changeover_min * max(0, nset - 1)
            used = sum(b.minutes for b in mine) + co
            use.append(MachineUse(oven.name, "oven", s, used, co, model.available(oven.name, s)))
    for tun in inputs.tunnels:
        for s in shifts:
            mine = [r for r in runs if r.tunnel == tun.name and r.shift == s]
            nrun = len({(r.product, r.tunnel_setting) for r in mine})
            co = tun.changeover_min * max(0, nrun - 1)
            used = sum(r.minutes for r in mine) + co
            use.append(MachineUse(tun.name, "tunnel", s, used, co, model.available(tun.name, s)))
    return tuple(batches), tuple(runs), tuple(use)


_SLACK_UNITS = {
    "oven_time": "min",
    "tunnel_time": "min",
    "demand_min": "kg",
    "demand_max": "kg",
    "output": "kg",
}


def _slacks(model: PlanModel) -> tuple[ConstraintSlack, ...]:
    out = []
    for group, unit in _SLACK_UNITS.items():
        rows = model.rows.get(group, {})
        if not rows:
            continue
        values = []
        binding = 0
        for r in rows.values():
            val = r.value() or 0.0
            slack = -val if r.sense == pulp.LpConstraintLE else val
            slack = max(0.0, slack)
            values.append(slack)
            if slack <= 1e-6 * max(1.0, abs(r.constant)):
                binding += 1
        out.append(ConstraintSlack(group, len(values), binding, sum(values), min(values), unit))
    return tuple(out)


def _shadow_prices(
    model: PlanModel, options: SolveOptions, solver: str
) -> tuple[tuple[ShadowPrice, ...], str]:
    """Duals of machine time from the LP with the on/off choices fixed.

    With every integer fixed, oven minutes are constants and an extra oven
    hour could never be worth anything; so only the binaries (setting, run and
    completion choices) are fixed at the plan and batch counts are made
    continuous. The model is a minimisation, so ``pi = d(obj)/d(minutes)``
    and the improvement per extra hour is ``-60 * pi``.
    """
    saved = [(v, v.lowBound, v.upBound) for v in model.binary_vars]
    for v, _, _ in saved:
        val = round(v.value() or 0.0)
        v.lowBound = v.upBound = val
    # Upper bounds on batches and tunnel kg are implied by the time rows; drop
    # them so the time rows, not the bounds, carry the duals.
    implied = [(v, v.lowBound, v.upBound) for v in [*model.n.values(), *model.x.values()]]
    for v, _, _ in implied:
        v.upBound = None
    saved.extend(implied)
    _set_relaxed(model, True)
    try:
        status, *_ = _run(model.prob, solver, options, mip=False)
        if status is not SolveStatus.OPTIMAL:
            return (), f"shadow prices not available: fixed LP {status.value}"
        out = []
        for kind, group in (("oven", "oven_time"), ("tunnel", "tunnel_time")):
            for (mc, s), r in model.rows[group].items():
                out.append(ShadowPrice(mc, kind, s, -60.0 * float(r.pi or 0.0) + 0.0))
        return tuple(out), ""
    finally:
        _set_relaxed(model, False)
        for v, lo, hi in saved:
            v.lowBound, v.upBound = lo, hi


def _diagnose(
    inputs: PlanInputs, cand: Candidates, mixed, options: SolveOptions, solver: str
) -> tuple[tuple[Shortfall, ...], str]:
    """Elastic re-solve: the smallest shortfalls that make the orders fit."""
    em = build_model(inputs, cand, mixed, elastic=True)
    status, *_ = _run(em.prob, solver, options)
    if not status.has_plan:
        return (), f"elastic re-solve: {status.value}"
    shifts = [s.name for s in inputs.shifts]
    items = []
    for key, v in em.short.items():
        amount = v.value() or 0.0
        if amount <= 1e-6:
            continue
        if key == "output":
            ref = inputs.fixed_output_kg or 1.0
            msg = f"fixed output: {amount:,.0f} kg short of {ref:,.0f} kg"
            items.append(
                (amount / ref, Shortfall("output", "fixed output", shifts[-1], amount, "kg", msg))
            )
            continue
        g = em.groups[key]
        labels = ", ".join(g.orders)
        shift = shifts[g.due]
        msg = f"order for {labels}: {amount:,.0f} kg short by {shift}"
        why = cand.excluded.get(g.product)
        if why and not any(r.product == g.product for r in cand.routes):
            msg += f" (cannot be made on this plant: {'; '.join(why)})"
        items.append((amount / g.cum_min_kg, Shortfall("order", labels, shift, amount, "kg", msg)))
    for (mc, s), v in em.extra.items():
        amount = v.value() or 0.0
        if amount <= 1e-4:
            continue
        msg = f"{mc} needs {amount:,.0f} more minutes in {s}"
        ref = max(em.available(mc, s), 1.0)
        items.append((amount / ref, Shortfall("machine", mc, s, amount, "min", msg)))
    items.sort(key=lambda t: (t[0], t[1].message))
    return tuple(s for _, s in items), ""


SINGLES_STAGE_SHARE = 0.3
"""Share of the time limit the singles-only first stage may use [-]."""


def _staged_solve(model: PlanModel, solver: str, options: SolveOptions):
    """Solve with single-product loads first, then all loads from that start.

    Mixed loads add many near-equal alternatives; the singles-only plan is
    found fast and hands the full MILP a good incumbent.
    """
    mixed_n = [v for (lk, _s), v in model.n.items() if model.loads[lk].is_mixed]
    if not mixed_n:
        return _run(model.prob, solver, options)
    saved = [(v, v.upBound) for v in mixed_n]
    for v in mixed_n:
        v.upBound = 0
    limit1 = SINGLES_STAGE_SHARE * options.time_limit_s
    st1, _g, _b, dt1, _m = _run(model.prob, solver, options, time_limit=limit1)
    for v, ub in saved:
        v.upBound = ub
    rest = max(options.time_limit_s - dt1, 0.1 * options.time_limit_s)
    status, gap, bound, dt2, msg = _run(
        model.prob, solver, options, time_limit=rest, start=st1.has_plan
    )
    return status, gap, bound, dt1 + dt2, msg


def plan(inputs: PlanInputs, options: SolveOptions | None = None) -> PlanResult:
    """Plan the shifts: the MILP from the dwell table, solved, with diagnostics.

    Parameters
    ----------
    inputs : PlanInputs
        Plant, products, shifts, orders, dwell table and objective.
    options : SolveOptions, optional
        Solver, time limit [s], gap [-], mixing and diagnostics options.

    Returns
    -------
    PlanResult
        Status, objective, plan (batches and tunnel runs), machine use,
        shadow prices, slack and - when nothing fits - the shortfalls.
    """
    options = options or SolveOptions()
    t0 = time.perf_counter()
    cand = candidates(inputs, options.mix_tolerance, options.max_mix_products)
    use_cg = (
        options.column_generation
        if options.column_generation is not None
        else len(cand.mixed_pool) > options.max_enumerated_loads
    )
    use_cg = bool(use_cg) and options.max_mix_products >= 2
    notes: list[str] = []
    first = options.solver
    other = "cbc" if first == "highs" else "highs"
    model = build_model(inputs, cand, [] if use_cg else cand.mixed_pool)
    build_s = time.perf_counter() - t0
    pricing_rounds = 0
    solve_s = 0.0
    if use_cg:
        tc = time.perf_counter()
        pricing_rounds, cg_notes = _generate_columns(model, inputs, cand, options, first)
        notes.extend(cg_notes)
        solve_s += time.perf_counter() - tc
    mixed = [ld for ld in model.loads.values() if ld.is_mixed]

    status, gap, bound, dt, msg = _staged_solve(model, first, options)
    solve_s += dt
    used = first
    if status in (SolveStatus.ERROR, SolveStatus.UNBOUNDED) and options.fallback:
        notes.append(f"{first} gave {status.value}{': ' + msg if msg else ''}; tried {other}")
        status, gap, bound, dt, msg = _run(model.prob, other, options)
        solve_s += dt
        used = other
    if msg:
        notes.append(msg)

    unit = OBJECTIVE_UNITS[inputs.objective]
    maximise = inputs.objective in (Objective.MOST_KG, Objective.MOST_VALUE)
    common = dict(
        objective=inputs.objective,
        objective_unit=unit,
        solver=used,
        shifts=tuple(s.name for s in inputs.shifts),
        excluded=dict(cand.excluded),
        mixed_loads=len(mixed),
        column_generation_rounds=pricing_rounds,
    )
    if status.has_plan:
        batches, runs, use = _extract(model)
        value = model.primary_value()
        slacks = _slacks(model)
        if bound is not None:
            bound = -bound if maximise else bound
        prices: tuple[ShadowPrice, ...] = ()
        if options.shadow_prices:
            ts = time.perf_counter()
            prices, note = _shadow_prices(model, options, used)
            solve_s += time.perf_counter() - ts
            if note:
                notes.append(note)
        return PlanResult(
            status=status,
            objective_value=value,
            best_bound=bound,
            gap=gap,
            build_seconds=build_s,
            solve_seconds=solve_s,
            total_kg=sum(r.kg for r in runs),
            batches=batches,
            runs=runs,
            machine_use=use,
            shadow_prices=prices,
            slacks=slacks,
            messages=tuple(notes),
            **common,
        )
    shortfalls: tuple[Shortfall, ...] = ()
    if status is SolveStatus.INFEASIBLE and options.diagnose:
        ts = time.perf_counter()
        shortfalls, note = _diagnose(inputs, cand, mixed, options, used)
        solve_s += time.perf_counter() - ts
        if note:
            notes.append(note)
    return PlanResult(
        status=status,
        objective_value=None,
        best_bound=None,
        gap=None,
        build_seconds=build_s,
        solve_seconds=solve_s,
        total_kg=0.0,
        shortfalls=shortfalls,
        messages=tuple(notes),
        **common,
    )
