"""The plan the floor can run: the bucketed MILP's plan scheduled, corrected until it fits.

:func:`optimizer.planning.solve.plan` solves the bucketed MILP (machine
minutes per shift, with the belt's fill and drain) and hands its plan here.
:func:`timed_plan` places it in time (:func:`optimizer.planning.scheduler.schedule_plan`)
and, when the schedule cannot place everything, corrects the plan by
*cut and resolve*: the minutes the unplaced kg would have needed are cut
from the machine that stopped them, in that shift, and the MILP is solved
again with those cuts; then the new plan is scheduled. At most
``SolveOptions.schedule_rounds`` rounds (a round whose cuts leave no plan
that meets the order minimums is tried again with half the new cuts); the
schedule with the best objective (order minimums met first) is the plan
reported. Everything is
deterministic: the cuts follow from the schedule, which follows from the
plan.

What the result reports then is the schedule's: kg, objective, batches,
tunnel runs, machine use (and so utilisation and the bottleneck). The
first MILP's optimum, with no cut, stays as the bound
(``PlanResult.bucket_value``), the MILP's proven bound as ``best_bound``,
and ``gap`` is the schedule's distance from that bound.

Which machine a cut goes to, by the rule the schedule names
(:data:`optimizer.planning.schedule.RULES`):

* ``oven_minutes``: the oven, by the unplaced batches' cycle minutes;
* every other rule (hot hold, shift end, residence, belt speed): the tunnel
  of the route the kg was planned on, by the belt minutes the kg needs at
  that route's feed rate.

Units: minutes [min], kg, objective units as in :class:`PlanResult`.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections import defaultdict
from collections.abc import Callable, Mapping

from optimizer.planning.inputs import Objective, PlanInputs, SolveOptions
from optimizer.planning.model import demand_groups
from optimizer.planning.results import (
    BatchContent,
    MachineUse,
    PlanResult,
    Shortfall,
    SolveStatus,
)
from optimizer.planning.schedule import Schedule
from optimizer.planning.scheduler import schedule_plan

__all__ = ["schedule_cuts", "schedule_objective", "timed_plan"]

Resolve = Callable[[Mapping[tuple[str, str], float]], PlanResult]

CUT_MARGIN_MIN = 1.0
"""Minutes added to every cut so a round never repeats the same plan [min]."""


def _route_heat(inputs: PlanInputs) -> dict[tuple[str, ...], float]:
    """(product, oven, oven setting, tunnel, tunnel setting, loading) -> heat in + out [kJ/kg]."""
    d = inputs.dwell
    d = d[d["feasible"].astype(bool)]
    keys = ["product", "oven", "oven_setting", "tunnel", "tunnel_setting", "loading"]
    out: dict[tuple[str, ...], float] = {}
    for row in d[[*keys, "heat_in_kj_per_kg", "heat_out_kj_per_kg"]].itertuples(index=False):
        heat = float(row[6]) if math.isfinite(row[6]) else 0.0
        heat += float(row[7]) if math.isfinite(row[7]) else 0.0
        out[tuple(row[:6])] = heat
    return out


def _cumulative(inputs: PlanInputs, schedule: Schedule) -> dict[str, list[float]]:
    """product -> kg fed by the end of each shift (cumulative) [kg]."""
    index = {s.name: i for i, s in enumerate(inputs.shifts)}
    per: dict[str, list[float]] = defaultdict(lambda: [0.0] * len(inputs.shifts))
    for f in schedule.feeds:
        per[f.product][index[f.shift]] += f.kg
    out = {}
    for p, kg in per.items():
        run, cum = 0.0, []
        for x in kg:
            run += x
            cum.append(run)
        out[p] = cum
    return out


def order_shortfalls(inputs: PlanInputs, schedule: Schedule) -> list[tuple[str, str, str, float]]:
    """Order minimums the schedule misses: (product, orders, due shift, kg short).

    A minimum counts as met within 1e-6 kg.
    """
    cum = _cumulative(inputs, schedule)
    names = [s.name for s in inputs.shifts]
    out = []
    for g in demand_groups(inputs):
        if g.cum_min_kg <= 0:
            continue
        made = cum.get(g.product, [0.0] * len(names))[g.due]
        if made < g.cum_min_kg - 1e-6:
            out.append((g.product, ", ".join(g.orders), names[g.due], g.cum_min_kg - made))
    if inputs.objective is Objective.LEAST_ENERGY and inputs.fixed_output_kg:
        if schedule.total_kg < inputs.fixed_output_kg - 1e-6:
            short = inputs.fixed_output_kg - schedule.total_kg
            out.append(("", "fixed output", names[-1], short))
    return out


def schedule_objective(inputs: PlanInputs, schedule: Schedule) -> float:
    """The plan's objective in its natural units, from what the schedule feeds.

    Most kg [kg], most value [currency], soonest [weighted completion shift,
    1-based; an order never completed counts at its due shift], least
    energy [kJ, heat in plus heat out of the kg fed].
    """
    obj = inputs.objective
    if obj is Objective.MOST_KG:
        return schedule.total_kg
    if obj is Objective.MOST_VALUE:
        value = {p.name: p.value_per_kg for p in inputs.products}
        return sum(value[f.product] * f.kg for f in schedule.feeds)
    if obj is Objective.LEAST_ENERGY:
        heat = _route_heat(inputs)
        return sum(
            heat.get((f.product, f.oven, f.oven_setting, f.tunnel, f.tunnel_setting, f.loading), 0)
            * f.kg
            for f in schedule.feeds
        )
    cum = _cumulative(inputs, schedule)
    total = 0.0
    for g in demand_groups(inputs):
        if g.cum_min_kg <= 0:
            continue
        made = cum.get(g.product, [0.0] * len(inputs.shifts))
        done = next((i for i in range(g.due + 1) if made[i] >= g.cum_min_kg - 1e-6), g.due)
        total += g.weight * (done + 1)
    return total


def _better(inputs: PlanInputs, a: tuple[float, float], b: tuple[float, float]) -> bool:
    """Whether score ``a`` beats ``b``: (kg short of the minimums, objective)."""
    if abs(a[0] - b[0]) > 1e-6:
        return a[0] < b[0]
    maximise = inputs.objective in (Objective.MOST_KG, Objective.MOST_VALUE)
    if maximise:
        return a[1] > b[1] + 1e-9 * max(1.0, abs(b[1]))
    return a[1] < b[1] - 1e-9 * max(1.0, abs(b[1]))


def whole_trays(inputs: PlanInputs, result: PlanResult) -> PlanResult:
    """The plan with whole trays of each product, its total rounded up where a batch has room.

    The bucketed MILP carries kg, not trays; the schedule runs whole trays
    and would round every batch line down, so a plan that makes an order's
    minimum exactly could fall short by part trays. Here each product's
    total becomes whole trays rounded up (never past the sum of its orders'
    maximums): every line is rounded down, then the trays missing go, one
    each, to the lines with the largest part tray that still have a free
    tray position.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    result : PlanResult
        A plan.

    Returns
    -------
    PlanResult
        The same plan with whole trays in every batch line's contents [kg].
    """
    kpt = {p.name: p.kg_per_tray for p in inputs.products}
    caps: dict[str, float] = defaultdict(float)
    for o in inputs.orders:
        caps[o.product] += o.max_kg
    lines: dict[str, list[tuple[int, int, float]]] = defaultdict(list)  # product -> (b, c, trays)
    for i, b in enumerate(result.batches):
        for j, c in enumerate(b.contents):
            lines[c.product].append((i, j, c.kg / kpt[c.product]))
    trays: dict[tuple[int, int], int] = {}
    for p, items in lines.items():
        total = sum(t for _, _, t in items)
        target = math.ceil(total - 1e-6)
        cap = caps.get(p, math.inf)
        if math.isfinite(cap):
            target = min(target, math.floor(cap / kpt[p] + 1e-9))
        for i, j, t in items:
            trays[(i, j)] = math.floor(t + 1e-6)
        missing = target - sum(trays[(i, j)] for i, j, _ in items)
        order = sorted(items, key=lambda x: (-(x[2] - math.floor(x[2] + 1e-6)), x[0], x[1]))
        for i, j, _t in order:
            if missing <= 0:
                break
            b = result.batches[i]
            room = b.batches * b.contents[j].trays
            if trays[(i, j)] < room:
                trays[(i, j)] += 1
                missing -= 1
    batches = []
    for i, b in enumerate(result.batches):
        contents = tuple(
            dataclasses.replace(c, kg=trays[(i, j)] * kpt[c.product])
            for j, c in enumerate(b.contents)
        )
        batches.append(dataclasses.replace(b, contents=contents))
    return dataclasses.replace(result, batches=tuple(batches))


def schedule_cuts(
    inputs: PlanInputs, result: PlanResult, schedule: Schedule
) -> dict[tuple[str, str], float]:
    """Minutes to cut per (machine, shift) so the plan stops asking for what did not fit.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    result : PlanResult
        The plan that was scheduled.
    schedule : Schedule
        Its schedule.

    Returns
    -------
    dict
        (machine, shift) -> minutes [min]; empty when everything was placed.
    """
    cuts: dict[tuple[str, str], float] = defaultdict(float)
    lines = {(b.shift, b.oven, b.load): b for b in result.batches}
    for u in schedule.unplaced:
        line = lines.get((u.shift, u.machine, u.load))
        if u.rule == "oven_minutes" or line is None:
            per_batch = sum(c.kg_per_batch for c in line.contents) if line else 0.0
            cycle = line.cycle_min if line else 0.0
            minutes = cycle * math.ceil(u.kg / per_batch - 1e-9) if per_batch > 0 else 0.0
            cuts[(u.machine, u.shift)] += minutes + CUT_MARGIN_MIN
            continue
        products = {c.product for c in line.contents}
        runs = [
            r
            for r in result.runs
            if r.shift == u.shift
            and r.oven == u.machine
            and r.oven_setting == line.setting
            and r.product in products
        ]
        if not runs:
            continue
        # the route that carried most of this line's product; its feed rate prices the kg
        run = max(runs, key=lambda r: (r.kg, r.tunnel, r.product))
        cuts[(run.tunnel, u.shift)] += u.kg / run.rate_kg_per_min + CUT_MARGIN_MIN
    return dict(sorted(cuts.items()))


def _batches(inputs: PlanInputs, result: PlanResult, schedule: Schedule):
    """The plan's batch lines as the schedule placed them."""
    planned = {(b.shift, b.oven, b.load): b for b in result.batches}
    count: dict[tuple[str, str, str], int] = defaultdict(int)
    kg: dict[tuple[str, str, str], dict[str, float]] = defaultdict(lambda: defaultdict(float))
    for b in schedule.batches:
        count[(b.shift, b.oven, b.load)] += 1
        for c in b.contents:
            kg[(b.shift, b.oven, b.load)][c.product] += c.kg
    order = {s.name: i for i, s in enumerate(inputs.shifts)}
    out = []
    for key in sorted(count, key=lambda k: (k[1], order[k[0]], k[2])):
        p = planned.get(key)
        if p is None:
            continue
        contents = tuple(
            BatchContent(c.product, c.trays, c.kg_per_batch, kg[key].get(c.product, 0.0))
            for c in p.contents
        )
        out.append(dataclasses.replace(p, batches=count[key], contents=contents))
    return tuple(out)


