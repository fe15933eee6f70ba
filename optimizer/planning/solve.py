"""Solve the shift plan: HiGHS in-process first, CBC as fallback.

:func:`plan` is the entry point: candidates from the dwell table, mixed loads
(enumerated or by column generation), the MILP, then - with a plan - the
shadow prices of machine time, or - without one - the elastic re-solve that
names the smallest shortfalls.

Compact formulation (default): the MILP is started from a plan built shift
by shift (relax-and-fix; failing that, the plan of a smaller MILP on the
support of the LP relaxation, every integer variable the LP leaves at zero
held there), then solved whole; its bound is the one reported. When the
time limit stops it with a gap, the plan is improved a few shifts at a time
with the rest held (HiGHS; see :func:`_improve_by_shift_windows`), and a
plan of single-product loads alone is kept if it is better; the gap is then
recomputed against the full MILP's bound. Batches, oven settings and tunnel
runs that carry nothing are dropped from the plan (:func:`_drop_idle`).

Pattern formulation (``SolveOptions.formulation = "patterns"``): oven-shift
patterns are generated on the LP (duals of the flow rows give the value of
each kg an oven setting unloads; the best pattern of each oven and shift is
an exact knapsack over whole minutes, see
:func:`optimizer.planning.loads.best_shift_pattern`), then the MILP picks one pattern
per oven and shift from those generated. The bound reported is the pattern
LP's at convergence, so the gap is honest; the MILP over generated columns
is a heuristic and on the benchmark plants it did worse than the compact
formulation. If the generated patterns cannot meet the order minimums the
compact formulation is solved instead.

Only this module and :mod:`optimizer.planning.model` import PuLP.

Status is read from ``prob.status`` and ``prob.sol_status``: a time limit
with an incumbent shows as ``LpStatusOptimal`` with ``sol_status ==
LpSolutionIntegerFeasible``, which is reported as ``FEASIBLE_WITH_GAP``.
"""

from __future__ import annotations

import dataclasses
import math
import time
import warnings
from collections import defaultdict

import highspy
import numpy as np
import pulp

