"""Capacity with a fixed product mix: the most kg, by bisection on the total.

The search behind ``corepace capacity`` (and ``optimizer.capacity``): the
mix's shares are held fixed and the planner is asked, total by total,
whether a plan exists.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass

import pandas as pd

from optimizer.planning.inputs import Objective, OrderData, PlanInputs, SolveOptions
from optimizer.planning.results import PlanResult, plan_tables
from optimizer.planning.solve import plan_buckets

__all__ = [
    "CAPACITY_TOLERANCE",
    "FULL_USE",
    "CapacityResult",
    "capacity_tables",
    "default_mix",
    "full_machines",
    "max_mix_capacity",
]


CAPACITY_TOLERANCE = 0.005
"""Relative width [-] at which the capacity search stops."""


def default_mix(inputs: PlanInputs) -> tuple[dict[str, float], str]:
    """The mix when ``--mix`` is not given: the orders' proportions, else equal shares.

    Returns
    -------
    tuple of (dict of str to float, str)
        Shares summing to 1, and where they came from.
    """
    by_min: dict[str, float] = {}
    by_max: dict[str, float] = {}
    for o in inputs.orders:
        by_min[o.product] = by_min.get(o.product, 0.0) + o.min_kg
        by_max[o.product] = by_max.get(o.product, 0.0) + o.max_kg
    if sum(by_min.values()) > 0:
        total = sum(by_min.values())
        return {k: v / total for k, v in by_min.items() if v > 0}, "order minimums"
    finite = {k: v for k, v in by_max.items() if 0 < v < float("inf")}
    if finite and len(finite) == len(by_max):
        total = sum(finite.values())
        return {k: v / total for k, v in finite.items()}, "order maximums"
    names = sorted(by_max)
    return {k: 1.0 / len(names) for k in names}, "equal shares of the ordered products"


def _mix_inputs(
    inputs: PlanInputs, shares: Mapping[str, float], total_kg: float | None
) -> PlanInputs:
    """Inputs whose only orders are the mix at ``total_kg`` (None: as much as fits)."""
    orders = tuple(
        OrderData(
            product=p,
            min_kg=0.0 if total_kg is None else share * total_kg,
            max_kg=math.inf if total_kg is None else share * total_kg,
            name=f"mix {p}",
        )
        for p, share in sorted(shares.items())
    )
    return dataclasses.replace(
        inputs, orders=orders, objective=Objective.MOST_KG, fixed_output_kg=None
    )


@dataclass
class CapacityResult:
    """The most a plant makes with a fixed product mix.

    Parameters
    ----------
    shares : dict of str to float
        Mix proportions (sum 1).
    mix_source : str
        Where the shares came from.
    total_kg : float
        Most kg over the scenario's shifts with that mix [kg].
    horizon_hours : float
        Hours of the scenario's shifts [h].
    kg_per_hour : float
        ``total_kg / horizon_hours`` [kg/h].
    kg_per_week : float
        ``total_kg / shifts * shifts_per_week`` [kg/week].
    shifts_per_week : float
        Shifts a week assumed [-].
    free_mix_kg : float
        Most kg over the horizon when the mix may change freely [kg] (the
        search's upper end).
    solves : int
        Plans solved in the search [-].
    plan : optimizer.planning.results.PlanResult
        The plan at ``total_kg`` (with utilisation and shadow prices).
    limit : optimizer.planning.results.PlanResult or None
        The diagnosis just above ``total_kg`` (what runs out first).
    """

    shares: dict[str, float]
    mix_source: str
    total_kg: float
    horizon_hours: float
    kg_per_hour: float
    kg_per_week: float
    shifts_per_week: float
    free_mix_kg: float
    solves: int
    plan: PlanResult
    limit: PlanResult | None


def max_mix_capacity(
    inputs: PlanInputs,
    shares: Mapping[str, float],
    options: SolveOptions,
    *,
    shifts_per_week: float,
    mix_source: str,
    tolerance: float = CAPACITY_TOLERANCE,
) -> CapacityResult:
    """Most kg with fixed mix proportions, by bisection on the total.

    The planner is asked for the most kg of the mix's products with the mix
    free (an upper end ``U``); then each step fixes every product's kg to its
    share of a trial total ``X`` (order minimum = maximum = share × X) and
    asks whether a plan exists. Making less of a product never makes a plan
    infeasible (batches may be loaded below their pattern, tunnel minutes
    fall with kg), so feasibility is monotone in ``X``, and the free-mix plan
    itself shows ``X = min_p kg_p / share_p`` is feasible (a lower end).
    Bisection between the two converges to the largest feasible total within
    ``tolerance`` (relative). A final solve at that total gives utilisation and shadow
    prices; one just above it, with the elastic diagnosis, names what runs
    out first.

    Parameters
    ----------
    inputs : optimizer.planning.inputs.PlanInputs
        Planner inputs of the scenario.
    shares : mapping of str to float
        Product → share (sum 1).
    options : optimizer.planning.inputs.SolveOptions
        Solver options for every solve.
    shifts_per_week : float
        Shifts a week, for kg per week [-].
    mix_source : str
        Where the shares came from (for the report).
    tolerance : float
        Relative search width at which to stop [-].

    Returns
    -------
    CapacityResult
        The capacity and the plans behind it.
    """
    quick = dataclasses.replace(options, shadow_prices=False, diagnose=False)
    solves = 0
    free = plan_buckets(_mix_inputs(inputs, shares, None), quick)
    solves += 1
    upper = free.total_kg if free.status.has_plan else 0.0
    low, high = 0.0, upper
    if upper > 0:
        # the free-mix plan, cut down to the mix, is a plan: a lower end for the search
        made = {p: 0.0 for p in shares}
        for r in free.runs:
            if r.product in made:
                made[r.product] += r.kg
        low = min(made[p] / share for p, share in shares.items()) * (1.0 - 1e-9)
        if plan_buckets(_mix_inputs(inputs, shares, upper), quick).status.has_plan:
            low = upper
        solves += 1
        while high - low > tolerance * high:
            mid = 0.5 * (low + high)
            solves += 1
            if plan_buckets(_mix_inputs(inputs, shares, mid), quick).status.has_plan:
                low = mid
            else:
                high = mid
    final = plan_buckets(_mix_inputs(inputs, shares, low), options)
    solves += 1
    limit = None
    if high > low or low == 0:
        probe = high if high > low else max(upper, 1.0)
        limit = plan_buckets(_mix_inputs(inputs, shares, probe), options)
        solves += 1
        if limit.status.has_plan:
            limit = None
    hours = sum(s.minutes for s in inputs.shifts) / 60.0
    n = len(inputs.shifts)
    return CapacityResult(
        shares=dict(shares),
        mix_source=mix_source,
        total_kg=low,
        horizon_hours=hours,
        kg_per_hour=low / hours if hours > 0 else 0.0,
        kg_per_week=low / n * shifts_per_week if n else 0.0,
        shifts_per_week=shifts_per_week,
        free_mix_kg=upper,
        solves=solves,
        plan=final,
        limit=limit,
    )


FULL_USE = 0.99
"""Utilisation [-] from which a machine counts as full in a shift."""


def full_machines(result: PlanResult) -> list[str]:
    """Machines whose time runs out in a plan: one line each, fullest first.

    At a capacity limit the total is fixed by the mix, so the shadow prices
    of machine time say little; what limits the total is the machines used
    (nearly) to the last minute. A machine is listed when its utilisation is
    at least :data:`FULL_USE` in some shift.
    """
    shifts: dict[str, list[tuple[str, float]]] = {}
    kinds: dict[str, str] = {}
    for u in result.machine_use:
        kinds[u.machine] = u.kind
        shifts.setdefault(u.machine, []).append((u.shift, u.utilisation))
    rows = []
    for machine, uses in shifts.items():
        full = [s for s, x in uses if x >= FULL_USE]
        if full:
            mean = sum(x for _, x in uses) / len(uses)
            where = "every shift" if len(full) == len(uses) else ", ".join(full)
            rows.append(
                (
                    mean,
                    f"{kinds[machine]} {machine}: full in {where} "
                    f"(mean {100 * mean:.0f} % of available minutes)",
                )
            )
    return [text for _, text in sorted(rows, key=lambda r: -r[0])]


def capacity_tables(cap: CapacityResult) -> dict[str, pd.DataFrame]:
    """Tables of a capacity run: the mix, the limits, and the plan at capacity."""
    mix = pd.DataFrame(
        [
            {
                "product": p,
                "share": share,
                "kg": share * cap.total_kg,
                "kg_per_hour": share * cap.kg_per_hour,
                "kg_per_week": share * cap.kg_per_week,
            }
            for p, share in sorted(cap.shares.items())
        ],
        columns=["product", "share", "kg", "kg_per_hour", "kg_per_week"],
    )
    limits = (
        pd.DataFrame(
            [
                (s.kind, s.subject, s.shift, s.amount, s.unit, s.message)
                for s in cap.limit.shortfalls
            ],
            columns=["kind", "subject", "shift", "amount", "unit", "message"],
        )
        if cap.limit is not None
        else pd.DataFrame(columns=["kind", "subject", "shift", "amount", "unit", "message"])
    )
    tables = {"capacity_mix": mix, "capacity_limits": limits}
    tables.update(plan_tables(cap.plan))
    return tables