def _runs(inputs: PlanInputs, result: PlanResult, schedule: Schedule):
    """The plan's tunnel runs with the kg the schedule fed."""
    planned = {
        (r.shift, r.tunnel, r.product, r.oven, r.oven_setting, r.tunnel_setting, r.loading): r
        for r in result.runs
    }
    fed: dict[tuple[str, ...], float] = defaultdict(float)
    for f in schedule.feeds:
        key = (f.shift, f.tunnel, f.product, f.oven, f.oven_setting, f.tunnel_setting, f.loading)
        fed[key] += f.kg
    order = {s.name: i for i, s in enumerate(inputs.shifts)}
    out = [dataclasses.replace(planned[k], kg=v) for k, v in fed.items() if k in planned]
    out.sort(key=lambda r: (r.tunnel, order[r.shift], r.product, r.oven, r.oven_setting))
    return tuple(out)


def _union(intervals: list[tuple[float, float]]) -> float:
    """Length of the union of intervals [min]."""
    total, end = 0.0, -math.inf
    for a, b in sorted(intervals):
        if b <= end:
            continue
        total += b - max(a, end)
        end = b
    return total


def schedule_use(inputs: PlanInputs, schedule: Schedule) -> tuple[MachineUse, ...]:
    """Minutes each machine is busy in each shift of the schedule.

    An oven is busy from each batch's load start to its unload end and in its
    changeovers. A tunnel is busy while its belt carries product (from a
    feed's first piece in to its last piece out, within the shift) and in its
    changeovers. Available minutes are the shift's, stops taken off.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    schedule : Schedule
        The schedule.

    Returns
    -------
    tuple of MachineUse
        Ovens then tunnels, each over the shifts in order.
    """
    out = []
    by_shift = {sh.shift: sh for sh in schedule.shifts}
    for oven in inputs.ovens:
        for s in inputs.shifts:
            sh = by_shift.get(s.name)
            busy = co = 0.0
            if sh is not None:
                busy = sum(b.unload_end - b.load_start for b in sh.batches if b.oven == oven.name)
                co = sum(c.end - c.start for c in sh.changeovers if c.machine == oven.name)
            out.append(MachineUse(oven.name, "oven", s.name, busy + co, co, s.available(oven.name)))
    for tun in inputs.tunnels:
        for s in inputs.shifts:
            sh = by_shift.get(s.name)
            busy = co = 0.0
            if sh is not None:
                span = s.window(tun.name)
                spans = [
                    (f.start, min(f.last_exit, span))
                    for tl in sh.tunnels
                    if tl.tunnel == tun.name
                    for f in tl.feeds
                ]
                co = sum(c.end - c.start for c in sh.changeovers if c.machine == tun.name)
                busy = _union(spans)
            out.append(MachineUse(tun.name, "tunnel", s.name, busy + co, co, s.available(tun.name)))
    return tuple(out)