from optimizer.planning.inputs import Objective, PlanInputs, SolveOptions
from optimizer.planning.loads import (
    Candidates,
    ShiftPattern,
    best_shift_pattern,
    candidates,
    make_pattern,
    price_mixed_loads,
)
from optimizer.planning.model import PlanModel, build_model, time_caps
from optimizer.planning.results import (
    ELASTIC_STOPPED,
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


SEARCH_FROM_START = {
    "mip_heuristic_run_rins": False,
    "mip_heuristic_run_rens": False,
    "mip_heuristic_run_root_reduced_cost": False,
}
"""HiGHS options for a MILP started from a relax-and-fix plan: no sub-MIP heuristics.

On the demo and four variants of it (order sizes, shift lengths, objective)
that plan was within 0.4 % of the final plan (on the demo, the optimum
itself), and the sub-MIPs spent most of the time re-finding it (demo: 1.7
of 3.0 s). A start from the LP-support stage is rougher (medium benchmark
plant: 5.7 % below the final plan) and keeps them: they improve it."""


_STOPPED = {
    highspy.HighsModelStatus.kTimeLimit,
    highspy.HighsModelStatus.kIterationLimit,
    highspy.HighsModelStatus.kSolutionLimit,
    highspy.HighsModelStatus.kInterrupt,
    highspy.HighsModelStatus.kObjectiveBound,
    highspy.HighsModelStatus.kObjectiveTarget,
}
"""HiGHS stops short of a proof: a plan when it has a feasible one."""


def _structure(lp: pulp.LpProblem):
    """Variables, constraints and the row-wise matrix of ``lp``, kept between solves.

    Rebuilt only when the rows, their nonzeros or the objective's terms
    changed in number: the planner changes bounds, integrality and costs
    between solves and adds a column only with a new variable in rows.
    """
    cons = list(lp._constraints.values())
    key = (len(cons), sum(len(c) for c in cons), len(lp.objective))
    cached = getattr(lp, "_corepace_structure", None)
    if cached is not None and cached[0] == key:
        return cached[1], cons, cached[2]
    variables = lp.variables()
    for i, v in enumerate(variables):
        v.index = i
    start, index, value = [0], [], []
    for c in cons:
        for v, coef in c.items():
            if coef != 0:
                index.append(v.index)
                value.append(coef)
        start.append(len(index))
    matrix = (
        np.asarray(start, dtype=np.int32),
        np.asarray(index, dtype=np.int32),
        np.asarray(value, dtype=float),
    )
    lp._corepace_structure = (key, variables, matrix)
    return variables, cons, matrix


def _has_integers(lp: pulp.LpProblem) -> bool:
    """Whether ``lp`` has an integer variable (PuLP's ``isMIP`` without its walk)."""
    return any(v.cat == pulp.LpInteger for v in _structure(lp)[0])


class _HighsWithStart(pulp.HiGHS):
    """In-process HiGHS through PuLP's hooks, the model passed as arrays.

    PuLP's own HiGHS interface adds columns and rows one call at a time and
    walks every constraint to collect the variables four times per solve:
    on the large benchmark plant (80 000 columns, 45 000 rows) about 4 s per
    solve against 6 s in HiGHS. Here the variables and the matrix are kept
    on the problem while its structure is unchanged (:func:`_structure`)
    and the model goes to HiGHS in one ``passModel`` call. With ``start``
    the current variable values are handed over as a starting plan.
    """

    def __init__(self, *args, start: bool = False, **kwargs):
        super().__init__(*args, **kwargs)
        self.start = start

    def actualSolve(self, lp):  # PuLP hook name
        self.createAndConfigureSolver(lp)
        variables, cons, (start, index, value) = _structure(lp)
        sign = -1.0 if lp.sense == pulp.LpMaximize else 1.0
        inf = highspy.kHighsInf
        model = highspy.HighsLp()
        model.num_col_ = len(variables)
        model.num_row_ = len(cons)
        model.col_cost_ = np.array([sign * lp.objective.get(v, 0.0) for v in variables])
        model.col_lower_ = np.array([-inf if v.lowBound is None else v.lowBound for v in variables])
        model.col_upper_ = np.array([inf if v.upBound is None else v.upBound for v in variables])
        lower = [c.getLb() for c in cons]
        upper = [c.getUb() for c in cons]
        model.row_lower_ = np.array([-inf if b is None else b for b in lower], dtype=float)
        model.row_upper_ = np.array([inf if b is None else b for b in upper], dtype=float)
        model.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
        model.a_matrix_.start_ = start
        model.a_matrix_.index_ = index
        model.a_matrix_.value_ = value
        if self.mip and any(v.cat == pulp.LpInteger for v in variables):
            model.integrality_ = [
                highspy.HighsVarType.kInteger
                if v.cat == pulp.LpInteger
                else highspy.HighsVarType.kContinuous
                for v in variables
            ]
        lp.solverModel.passModel(model)
        if self.start:
            sol = highspy.HighsSolution()
            sol.col_value = [float(v.varValue or 0.0) for v in variables]
            sol.value_valid = True
            lp.solverModel.setSolution(sol)
        lp.solverModel.run()
        status, sol_status = self._read(lp, variables, cons)
        lp.assignStatus(status, sol_status)
        return status

    @staticmethod
    def _read(lp, variables, cons):
        hs = lp.solverModel
        status = hs.getModelStatus()
        solution = hs.getSolution()
        values, duals = solution.col_value, solution.col_dual
        if len(values) != len(variables):  # no solution at all: no stale values either
            values = [None] * len(variables)
        if len(duals) != len(variables):
            duals = [None] * len(variables)
        for v, x, d in zip(variables, values, duals, strict=True):
            v.varValue = x
            v.dj = d
        for c, r, pi in zip(cons, solution.row_value, solution.row_dual, strict=False):
            # PuLP's slack convention: constant on the left-hand side, LE rows flipped
            c.slack = c.constant + r
            if c.sense == pulp.LpConstraintLE:
                c.slack *= -1.0
            c.pi = pi
        ms = highspy.HighsModelStatus
        if status == ms.kOptimal:
            return pulp.LpStatusOptimal, pulp.LpSolutionOptimal
        if status in (ms.kInfeasible, ms.kUnboundedOrInfeasible):
            return pulp.LpStatusInfeasible, pulp.LpSolutionInfeasible
        if status == ms.kUnbounded:
            return pulp.LpStatusUnbounded, pulp.LpSolutionUnbounded
        if status in _STOPPED and hs.getInfo().primal_solution_status == 2:  # feasible
            return pulp.LpStatusOptimal, pulp.LpSolutionIntegerFeasible
        return pulp.LpStatusNotSolved, pulp.LpSolutionNoSolutionFound


def _solver(
    name: str,
    options: SolveOptions,
    *,
    mip: bool = True,
    time_limit: float | None = None,
    start: bool = False,
    max_nodes: int | None = None,
    sub_mips: bool = True,
    presolve: bool = True,
):
    limit = options.time_limit_s if time_limit is None else time_limit
    if name == "highs":
        extra = {} if max_nodes is None else {"mip_max_nodes": int(max_nodes)}
        if not sub_mips:
            extra.update(SEARCH_FROM_START)
        if not presolve:
            extra["presolve"] = "off"
        return _HighsWithStart(
            mip=mip,
            msg=options.msg,
            timeLimit=limit,
            gapRel=options.gap_rel,
            threads=options.threads,
            random_seed=0,
            start=start,
            **extra,
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
            options=[] if max_nodes is None else [f"maxNodes {int(max_nodes)}"],
        )


def _run(
    prob: pulp.LpProblem,
    name: str,
    options: SolveOptions,
    *,
    mip: bool = True,
    time_limit: float | None = None,
    start: bool = False,
    max_nodes: int | None = None,
    sub_mips: bool = True,
    presolve: bool = True,
):
    """Solve ``prob``; return (status, gap, bound (min form), seconds, message).

    ``sub_mips=False`` turns HiGHS's sub-MIP heuristics off
    (:data:`SEARCH_FROM_START`); ``presolve=False`` its presolve.
    """
    t0 = time.perf_counter()
    limit = options.time_limit_s if time_limit is None else time_limit
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DeprecationWarning)
            prob.solve(
                _solver(
                    name,
                    options,
                    mip=mip,
                    time_limit=limit,
                    start=start,
                    max_nodes=max_nodes,
                    sub_mips=sub_mips,
                    presolve=presolve,
                )
            )
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
    if name == "highs" and status.has_plan and mip and _has_integers(prob):
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
) -> tuple[int, list[str], bool]:
    """Column generation for mixed loads on the LP relaxation.

    Returns (rounds, notes, whether the variable values are the optimum of
    the LP relaxation of the model as it now stands).
    """
    notes = []
    rounds = 0
    converged = False
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
            routes=cand.routes,
        )
        added = sum(model.add_load(load) for _, load in priced)
        if added == 0:
            converged = True
            break
    _set_relaxed(model, False)
    return rounds, notes, converged


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


