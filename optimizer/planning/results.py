"""Plan results: typed records, pandas tables and a text summary.

The solver layer (:mod:`optimizer.planning.solve`) fills a :class:`PlanResult`; this
module turns it into the tables a shift planner reads: batches per oven per
shift, tunnel runs with belt speed and loading, totals, utilisation, shadow
prices of machine time, slack per constraint group, the bottleneck, and -
when nothing fits - the smallest shortfalls that would make the orders fit.

Units: minutes [min], kilograms [kg], belt speed [m/min]. Shadow prices are
in objective units per extra machine hour (kg/h for most kg), positive when
the extra hour improves the plan.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import Enum

import pandas as pd

from optimizer.planning.inputs import Objective
from optimizer.planning.schedule import Schedule

CAUTION = (
    "Caution: dwell times and belt speeds are model estimates for the largest piece "
    "entered. Core-temperature, lethality and cooling limits come from the plant's "
    "food-safety plan and the local regulator, not from this tool; validate every "
    "plan with calibrated probes in the thickest pieces at the coldest spot before use."
)

ELASTIC_STOPPED = "elastic re-solve stopped"
"""Start of the note when the elastic re-solve did not prove its shortfalls smallest."""

OBJECTIVE_UNITS = {
    Objective.MOST_KG: "kg",
    Objective.MOST_VALUE: "value",
    Objective.SOONEST: "weighted completion shift",
    Objective.LEAST_ENERGY: "kJ",
}


class SolveStatus(Enum):
    """Outcome of a plan solve.

    ``OPTIMAL``: proven optimal within the requested relative gap.
    ``FEASIBLE_WITH_GAP``: a plan was found but the time limit stopped the
    proof; see ``PlanResult.gap``. ``INFEASIBLE``: no plan meets every order
    minimum with the machines available; ``PlanResult.shortfalls`` says what
    is missing. ``NO_SOLUTION_IN_TIME``: the time limit passed before any
    plan was found. ``UNBOUNDED`` and ``ERROR`` should not occur with valid
    inputs and mean a bug or a solver failure; ``PlanResult.messages`` says
    more.
    """

    OPTIMAL = "optimal"
    FEASIBLE_WITH_GAP = "feasible_with_gap"
    INFEASIBLE = "infeasible"
    NO_SOLUTION_IN_TIME = "no_solution_in_time"
    UNBOUNDED = "unbounded"
    ERROR = "error"

    @property
    def has_plan(self) -> bool:
        """True when the result carries a plan."""
        return self in (SolveStatus.OPTIMAL, SolveStatus.FEASIBLE_WITH_GAP)


@dataclass(frozen=True)
class BatchContent:
    """One product in a planned batch load.

    Parameters
    ----------
    product : str
        Product key.
    trays : int
        Tray positions of this product in the load pattern [-].
    kg_per_batch : float
        Most kg of the product per batch (full trays) [kg].
    kg : float
        kg of the product planned over all batches of this line [kg].
    """

    product: str
    trays: int
    kg_per_batch: float
    kg: float


@dataclass(frozen=True)
class PlannedBatch:
    """Batches of one load in one oven and shift.

    Parameters
    ----------
    oven, shift, setting : str
        Keys.
    load : str
        Load key.
    description : str
        Readable load description.
    batches : int
        Number of batches [-].
    cook_min : float
        Cook dwell per batch (slowest product) [min].
    cycle_min : float
        Cook plus load and unload per batch [min].
    contents : tuple of BatchContent
        Products in the load.
    """

    oven: str
    shift: str
    setting: str
    load: str
    description: str
    batches: int
    cook_min: float
    cycle_min: float
    contents: tuple[BatchContent, ...]

    @property
    def minutes(self) -> float:
        """Oven minutes these batches take [min]."""
        return self.batches * self.cycle_min

    @property
    def kg(self) -> float:
        """kg planned through these batches [kg]."""
        return sum(c.kg for c in self.contents)


@dataclass(frozen=True)
class TunnelRun:
    """kg of one product from one oven setting through one tunnel option in a shift.

    Parameters
    ----------
    tunnel, shift, product, oven, oven_setting, tunnel_setting, loading : str
        Keys.
    belt_speed_m_per_min : float
        Belt speed [m/min].
    rate_kg_per_min : float
        Throughput at that speed and loading [kg/min].
    kg : float
        kg planned [kg].
    chill_min : float
        Residence time the chill rule needs [min].
    """

    tunnel: str
    shift: str
    product: str
    oven: str
    oven_setting: str
    tunnel_setting: str
    loading: str
    belt_speed_m_per_min: float
    rate_kg_per_min: float
    kg: float
    chill_min: float

    @property
    def minutes(self) -> float:
        """Belt minutes of this run [min]."""
        return self.kg / self.rate_kg_per_min


@dataclass(frozen=True)
class MachineUse:
    """Minutes used on one machine in one shift.

    Parameters
    ----------
    machine, kind, shift : str
        Machine key, ``"oven"`` or ``"tunnel"``, shift key.
    used_min : float
        Minutes used, changeovers included [min].
    changeover_min : float
        Of which changeovers [min].
    available_min : float
        Available minutes [min].
    """

    machine: str
    kind: str
    shift: str
    used_min: float
    changeover_min: float
    available_min: float

    @property
    def utilisation(self) -> float:
        """Used over available minutes [-] (0 when nothing is available)."""
        return self.used_min / self.available_min if self.available_min > 0 else 0.0


@dataclass(frozen=True)
class ShadowPrice:
    """Marginal value of one more hour on a machine in a shift.

    Parameters
    ----------
    machine, kind, shift : str
        Machine key, ``"oven"`` or ``"tunnel"``, shift key.
    per_hour : float
        Objective improvement per extra machine hour [objective units/h]
        (kg/h for most kg), from the LP with the on/off choices (settings,
        tunnel runs) fixed at the plan and batch counts continuous.
    """

    machine: str
    kind: str
    shift: str
    per_hour: float


@dataclass(frozen=True)
class ConstraintSlack:
    """Slack summary of one constraint group.

    Parameters
    ----------
    group : str
        ``oven_time``, ``tunnel_time``, ``demand_min``, ``demand_max``, ...
    rows : int
        Number of rows [-].
    binding : int
        Rows with (near) zero slack [-].
    total_slack, smallest_slack : float
        Sum and least slack in the group's unit (minutes or kg).
    unit : str
        Unit of the slack.
    """

    group: str
    rows: int
    binding: int
    total_slack: float
    smallest_slack: float
    unit: str


@dataclass(frozen=True)
class Shortfall:
    """What is missing for the orders to fit, from the elastic re-solve.

    Parameters
    ----------
    kind : str
        ``"order"`` (kg short of a minimum), ``"output"`` (kg short of the
        fixed output) or ``"machine"`` (minutes more needed).
    subject : str
        Order label(s) or machine key.
    shift : str
        Due shift, or the shift needing minutes.
    amount : float
        kg short [kg] or minutes needed [min].
    unit : str
        ``"kg"`` or ``"min"``.
    message : str
        One line for the planner.
    rule : str
        The rule that binds, one of :data:`optimizer.planning.schedule.RULES`
        (``hot_hold``, ``belt_speed``, ``residence``, ``shift_end``,
        ``oven_minutes``, ``order``); empty when not known.
    """

    kind: str
    subject: str
    shift: str
    amount: float
    unit: str
    message: str
    rule: str = ""


@dataclass(frozen=True)
class Bottleneck:
    """The machine that limits the plan most.

    Parameters
    ----------
    machine, kind : str
        Machine key and ``"oven"`` or ``"tunnel"``.
    per_hour : float
        Its largest shadow price over shifts [objective units/h].
    utilisation : float
        Its mean utilisation over the horizon [-].
    reason : str
        How it was chosen.
    """

    machine: str
    kind: str
    per_hour: float
    utilisation: float
    reason: str


@dataclass(frozen=True)
class PlanResult:
    """A solved plan (or the reason there is none).

    Parameters
    ----------
    status : SolveStatus
        Outcome.
    objective : Objective
        What was optimised.
    objective_value : float or None
        Objective of the plan in natural units (see ``objective_unit``),
        tie-break terms excluded.
    objective_unit : str
        Unit of the objective.
    best_bound : float or None
        Best bound the solver proved, same sense and units (tie-break
        terms included).
    gap : float or None
        Relative MIP gap reported by the solver [-].
    solver : str
        Solver that produced the plan.
    build_seconds, solve_seconds : float
        Wall time to build the model (candidates, column generation, PuLP)
        and to solve it (MILP plus shadow-price and diagnosis re-solves) [s].
    total_kg : float
        kg through the tunnels over the horizon [kg].
    shifts : tuple of str
        Shift keys in order.
    batches, runs : tuple
        Planned batches and tunnel runs, sorted by machine, shift and key.
    machine_use : tuple of MachineUse
        Per machine and shift.
    shadow_prices : tuple of ShadowPrice
        Per machine and shift (empty when not computed).
    slacks : tuple of ConstraintSlack
        Per constraint group.
    shortfalls : tuple of Shortfall
        When infeasible: what is missing, smallest first.
    excluded : mapping
        Ordered product -> reasons it cannot be made on this plant.
    mixed_loads : int
        Mixed loads in the model [-].
    column_generation_rounds : int
        Pricing rounds run (0 when the mixed loads were enumerated) [-].
    messages : tuple of str
        Notes (solver fallback, time limit, ...).
    schedule : Schedule or None
        The timed schedule of this plan (:mod:`optimizer.planning.scheduler`);
        when present, ``objective_value``, ``total_kg``, ``batches``, ``runs``
        and ``machine_use`` are the schedule's, and ``best_bound`` is the
        bucketed MILP's bound (an upper bound, for maximising objectives).
    bucket_value, bucket_kg : float or None
        Objective [objective units] and kg [kg] of the bucketed MILP's plan
        (machine minutes per shift, fill and drain counted; no cuts), the
        bound the schedule is measured against; None without a schedule.
    schedule_rounds : int
        Cut-and-resolve rounds run to make the plan fit a schedule [-].
    schedule_seconds : float
        Wall time of scheduling and the re-solves of those rounds [s].
    scheduled_plan : PlanResult or None
        The bucketed plan (whole trays) the schedule was made from: what an
        independent check of the schedule compares it with.
    """

    status: SolveStatus
    objective: Objective
    objective_value: float | None
    objective_unit: str
    best_bound: float | None
    gap: float | None
    solver: str
    build_seconds: float
    solve_seconds: float
    total_kg: float
    shifts: tuple[str, ...]
    batches: tuple[PlannedBatch, ...] = ()
    runs: tuple[TunnelRun, ...] = ()
    machine_use: tuple[MachineUse, ...] = ()
    shadow_prices: tuple[ShadowPrice, ...] = ()
    slacks: tuple[ConstraintSlack, ...] = ()
    shortfalls: tuple[Shortfall, ...] = ()
    excluded: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    mixed_loads: int = 0
    column_generation_rounds: int = 0
    messages: tuple[str, ...] = ()
    schedule: Schedule | None = None
    bucket_value: float | None = None
    bucket_kg: float | None = None
    schedule_rounds: int = 0
    schedule_seconds: float = 0.0
    scheduled_plan: PlanResult | None = None


def oven_table(result: PlanResult) -> pd.DataFrame:
    """Batches per oven and shift.

    Columns: oven, shift, load, setting, batches, cook_min [min], minutes
    [min], kg [kg], products.
    """
    cols = ["oven", "shift", "load", "setting", "batches", "cook_min", "minutes", "kg", "products"]
    data = [
        (
            b.oven,
            b.shift,
            b.description,
            b.setting,
            b.batches,
            b.cook_min,
            b.minutes,
            b.kg,
            ", ".join(c.product for c in b.contents),
        )
        for b in result.batches
    ]
    return pd.DataFrame(data, columns=cols)


def tunnel_table(result: PlanResult) -> pd.DataFrame:
    """Tunnel runs per shift.

    Columns: tunnel, shift, product, oven, oven_setting, tunnel_setting,
    loading, belt_speed_m_per_min [m/min], kg [kg], minutes [min].
    """
    cols = [
        "tunnel",
        "shift",
        "product",
        "oven",
        "oven_setting",
        "tunnel_setting",
        "loading",
        "belt_speed_m_per_min",
        "kg",
        "minutes",
    ]
    data = [
        (
            r.tunnel,
            r.shift,
            r.product,
            r.oven,
            r.oven_setting,
            r.tunnel_setting,
            r.loading,
            r.belt_speed_m_per_min,
            r.kg,
            r.minutes,
        )
        for r in result.runs
    ]
    return pd.DataFrame(data, columns=cols)


def totals_table(result: PlanResult) -> pd.DataFrame:
    """kg per product (rows) and shift (columns) with a ``total`` column [kg]."""
    df = tunnel_table(result)
    if df.empty:
        return pd.DataFrame(columns=[*result.shifts, "total"])
    t = df.pivot_table(index="product", columns="shift", values="kg", aggfunc="sum", fill_value=0)
    t = t.reindex(columns=list(result.shifts), fill_value=0.0)
    t["total"] = t.sum(axis=1)
    return t


def utilisation_table(result: PlanResult) -> pd.DataFrame:
    """Minutes used and utilisation per machine and shift.

    Columns: machine, kind, shift, used_min, changeover_min, available_min
    [min], utilisation [-].
    """
    cols = ["machine", "kind", "shift", "used_min", "changeover_min", "available_min"]
    df = pd.DataFrame(
        [
            (u.machine, u.kind, u.shift, u.used_min, u.changeover_min, u.available_min)
            for u in result.machine_use
        ],
        columns=cols,
    )
    df["utilisation"] = [u.utilisation for u in result.machine_use]
    return df


def shadow_price_table(result: PlanResult) -> pd.DataFrame:
    """Shadow prices per machine and shift [objective units per extra hour]."""
    return pd.DataFrame(
        [(s.machine, s.kind, s.shift, s.per_hour) for s in result.shadow_prices],
        columns=["machine", "kind", "shift", "per_hour"],
    )


def slack_table(result: PlanResult) -> pd.DataFrame:
    """Slack per constraint group."""
    return pd.DataFrame(
        [
            (c.group, c.rows, c.binding, c.total_slack, c.smallest_slack, c.unit)
            for c in result.slacks
        ],
        columns=["group", "rows", "binding", "total_slack", "smallest_slack", "unit"],
    )


def shortfall_table(result: PlanResult) -> pd.DataFrame:
    """Shortfalls from the elastic re-solve, smallest first."""
    return pd.DataFrame(
        [
            (s.kind, s.subject, s.shift, s.amount, s.unit, s.rule, s.message)
            for s in result.shortfalls
        ],
        columns=["kind", "subject", "shift", "amount", "unit", "rule", "message"],
    )


def bottleneck(result: PlanResult) -> Bottleneck | None:
    """The machine with the highest shadow price, else the highest utilisation.

    Returns None when the result has no plan.
    """
    if not result.status.has_plan or not result.machine_use:
        return None
    kinds = {u.machine: u.kind for u in result.machine_use}
    util: dict[str, list[float]] = {}
    for u in result.machine_use:
        util.setdefault(u.machine, []).append(u.utilisation)
    mean_util = {m: sum(v) / len(v) for m, v in util.items()}
    best_price: dict[str, float] = {}
    for s in result.shadow_prices:
        best_price[s.machine] = max(best_price.get(s.machine, 0.0), s.per_hour)
    priced = {m: v for m, v in best_price.items() if v > 1e-9}
    if priced:
        m = max(sorted(priced), key=lambda k: (priced[k], mean_util.get(k, 0.0)))
        return Bottleneck(m, kinds[m], priced[m], mean_util.get(m, 0.0), "highest shadow price")
    m = max(sorted(mean_util), key=lambda k: mean_util[k])
    return Bottleneck(
        m, kinds[m], best_price.get(m, 0.0), mean_util[m], "highest utilisation (no priced time)"
    )


def plan_tables(result: PlanResult) -> dict[str, pd.DataFrame]:
    """All plan tables by name (for CSV/XLSX export)."""
    return {
        "ovens": oven_table(result),
        "tunnels": tunnel_table(result),
        "totals": totals_table(result).reset_index(),
        "utilisation": utilisation_table(result),
        "shadow_prices": shadow_price_table(result),
        "slack": slack_table(result),
        "shortfalls": shortfall_table(result),
    }


def summary_text(result: PlanResult) -> str:
    """A short plain-text summary for the terminal."""
    lines = [f"Plan status: {result.status.value} (solver {result.solver})"]
    if result.objective_value is not None:
        lines.append(
            f"Objective ({result.objective.value}): {result.objective_value:,.1f} "
            f"{result.objective_unit}"
            + (f", gap {100 * result.gap:.2f} %" if result.gap is not None else "")
        )
    lines.append(f"Total through the tunnels: {result.total_kg:,.1f} kg")
    lines.append(
        f"Model build {result.build_seconds:.2f} s, solve {result.solve_seconds:.2f} s; "
        f"{result.mixed_loads} mixed loads"
        + (
            f" ({result.column_generation_rounds} pricing rounds)"
            if result.column_generation_rounds
            else ""
        )
    )
    bn = bottleneck(result)
    if bn is not None:
        lines.append(
            f"Bottleneck: {bn.kind} {bn.machine} ({bn.reason}): {bn.per_hour:,.1f} "
            f"{result.objective_unit} per extra hour, mean utilisation {100 * bn.utilisation:.0f} %"
        )
    if result.status.has_plan:
        for shift in result.shifts:
            kg = sum(r.kg for r in result.runs if r.shift == shift)
            nb = sum(b.batches for b in result.batches if b.shift == shift)
            lines.append(f"  {shift}: {nb} batches, {kg:,.1f} kg")
    if result.shortfalls:
        if any(m.startswith(ELASTIC_STOPPED) for m in result.messages):
            lines.append("Nothing fits every order; changes that would make it fit (see the note):")
        else:
            lines.append("Nothing fits every order; the smallest changes that would make it fit:")
        lines.extend(f"  - {s.message}" for s in result.shortfalls)
    for p, reasons in result.excluded.items():
        lines.append(f"Cannot make {p} on this plant: {'; '.join(reasons)}")
    lines.extend(result.messages)
    lines.append(CAUTION)
    return "\n".join(lines)