def _shortfalls(inputs: PlanInputs, schedule: Schedule) -> tuple[Shortfall, ...]:
    """What the schedule misses: order minimums, with the rule that kept the kg out."""
    why: dict[str, list] = defaultdict(list)
    for u in schedule.unplaced:
        load_products = u.load.split("|")[-1]
        for item in load_products.split("+"):
            why[item.split(":")[0]].append(u)
    out = []
    for product, orders, shift, short in order_shortfalls(inputs, schedule):
        causes = sorted(why.get(product, []), key=lambda u: (-u.kg, u.shift, u.machine, u.load))
        if causes:
            top = causes[0]
            msg = (
                f"order for {orders}: {short:,.0f} kg short by {shift}: "
                f"{top.rule.replace('_', ' ')} in {top.shift} on {top.machine}: {top.detail}"
            )
            rule = top.rule
        else:
            msg = f"order for {orders}: {short:,.0f} kg short by {shift} in the schedule"
            rule = "order"
        out.append(Shortfall("order", orders, shift, short, "kg", msg, rule))
    return tuple(out)


def _with_schedule(
    inputs: PlanInputs,
    options: SolveOptions,
    first: PlanResult,
    chosen: PlanResult,
    schedule: Schedule,
    rounds: int,
    seconds: float,
) -> PlanResult:
    value = schedule_objective(inputs, schedule)
    bound = first.best_bound if first.best_bound is not None else first.objective_value
    gap = None
    if bound is not None:
        gap = max(0.0, abs(bound - value)) / max(abs(value), 1e-9)
    placed = 100.0 * schedule.total_kg / first.total_kg if first.total_kg > 0 else 100.0
    notes = [
        *chosen.messages,
        f"schedule: {schedule.total_kg:,.0f} kg placed in time, {placed:.1f} % of the bucketed "
        f"plan's {first.total_kg:,.0f} kg"
        + (f" after {rounds} cut-and-resolve round(s)" if rounds else ""),
        *schedule.notes,
    ]
    shortfalls = _shortfalls(inputs, schedule)
    if shortfalls:
        status = SolveStatus.INFEASIBLE
    elif gap is not None and gap <= options.gap_rel:
        status = SolveStatus.OPTIMAL
    else:
        status = SolveStatus.FEASIBLE_WITH_GAP
    return dataclasses.replace(
        chosen,
        status=status,
        objective_value=value,
        best_bound=bound,
        gap=gap,
        total_kg=schedule.total_kg,
        batches=_batches(inputs, chosen, schedule),
        runs=_runs(inputs, chosen, schedule),
        machine_use=schedule_use(inputs, schedule),
        shortfalls=shortfalls,
        messages=tuple(notes),
        schedule=schedule,
        bucket_value=first.objective_value,
        bucket_kg=first.total_kg,
        schedule_rounds=rounds,
        schedule_seconds=seconds,
        scheduled_plan=chosen,
    )