def _slacks(model: PlanModel, use: tuple[MachineUse, ...]) -> tuple[ConstraintSlack, ...]:
    out = []
    for group, unit in _SLACK_UNITS.items():
        rows = model.rows.get(group, {})
        if group == "oven_time" and model.pattern_mode:
            free = [max(0.0, u.available_min - u.used_min) for u in use if u.kind == "oven"]
            if free:
                binding = sum(1 for x in free if x <= 1e-6)
                out.append(ConstraintSlack(group, len(free), binding, sum(free), min(free), unit))
            continue
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
        # Without presolve: on the large benchmark plant HiGHS's clean-up solve of
        # the original LP after presolve failed (status not set) in most runs,
        # and without presolve the LP solved in about 4 s.
        status, *_ = _run(model.prob, solver, options, mip=False, presolve=False)
        if status is not SolveStatus.OPTIMAL:
            return (), f"shadow prices not available: fixed LP {status.value}"
        # A tunnel minute is on its time row and on the link of each run fed (whose
        # big-M is the span less the residence): with the binaries held, both move.
        drain_pi: dict[tuple[str, str], float] = defaultdict(float)
        for (t, _p, _ts, s), r in model.rows["tunnel_link"].items():
            drain_pi[(t, s)] += float(r.pi or 0.0)
        out = []
        for kind, group in (("oven", "oven_time"), ("tunnel", "tunnel_time")):
            for (mc, s), r in model.rows[group].items():
                pi = float(r.pi or 0.0) + drain_pi.get((mc, s), 0.0)
                out.append(ShadowPrice(mc, kind, s, -60.0 * pi + 0.0))
        return tuple(out), ""
    finally:
        _set_relaxed(model, False)
        for v, lo, hi in saved:
            v.lowBound, v.upBound = lo, hi


def _value(v: pulp.LpVariable | None) -> float:
    """A variable's value, 0 for a variable the model does not have."""
    return 0.0 if v is None else float(v.varValue or 0.0)


def _drop_idle(model: PlanModel) -> int:
    """Drop batches, oven settings and tunnel runs that carry nothing.

    A plan proven within the gap may keep batches no kg is loaded into (a
    start held them and the tie-break that prefers fewer machine minutes is
    far below the gap). Each load keeps the fewest batches its kg need, an
    oven setting with no batch is switched off and a tunnel run with no kg
    too. Every change only frees machine time, so the plan stays feasible
    and the objective is unchanged (the tie-break only improves).

    Returns the number of values changed.
    """
    changed = 0
    used: set[tuple[str, str, str]] = set()
    for (lk, s), nv in model.n.items():
        batches = round(nv.varValue or 0.0)
        if batches <= 0:
            continue
        load = model.loads[lk]
        need = max(
            math.ceil((_value(model.w.get((lk, p, s))) or 0.0) / kg - 1e-6) for p, kg in load.kg
        )
        if need < batches:
            nv.varValue = float(need)
            changed += 1
        if need > 0:
            used.add((load.oven, load.setting, s))
    for key, zv in model.z.items():
        if (zv.varValue or 0.0) > 0.5 and key not in used:
            zv.varValue = 0.0
            changed += 1
    run_kg: dict[tuple[str, str, str, str], float] = defaultdict(float)
    for (rk, s), xv in model.x.items():
        run_kg[(*model.routes[rk].run, s)] += xv.varValue or 0.0
    for key, yv in model.y.items():
        if (yv.varValue or 0.0) > 0.5 and run_kg[key] <= 1e-9:
            yv.varValue = 0.0
            changed += 1
    # A residence level stays on only while a run at it or slower carries kg.
    run_res: dict[tuple[str, str, str], float] = {}
    for r in model.routes.values():
        run_res[r.run] = min(run_res.get(r.run, math.inf), model.caps.residence[r.key])
    slowest: dict[tuple[str, str], float] = {}
    for (rk, s), xv in model.x.items():
        r = model.routes[rk]
        if (xv.varValue or 0.0) > 1e-9:
            slowest[(r.tunnel, s)] = max(slowest.get((r.tunnel, s), 0.0), run_res[r.run])
    for (t, li, s), uv in model.u.items():
        need = model.u_level[(t, li, s)] <= slowest.get((t, s), -1.0) + 1e-9
        if (uv.varValue or 0.0) > 0.5 and not need:
            uv.varValue = 0.0
            changed += 1
    return changed


DIAGNOSE_SHARE = 0.25
"""Share of the time limit the elastic re-solve may use [-]."""


def _diagnose(
    inputs: PlanInputs, cand: Candidates, mixed, options: SolveOptions, solver: str
) -> tuple[tuple[Shortfall, ...], str]:
    """Elastic re-solve: the smallest shortfalls that make the orders fit.

    Solved like the plan (:func:`_staged_solve`) in at most
    :data:`DIAGNOSE_SHARE` of the time limit; when that stops with a gap the
    note says the shortfalls listed are enough but may not be the smallest.
    """
    em = build_model(inputs, cand, mixed, elastic=True)
    limited = dataclasses.replace(options, time_limit_s=DIAGNOSE_SHARE * options.time_limit_s)
    status, gap, *_ = _staged_solve(em, solver, limited, lp_current=False)
    if not status.has_plan:
        return (), f"elastic re-solve: {status.value}"
    note = ""
    if status is not SolveStatus.OPTIMAL:
        at = f" at a {gap:.1%} gap" if gap is not None else ""
        note = (
            f"{ELASTIC_STOPPED}{at} after {limited.time_limit_s:g} s: the "
            "shortfalls listed make the orders fit but may not be the smallest"
        )
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
    return tuple(s for _, s in items), note


PATTERN_PRICING_SHARE = 0.35
"""Share of the time limit pattern generation may use [-]."""

MAX_PATTERN_ROUNDS = 60
"""Most pattern-generation rounds [-]."""