def timed_plan(
    inputs: PlanInputs, options: SolveOptions, first: PlanResult, resolve: Resolve
) -> PlanResult:
    """Schedule the bucketed plan ``first``; cut and resolve until it fits.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    options : SolveOptions
        ``schedule_rounds`` bounds the rounds; ``gap_rel`` decides OPTIMAL.
    first : PlanResult
        The bucketed MILP's plan with no cut (its optimum is the bound).
    resolve : callable
        ``resolve(cuts) -> PlanResult``: the bucketed MILP again with
        (machine, shift) -> minutes taken off.

    Returns
    -------
    PlanResult
        The best schedule's plan (see the module docstring); INFEASIBLE with
        shortfalls naming the binding rule when no round's schedule meets the
        order minimums.
    """
    t0 = time.perf_counter()
    planned = whole_trays(inputs, first)
    schedule = schedule_plan(inputs, planned)

    def score(s: Schedule) -> tuple[float, float]:
        return (sum(x[3] for x in order_shortfalls(inputs, s)), schedule_objective(inputs, s))

    best = (planned, schedule, score(schedule), 0)
    result, cuts, rounds = first, {}, 0
    new = schedule_cuts(inputs, result, schedule) if schedule.unplaced else {}
    while rounds < options.schedule_rounds and new:
        trial = dict(cuts)
        for key, minutes in new.items():
            trial[key] = trial.get(key, 0.0) + minutes
        rounds += 1
        again = resolve(trial)
        if not again.status.has_plan:
            # the cuts went too far for the order minimums: try half of them
            new = {k: v / 2.0 for k, v in new.items() if v / 2.0 >= CUT_MARGIN_MIN}
            continue
        result, cuts = again, trial
        planned = whole_trays(inputs, result)
        schedule = schedule_plan(inputs, planned)
        sc = score(schedule)
        if _better(inputs, sc, best[2]):
            best = (planned, schedule, sc, rounds)
        new = schedule_cuts(inputs, result, schedule) if schedule.unplaced else {}
    chosen, schedule, _, _ = best
    return _with_schedule(
        inputs, options, first, chosen, schedule, rounds, time.perf_counter() - t0
    )