def _pareto(cycles_g: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Indices of loads no shorter-or-equal load beats in value (positive values only)."""
    pos = np.flatnonzero(values > 1e-12)
    if pos.size == 0:
        return pos
    order = pos[np.lexsort((-values[pos], cycles_g[pos]))]
    v = values[order]
    prev_max = np.maximum.accumulate(np.concatenate(([-np.inf], v[:-1])))
    return order[v > prev_max + 1e-12]


def _penalty(inputs: PlanInputs) -> float:
    """Phase-1 cost per kg short: far above any objective coefficient per kg."""
    per_kg = [1.0]
    per_kg += [p.value_per_kg for p in inputs.products]
    if inputs.objective is Objective.LEAST_ENERGY:
        d = inputs.dwell
        per_kg.append(
            float((d["heat_in_kj_per_kg"].fillna(0) + d["heat_out_kj_per_kg"].fillna(0)).max())
        )
    if inputs.objective is Objective.SOONEST:
        per_kg.append(sum(o.weight for o in inputs.orders) * len(inputs.shifts))
    return 1e3 * max(per_kg)


def _solve_patterns(inputs: PlanInputs, cand: Candidates, options: SolveOptions, solver: str):
    """Pattern formulation: generate oven-shift patterns on the LP, then the MILP.

    Returns (model, status, gap, bound, seconds, rounds, notes, build seconds).
    """
    tb = time.perf_counter()
    ovens = {o.name: o for o in inputs.ovens}
    loads = [*cand.singles, *cand.mixed_pool]
    by_oven: dict[str, dict[str, list]] = defaultdict(lambda: defaultdict(list))
    for ld in loads:
        by_oven[ld.oven][ld.setting].append(ld)
    # Per (oven, setting): kg matrix over that oven's products, cycles.
    blocks = {}
    for o, per in by_oven.items():
        for os_, lds in per.items():
            prods = sorted({p for ld in lds for p in ld.products})
            pidx = {p: i for i, p in enumerate(prods)}
            kg = np.zeros((len(lds), len(prods)))
            for i, ld in enumerate(lds):
                for p, m in ld.kg:
                    kg[i, pidx[p]] = m
            cyc = np.array([ld.cycle_min for ld in lds])
            blocks[(o, os_)] = (lds, prods, kg, cyc, np.ceil(cyc - 1e-9))
    init: dict[tuple[str, str], list[ShiftPattern]] = defaultdict(list)
    lookup = {ld.key: ld for ld in loads}
    caps = time_caps(inputs, cand)
    for s in inputs.shifts:
        for ld in cand.singles:
            n = math.floor(caps.oven[(ld.oven, s.name)] / ld.cycle_min + 1e-9)
            if n >= 1:
                init[(ld.oven, s.name)].append(
                    make_pattern(
                        ld.oven, s.name, {ld.key: n}, lookup, ovens[ld.oven].changeover_min
                    )
                )
    model = build_model(inputs, cand, cand.mixed_pool, patterns=init, penalty=_penalty(inputs))
    build_s = time.perf_counter() - tb
    t0 = time.perf_counter()
    notes: list[str] = []
    rounds = 0
    last_lp = None
    converged = False
    budget = PATTERN_PRICING_SHARE * options.time_limit_s
    tie = model.tie_per_min
    for _ in range(MAX_PATTERN_ROUNDS):
        if time.perf_counter() - t0 > budget:
            notes.append(
                "pattern generation stopped at its time share; the bound is not the full LP's"
            )
            break
        _set_relaxed(model, True)
        status, *_ = _run(model.prob, solver, options, mip=False)
        if status is not SolveStatus.OPTIMAL:
            notes.append(f"pattern generation stopped: LP {status.value}")
            break
        rounds += 1
        last_lp = float(model.prob.objective.value())
        pi = {k: float(r.pi or 0.0) for k, r in model.rows["flow"].items()}
        mu = {k: float(r.pi or 0.0) for k, r in model.rows["pattern_choice"].items()}
        added = 0
        for (o, s), mu_os in sorted(mu.items()):
            oven = ovens[o]
            items: dict[str, list] = {}
            for os_ in oven.settings:
                blk = blocks.get((o, os_))
                if blk is None:
                    continue
                lds, prods, kg, cyc, cyc_g = blk
                price = np.array([pi.get((p, o, os_, s), 0.0) for p in prods])
                values = kg @ np.maximum(price, 0.0) - tie * cyc
                keep = _pareto(cyc_g, values)
                if keep.size:
                    items[os_] = [(float(cyc[i]), float(values[i]), lds[i].key) for i in keep]
            avail_min = model.cap(o, s)
            tries = [items] + ([{k: v} for k, v in sorted(items.items())] if len(items) > 1 else [])
            for its in tries:
                counts = best_shift_pattern(its, avail_min, oven.changeover_min)
                if not counts:
                    continue
                pat = make_pattern(o, s, counts, lookup, oven.changeover_min)
                gain = 0.0
                for lk, n in pat.counts:
                    ld = lookup[lk]
                    for p, m in ld.kg:
                        gain += n * m * max(0.0, pi.get((p, o, ld.setting, s), 0.0))
                rc = tie * pat.minutes - gain - mu_os
                if rc < -1e-7 * (1.0 + abs(mu_os)) and model.add_pattern(pat):
                    added += 1
        if added == 0:
            converged = True
            break
    if last_lp is not None:
        _add_rounded_patterns(model, ovens, lookup)
    _set_relaxed(model, False)
    # The shortfall variables stay, at their penalty, so the MILP over the generated
    # patterns always has a plan; one that still falls short counts as "not found".
    rest = max(options.time_limit_s - (time.perf_counter() - t0), 0.2 * options.time_limit_s)
    status, gap, bound, _dt, msg = _run(model.prob, solver, options, time_limit=rest)
    if msg:
        notes.append(msg)
    if status.has_plan and any((v.value() or 0.0) > 1e-6 for v in model.short.values()):
        notes.append("the generated patterns cannot meet every order minimum")
        status = SolveStatus.INFEASIBLE
    # The MILP's own bound holds only over the generated patterns; the valid bound is
    # the pattern LP at convergence (no pattern left with a negative reduced cost).
    gap = bound = None
    if status.has_plan and converged and last_lp is not None:
        incumbent = float(model.prob.objective.value())
        bound = last_lp
        gap = max(0.0, incumbent - bound) / max(abs(incumbent), 1e-9)
        status = SolveStatus.OPTIMAL if gap <= options.gap_rel else SolveStatus.FEASIBLE_WITH_GAP
    elif status.has_plan:
        status = SolveStatus.FEASIBLE_WITH_GAP
    return model, status, gap, bound, time.perf_counter() - t0, rounds, notes, build_s


def _add_rounded_patterns(model: PlanModel, ovens: dict, lookup: dict) -> int:
    """Add, per oven and shift, the LP's pattern mix rounded to whole batches.

    The LP may mix patterns (e.g. half "all A" and half "all B") where no
    generated pattern is the whole-batch version of that mix; rounding the
    mixed batch counts down and filling the minutes left with the loads of
    largest remainder (same settings, so no new changeover) gives one.
    """
    mix: dict[tuple[str, str], dict[str, float]] = defaultdict(lambda: defaultdict(float))
    for key, v in model.lam.items():
        val = float(v.varValue or 0.0)
        if val <= 1e-9:
            continue
        pat = model.patterns[key]
        for lk, n in pat.counts:
            mix[(pat.oven, pat.shift)][lk] += val * n
    added = 0
    for (o, s), frac in sorted(mix.items()):
        oven = ovens[o]
        counts = {lk: math.floor(x + 1e-9) for lk, x in frac.items()}
        pat = make_pattern(o, s, counts, lookup, oven.changeover_min)
        left = model.cap(o, s) - pat.minutes
        settings = set(pat.settings)
        for lk in sorted(frac, key=lambda k: (-(frac[k] - counts[k]), k)):
            ld = lookup[lk]
            if frac[lk] - counts[lk] <= 1e-9 or (settings and ld.setting not in settings):
                continue
            extra = ld.cycle_min + (oven.changeover_min if not settings and pat.counts else 0.0)
            if extra <= left + 1e-9:
                counts[lk] += 1
                left -= ld.cycle_min
                settings.add(ld.setting)
        pat = make_pattern(o, s, counts, lookup, oven.changeover_min)
        if pat.minutes <= model.cap(o, s) + 1e-9 and model.add_pattern(pat):
            added += 1
    return added


def _extract_patterns(model: PlanModel):
    """Batches, runs and machine use from a solved pattern model."""
    inputs = model.inputs
    shifts = [s.name for s in inputs.shifts]
    order = {s: i for i, s in enumerate(shifts)}
    chosen = {
        (model.patterns[k].oven, model.patterns[k].shift): model.patterns[k]
        for k, v in model.lam.items()
        if (v.value() or 0.0) > 0.5
    }
    _b, runs, _u = _extract(model)
    taken: dict[tuple[str, str, str, str], float] = defaultdict(float)
    for r in runs:
        taken[(r.product, r.oven, r.oven_setting, r.shift)] += r.kg
    batches = []
    for (o, s), pat in sorted(chosen.items()):
        caps: dict[tuple[str, str], float] = defaultdict(float)
        for lk, n in pat.counts:
            ld = model.loads[lk]
            for p, m in ld.kg:
                caps[(p, ld.setting)] += m * n
        for lk, n in pat.counts:
            ld = model.loads[lk]
            # Batches the planned kg need (a pattern may hold more than the tunnels take).
            need = max(
                math.ceil(
                    taken[(p, o, ld.setting, s)]
                    * ld.kg_of(p)
                    * n
                    / caps[(p, ld.setting)]
                    / ld.kg_of(p)
                    - 1e-6
                )
                for p, _t in ld.trays
            )
            n = min(n, need)
            if n < 1:
                continue
            contents = tuple(
                BatchContent(
                    p,
                    trays,
                    ld.kg_of(p),
                    taken[(p, o, ld.setting, s)] * ld.kg_of(p) * n / caps[(p, ld.setting)],
                )
                for p, trays in ld.trays
            )
            batches.append(
                PlannedBatch(
                    o, s, ld.setting, lk, ld.description, n, ld.cook_min, ld.cycle_min, contents
                )
            )
    batches.sort(key=lambda b: (b.oven, order[b.shift], b.load))
    use = []
    for oven in inputs.ovens:
        for s in shifts:
            mine = [b for b in batches if b.oven == oven.name and b.shift == s]
            nset = len({b.setting for b in mine})
            co = oven.changeover_min * max(0, nset - 1)
            used = sum(b.minutes for b in mine) + co
            use.append(MachineUse(oven.name, "oven", s, used, co, model.available(oven.name, s)))
    use.extend(u for u in _u if u.kind == "tunnel")
    return tuple(batches), runs, tuple(use), chosen


SINGLES_STAGE_SHARE = 0.15
"""Share of the time limit the singles-only first stage may use [-]."""

SINGLES_STAGE_NODES = 100
"""Most branch-and-bound nodes of the singles-only first stage [-]."""

SUPPORT_STAGE_SHARE = 0.15
"""Share of the time limit each start heuristic (relax-and-fix, then the LP
support when that finds no plan) may use [-]."""


def _restricted_plan(
    model: PlanModel,
    solver: str,
    options: SolveOptions,
    fixed: list,
    time_limit: float,
    max_nodes: int | None = None,
) -> tuple[float, dict] | None:
    """Solve the MILP with the variables ``fixed`` held at zero.

    Returns (objective, variable values) of its plan, or None without one.
    Bounds are restored whatever happens.
    """
    saved = [(v, v.upBound) for v in fixed]
    for v in fixed:
        v.upBound = 0
    try:
        st, *_ = _run(model.prob, solver, options, time_limit=time_limit, max_nodes=max_nodes)
    finally:
        for v, ub in saved:
            v.upBound = ub
    if not st.has_plan:
        return None
    values = {v.name: v.varValue for v in model.prob.variables()}
    return float(model.prob.objective.value()), values


RELAX_FIX_GAP = 1e-3
"""Relative gap of each relax-and-fix step [-]; the full MILP closes the rest."""

RELAX_FIX_STEP_SHARE = 0.03
"""Most time of one relax-and-fix step, as a share of the time limit [-]."""


def _shift_of_integers(model: PlanModel) -> dict[str, int]:
    """Shift index of every batch, oven-setting and tunnel-run variable, by name."""
    index = {s.name: i for i, s in enumerate(model.inputs.shifts)}
    out = {}
    for dct in (model.n, model.z, model.y):
        for key, v in dct.items():
            out[v.name] = index[key[-1]]
    return out


def _relax_and_fix(
    model: PlanModel, solver: str, options: SolveOptions, time_limit: float
) -> tuple[float, dict] | None:
    """A plan built shift by shift: relax-and-fix over the shifts.

    Step ``i`` solves the MILP with the batches, oven settings and tunnel
    runs of shifts up to ``i`` integer, those of later shifts relaxed and
    those of earlier shifts held where the previous steps put them; then
    shift ``i`` is held. When a step finds no plan, the last held shift is
    released and the step repeated once; a second failure ends the search.
    The completion binaries of SOONEST stay relaxed until a last step with
    everything else held. Each step stops at :data:`RELAX_FIX_GAP` or after
    :data:`RELAX_FIX_STEP_SHARE` of the time limit, keeping its plan; the
    search gives up as soon as the steps so far, at their pace, say the
    rest will not fit in ``time_limit``. Every step is a small MILP (one
    shift integer) because shifts are linked only by the orders; a classic
    lot-sizing heuristic (relax-and-fix; see e.g. Pochet and Wolsey,
    *Production Planning by Mixed Integer Programming*, 2006). A released
    shift stays free (and integer) in the later steps.

    Returns (objective, variable values) of the plan, or None when the time
    runs out or no plan is found. Bounds and integrality are restored
    whatever happens.
    """
    t0 = time.perf_counter()
    shift_of = _shift_of_integers(model)
    stepped = [v for v in model.integer_vars if v.name in shift_of]
    last = len(model.inputs.shifts) - 1
    saved = [(v, v.lowBound, v.upBound) for v in stepped]
    step_options = dataclasses.replace(options, gap_rel=max(options.gap_rel, RELAX_FIX_GAP))
    step_cap = RELAX_FIX_STEP_SHARE * options.time_limit_s
    try:
        for v in model.f.values():
            v.cat = pulp.LpContinuous
        i, held, released = 0, -1, False
        while i <= last:
            left = min(step_cap, time_limit - (time.perf_counter() - t0))
            if left <= 0:
                return None
            for v in stepped:
                v.cat = pulp.LpInteger if shift_of[v.name] <= i else pulp.LpContinuous
            status, *_ = _run(model.prob, solver, step_options, time_limit=left)
            if not status.has_plan:
                if held < 0 or released:
                    return None
                for v, lo, up in saved:
                    if shift_of[v.name] == held:
                        v.lowBound, v.upBound = lo, up
                held, released = held - 1, True
                continue
            released = False
            for v in stepped:
                if shift_of[v.name] == i:
                    v.lowBound = v.upBound = round(v.varValue or 0.0)
            held, i = i, i + 1
            spent = time.perf_counter() - t0
            if spent + spent / i * (last + 1 - i) > time_limit:
                return None  # at this pace the remaining steps do not fit
        for v in stepped:
            v.cat = pulp.LpInteger
        for v in model.f.values():
            v.cat = pulp.LpInteger
        if model.f:
            left = time_limit - (time.perf_counter() - t0)
            if left <= 0:
                return None
            status, *_ = _run(model.prob, solver, step_options, time_limit=min(step_cap, left))
            if not status.has_plan:
                return None
        values = {v.name: v.varValue for v in model.prob.variables()}
        return float(model.prob.objective.value()), values
    finally:
        for v, lo, up in saved:
            v.lowBound, v.upBound = lo, up
            v.cat = pulp.LpInteger
        for v in model.f.values():
            v.cat = pulp.LpInteger


IMPROVE_SHARE = 0.5
"""Share of the time limit kept for improving a plan shift by shift [-]."""

IMPROVE_WINDOW = 2
"""Consecutive shifts re-optimised together when improving a plan [-]."""


def _improve_by_shift_windows(
    model: PlanModel, seconds: float, bound: float | None = None, gap_rel: float = 0.0
) -> float | None:
    """Improve the plan in hand a few shifts at a time (HiGHS only).

    Shifts are linked only through the orders, so with every variable of
    the other shifts held at the plan's values the MILP of a window of
    ``IMPROVE_WINDOW`` shifts is small; each window is re-solved from the
    plan (a start) and any better plan is kept (fix-and-optimise). Works on
    the HiGHS model of the last solve; bounds are restored afterwards and
    the PuLP variables carry the best plan.

    Stops early once the plan is within ``gap_rel`` of ``bound`` (the full
    MILP's bound, minimisation form). Returns the best objective
    (minimisation form) when the plan improved, else None.
    """
    hs = model.prob.solverModel
    if hs is None or seconds <= 0:
        return None
    for name in SEARCH_FROM_START:
        # the windows look for better plans: HiGHS's own heuristics back on
        hs.setOptionValue(name, True)
    t_end = time.perf_counter() + seconds
    variables = model.prob.variables()
    shifts = {s.name: i for i, s in enumerate(model.inputs.shifts)}
    shift_of: dict[str, int] = {}
    for group in (model.n, model.w, model.x, model.z, model.y, model.f, model.u):
        for key, v in group.items():
            shift_of[v.name] = shifts[key[-1]]
    cols = np.array([v.index for v in variables], dtype=np.int32)
    lo = np.array([-np.inf if v.lowBound is None else v.lowBound for v in variables], float)
    hi = np.array([np.inf if v.upBound is None else v.upBound for v in variables], float)
    sh = np.array([shift_of.get(v.name, -1) for v in variables])
    best = np.array([float(v.varValue or 0.0) for v in variables])
    integer = np.array([v.cat == pulp.LpInteger for v in variables])
    best[integer] = np.round(best[integer])
    best = np.clip(best, lo, hi)
    best_obj = float(hs.getInfo().objective_function_value)
    start_obj = best_obj
    n_shifts = len(shifts)
    windows = list(range(max(1, n_shifts - IMPROVE_WINDOW + 1)))
    try:
        while time.perf_counter() < t_end - 0.2:
            gained = False
            for w0 in windows:
                left = t_end - time.perf_counter()
                close = bound is not None and best_obj - bound <= gap_rel * max(abs(best_obj), 1e-9)
                if left < 0.2 or close:
                    break
                free = ((sh >= w0) & (sh < w0 + IMPROVE_WINDOW)) | (sh < 0)
                held = ~free
                hs.changeColsBounds(int(held.sum()), cols[held], best[held], best[held])
                hs.changeColsBounds(int(free.sum()), cols[free], lo[free], hi[free])
                sol = highspy.HighsSolution()
                values = np.zeros(hs.getNumCol())
                values[cols] = best
                sol.col_value = list(values)
                sol.value_valid = True
                hs.setSolution(sol)
                hs.setOptionValue("time_limit", max(0.1, min(left, 2.0 * seconds / len(windows))))
                hs.run()
                info = hs.getInfo()
                obj = float(info.objective_function_value)
                if info.primal_solution_status == 2 and obj < best_obj - 1e-7 * max(
                    1.0, abs(best_obj)
                ):
                    found = np.asarray(hs.getSolution().col_value)[cols]
                    found[integer] = np.round(found[integer])
                    best = np.clip(found, lo, hi)
                    best_obj = obj
                    gained = True
            if not gained or (
                bound is not None and best_obj - bound <= gap_rel * max(abs(best_obj), 1e-9)
            ):
                break
    finally:
        hs.changeColsBounds(len(cols), cols, lo, hi)
    for v, val in zip(variables, best, strict=True):
        v.varValue = float(val)
    return best_obj if best_obj < start_obj else None


def _staged_solve(model: PlanModel, solver: str, options: SolveOptions, *, lp_current: bool):
    """Solve the MILP from a heuristic start, with a singles-only safety net.

    1. A start plan: relax-and-fix over the shifts (:func:`_relax_and_fix`,
       HiGHS only: CBC runs as a process per solve), at most
       ``SUPPORT_STAGE_SHARE`` of the time limit; when that finds no plan,
       the LP support (as long again): every integer variable the LP
       relaxation leaves at zero is held at zero and the much smaller MILP
       that remains is solved. On large plants, where the solver's own
       heuristics stall at the root, the start is most of the plan quality.
    2. The full MILP, keeping ``IMPROVE_SHARE`` (HiGHS) and, when there are
       mixed loads, ``SINGLES_STAGE_SHARE`` of the time limit in reserve.
       Started from relax-and-fix, HiGHS runs without its sub-MIP
       heuristics (:data:`SEARCH_FROM_START`).
    3. Only when step 2 did not prove its plan optimal (HiGHS): the plan is
       improved a few shifts at a time (:func:`_improve_by_shift_windows`,
       ``IMPROVE_SHARE`` of the time limit kept for it); when step 2 found
       no plan at all, the full MILP is run again with that time instead.
    4. Only when the plan is still not proven optimal: the MILP with every
       mixed load held at zero (the reserve, at most ``SINGLES_STAGE_NODES``
       nodes). If that plan is better it is the one returned, with step 2's
       bound, so allowing mixed loads never gives a worse plan than the
       singles-only search found.

    Parameters
    ----------
    lp_current : bool
        The variable values are already the LP relaxation's optimum (the
        last column-generation round), so it is not solved again.
    """
    t0 = time.perf_counter()
    limit = options.time_limit_s
    mixed_n = [v for (lk, _s), v in model.n.items() if model.loads[lk].is_mixed]
    ints = model.integer_vars
    if not lp_current:
        _set_relaxed(model, True)
        st, *_ = _run(model.prob, solver, options, mip=False)
        _set_relaxed(model, False)
        lp_current = st is SolveStatus.OPTIMAL
    c0 = float(model.prob.objective.constant)
    # the LP relaxation's optimum bounds the MILP (solver form: without the constant)
    lp_bound = float(model.prob.objective.value()) - c0 if lp_current else None
    idle = [v for v in ints if abs(v.varValue or 0.0) <= 1e-9] if lp_current else []
    start = None
    if solver == "highs":
        start = _relax_and_fix(model, solver, options, SUPPORT_STAGE_SHARE * limit)
    shift_by_shift = start is not None
    if start is None and idle and len(idle) < len(ints):
        start = _restricted_plan(model, solver, options, idle, SUPPORT_STAGE_SHARE * limit)
    if start is not None:
        for v in model.prob.variables():
            v.varValue = start[1].get(v.name)
    reserve = SINGLES_STAGE_SHARE * limit if mixed_n else 0.0
    improve = IMPROVE_SHARE * limit if solver == "highs" else 0.0
    rest = max(limit - reserve - improve - (time.perf_counter() - t0), 0.1 * limit)
    status, gap, bound, _dt, msg = _run(
        model.prob,
        solver,
        options,
        time_limit=rest,
        start=start is not None,
        sub_mips=not shift_by_shift,
    )
    if status is SolveStatus.NO_SOLUTION_IN_TIME and improve > 0:
        # nothing to improve: the full MILP gets the time kept for improving
        left = limit - reserve - (time.perf_counter() - t0)
        if left > 0.05 * limit:
            status, gap, bound, _dt, msg = _run(model.prob, solver, options, time_limit=left)
    if status is SolveStatus.FEASIBLE_WITH_GAP and lp_bound is not None:
        # stopped before its root LP was solved, the MILP's own bound can be far weaker
        if bound is None or bound < lp_bound:
            bound = lp_bound
            obj = float(model.prob.objective.value()) - c0
            gap = max(0.0, obj - bound) / max(abs(obj), 1e-9)
    if status is SolveStatus.FEASIBLE_WITH_GAP and improve > 0:
        left = limit - reserve - (time.perf_counter() - t0)
        better = _improve_by_shift_windows(model, left, bound, options.gap_rel)
        if better is not None and bound is not None:
            gap = max(0.0, better - bound) / max(abs(better), 1e-9)
            if gap <= options.gap_rel:
                status = SolveStatus.OPTIMAL
    if mixed_n and status is not SolveStatus.OPTIMAL and status is not SolveStatus.INFEASIBLE:
        best = None
        if status.has_plan:
            best = (
                float(model.prob.objective.value()),
                {v.name: v.varValue for v in model.prob.variables()},
            )
        singles = _restricted_plan(
            model, solver, options, mixed_n, max(reserve, 0.05 * limit), SINGLES_STAGE_NODES
        )
        if singles is not None and (best is None or singles[0] < best[0] - 1e-9):
            best = singles
            status = SolveStatus.FEASIBLE_WITH_GAP
            if bound is not None:
                # PuLP does not hand the objective constant to the solver: its bound lacks it
                gap = max(0.0, best[0] - c0 - bound) / max(abs(best[0] - c0), 1e-9)
        if best is not None:
            for v in model.prob.variables():
                v.varValue = best[1].get(v.name)
    if status.has_plan:
        _drop_idle(model)
    return status, gap, bound, time.perf_counter() - t0, msg


def _compact_solve(inputs: PlanInputs, cand: Candidates, options: SolveOptions, notes: list):
    """Compact formulation: build, optional mixed-load column generation, staged MILP."""
    t0 = time.perf_counter()
    use_cg = (
        options.column_generation
        if options.column_generation is not None
        else len(cand.mixed_pool) > options.max_enumerated_loads
    )
    use_cg = bool(use_cg) and options.max_mix_products >= 2
    first = options.solver
    other = "cbc" if first == "highs" else "highs"
    model = build_model(inputs, cand, [] if use_cg else cand.mixed_pool)
    build_s = time.perf_counter() - t0
    rounds = 0
    solve_s = 0.0
    lp_current = False
    if use_cg:
        tc = time.perf_counter()
        rounds, cg_notes, lp_current = _generate_columns(model, inputs, cand, options, first)
        notes.extend(cg_notes)
        solve_s += time.perf_counter() - tc
    # Column generation counts against the time limit.
    left = max(options.time_limit_s - solve_s, 0.2 * options.time_limit_s)
    status, gap, bound, dt, msg = _staged_solve(
        model, first, dataclasses.replace(options, time_limit_s=left), lp_current=lp_current
    )
    solve_s += dt
    used = first
    if status in (SolveStatus.ERROR, SolveStatus.UNBOUNDED) and options.fallback:
        notes.append(f"{first} gave {status.value}{': ' + msg if msg else ''}; tried {other}")
        status, gap, bound, dt, msg = _run(model.prob, other, options)
        solve_s += dt
        used = other
    if msg:
        notes.append(msg)
    return model, status, gap, bound, used, build_s, solve_s, rounds


def _pattern_shadow_prices(
    inputs: PlanInputs,
    cand: Candidates,
    pm: PlanModel,
    chosen: dict,
    options: SolveOptions,
    solver: str,
):
    """Shadow prices for a pattern plan, from the compact LP with its on/off choices."""
    mixed = sorted(
        {pm.loads[lk] for pat in chosen.values() for lk, _ in pat.counts if pm.loads[lk].is_mixed},
        key=lambda ld: ld.key,
    )
    cm = build_model(inputs, cand, mixed)
    for (o, os_, s), v in cm.z.items():
        pat = chosen.get((o, s))
        v.varValue = 1.0 if pat is not None and os_ in pat.settings else 0.0
    for key, v in cm.y.items():
        src = pm.y.get(key)
        v.varValue = float(round(src.value() or 0.0)) if src is not None else 0.0
    for key, v in cm.f.items():
        src = pm.f.get(key)
        v.varValue = float(round(src.value() or 0.0)) if src is not None else 0.0
    return _shadow_prices(cm, options, solver)


def plan(inputs: PlanInputs, options: SolveOptions | None = None) -> PlanResult:
    """Plan the shifts: the MILP from the dwell table, solved, with diagnostics.

    Parameters
    ----------
    inputs : PlanInputs
        Plant, products, shifts, orders, dwell table and objective.
    options : SolveOptions, optional
        Solver, time limit [s], gap [-], mixing, formulation and diagnostics
        options.

    Returns
    -------
    PlanResult
        Status, objective, plan (batches and tunnel runs), machine use,
        shadow prices, slack and - when nothing fits - the shortfalls.
    """
    options = options or SolveOptions()
    t0 = time.perf_counter()
    cand = candidates(inputs, options.mix_tolerance, options.max_mix_products)
    if options.max_mix_products < 2:
        cand = Candidates(cand.cook, cand.routes, cand.singles, (), cand.excluded)
    notes: list[str] = []
    cand_s = time.perf_counter() - t0
    chosen = None
    pricing_rounds = 0
    if options.formulation == "patterns":
        model, status, gap, bound, solve_s, pricing_rounds, pnotes, pb = _solve_patterns(
            inputs, cand, options, options.solver
        )
        notes.extend(pnotes)
        used = options.solver
        build_s = cand_s + pb
        if status in (SolveStatus.INFEASIBLE, SolveStatus.ERROR, SolveStatus.NO_SOLUTION_IN_TIME):
            notes.append(f"pattern formulation gave {status.value}; solved the compact formulation")
            model, status, gap, bound, used, b2, s2, pricing_rounds = _compact_solve(
                inputs, cand, options, notes
            )
            build_s += b2
            solve_s += s2
        elif status.has_plan:
            chosen = True
    else:
        model, status, gap, bound, used, b2, solve_s, pricing_rounds = _compact_solve(
            inputs, cand, options, notes
        )
        build_s = cand_s + b2
    mixed = sorted({ld for ld in model.loads.values() if ld.is_mixed}, key=lambda ld: ld.key)

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
        if chosen:
            batches, runs, use, chosen = _extract_patterns(model)
        else:
            batches, runs, use = _extract(model)
        value = model.primary_value()
        slacks = _slacks(model, use)
        if bound is not None:
            bound = -bound if maximise else bound
        prices: tuple[ShadowPrice, ...] = ()
        if options.shadow_prices:
            ts = time.perf_counter()
            if chosen:
                prices, note = _pattern_shadow_prices(inputs, cand, model, chosen, options, used)
            else:
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
