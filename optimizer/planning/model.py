"""The shift-plan MILP, built with PuLP from the candidate loads and routes.

Only this module and :mod:`optimizer.planning.solve` import PuLP.

Variables (per shift ``s``)

* ``n[L, s]`` integer: batches of load ``L`` (oven, setting, trays).
* ``w[L, p, s]`` >= 0: kg of product ``p`` the batches of ``L`` carry
  [kg]; ``w <= kg(L, p) * n`` (a batch may be loaded below its pattern).
* ``x[r, s]`` >= 0: kg through tunnel route ``r`` (product, oven, oven
  setting, tunnel, tunnel setting, loading) [kg]; minutes ``x / rate``.
* ``z[o, os, s]`` binary: oven ``o`` runs setting ``os`` in the shift (only
  when the oven has a changeover time).
* ``y[t, p, ts, s]`` binary: tunnel ``t`` runs product ``p`` at setting
  ``ts`` (only when the tunnel has a changeover time).
* ``f[g, s]`` binary (SOONEST only): demand group ``g`` complete by the end
  of shift ``s``.

Constraints

* oven time: ``sum cycle * n + changeover * (sum z - 1) <= minutes`` (the
  first setting of a shift is free); link ``sum cycle * n <= minutes * z``;
* tunnel time: ``sum x / rate + changeover * (sum y - 1) <= span``, and the
  same plus ``residence * y`` per run (see *Fill and drain*); link
  ``sum x / rate <= span * y`` per run;
* flow: for each (product, oven, setting, shift) the kg unloaded equal the
  kg the tunnels take from there in that shift;
* demand: cumulative kg of a product by each due shift >= the cumulative
  order minimums due by then; total over the horizon <= the sum of the
  order maximums;
* LEAST_ENERGY: total kg >= the fixed output.

Fill and drain (:func:`time_caps`)

A tunnel's belt takes nothing until the first batch of the shift is out: the
``fill`` is the shortest load + cook + unload + transfer of any route into
it (its own stops may sit in that time, the belt being empty). Its last
pieces need their whole residence ``L / v`` on the belt before the shift
ends. The drain is the residence of the slowest run fed in the shift: fed
in order of residence, fastest first, each run can go at its own speed and
the slowest one drains last. It is one row per run, ``minutes + changeovers
+ residence(run) * y[run] <= span`` (``drain`` rows), beside the tunnel-time
row. The ``span`` is the tunnel's available minutes less the part of the
fill its own stops do not cover. When the shifts run back to back (``PlanInputs.back_to_back``)
the belt may carry pieces into the next shift and only the last shift has a
drain. An oven's batches must be out early enough for their product to be
transferred and leave the belt: the oven's minutes are capped at the latest
such unload of any tunnel it feeds. Machine-minute cuts
(``build_model(cuts=...)``) take further minutes off a machine in a shift.

The model is always a minimisation (most kg becomes ``min -kg``) so duals
read the same way for every solver: ``pi = d(objective)/d(rhs)``. A tiny
tie-break term (total budget ``TIE_BREAK`` objective units) prefers fewer
machine minutes; variables and rows are created in sorted-key order.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pulp
import scipy.sparse as sp

from optimizer.planning.inputs import Objective, PlanInputs, TunnelData
from optimizer.planning.loads import BatchLoad, Candidates, ShiftPattern, TunnelRoute, make_pattern

TIE_BREAK = 1e-3
"""Largest total weight of the tie-break term [objective units]."""

ELASTIC_EXTRA_CAP_FACTOR = 1.0
"""Extra minutes the elastic model may give a machine in one shift, as a
multiple of the longest shift [-]."""


@dataclass(frozen=True)
class DemandGroup:
    """Orders of one product due by one shift, with cumulative minimum.

    Parameters
    ----------
    product : str
        Product key.
    due : int
        Shift index (0-based) by whose end the minimum is due.
    cum_min_kg : float
        Minimum of these orders plus those of the same product due earlier
        [kg].
    own_min_kg : float
        Minimum of these orders alone [kg].
    orders : tuple of str
        Order labels.
    weight : float
        Sum of the orders' weights [-].
    """

    product: str
    due: int
    cum_min_kg: float
    own_min_kg: float
    orders: tuple[str, ...]
    weight: float


def demand_groups(inputs: PlanInputs) -> list[DemandGroup]:
    """Group orders by (product, due shift), cumulative minimums, sorted."""
    last = len(inputs.shifts) - 1
    groups: dict[tuple[str, int], list] = defaultdict(list)
    for o in inputs.orders:
        due = last if o.due_shift is None else inputs.shift_index(o.due_shift)
        groups[(o.product, due)].append(o)
    out = []
    running: dict[str, float] = defaultdict(float)
    for (p, due), orders in sorted(groups.items()):
        own = sum(o.min_kg for o in orders)
        running[p] += own
        out.append(
            DemandGroup(
                p,
                due,
                running[p],
                own,
                tuple(o.label for o in orders),
                sum(o.weight for o in orders),
            )
        )
    return out


def product_caps(inputs: PlanInputs) -> dict[str, float]:
    """Most kg of each ordered product over the horizon (sum of order maximums)."""
    caps: dict[str, float] = defaultdict(float)
    for o in inputs.orders:
        caps[o.product] += o.max_kg
    return dict(caps)


LEVEL_MERGE = 0.05
"""Residences within this share of a level's lowest one share its drain binary [-].

The level drains its lowest residence, so merging only loosens the bound."""


def drain_levels(
    residence: Mapping[tuple[str, str], float],
) -> tuple[list[tuple[float, float]], dict[tuple[str, str], int]]:
    """Residence levels of a tunnel's runs in one shift, for the drain.

    Parameters
    ----------
    residence : mapping
        (product, tunnel setting) -> residence of the run's fastest route [min].

    Returns
    -------
    steps : list of (float, float)
        Per level, fastest first: its residence and the step from the level
        before (the first step is its residence) [min]. The drain of a shift
        is the sum of the steps of the levels in use, i.e. the residence of
        the slowest level fed.
    of_run : dict
        (product, tunnel setting) -> level index.
    """
    steps: list[tuple[float, float]] = []
    of_run: dict[tuple[str, str], int] = {}
    for run, res in sorted(residence.items(), key=lambda kv: (kv[1], kv[0])):
        if not steps or res > steps[-1][0] * (1.0 + LEVEL_MERGE) + 1e-9:
            prev = steps[-1][0] if steps else 0.0
            steps.append((res, res - prev))
        of_run[run] = len(steps) - 1
    return steps, of_run


def _runs_by_tunnel_shift(run_terms: Mapping) -> dict[tuple[str, str], list]:
    out: dict[tuple[str, str], list] = defaultdict(list)
    for key in run_terms:
        out[(key[0], key[3])].append(key)
    return out


def residence_min(route: TunnelRoute, tunnel: TunnelData) -> float:
    """Residence of a piece on the belt at the route's speed, ``L / v`` [min]."""
    return tunnel.length_m / route.belt_speed_m_per_min


@dataclass(frozen=True)
class TimeCaps:
    """Minutes each machine can use in each shift once fill and drain are counted.

    Attributes
    ----------
    oven : dict
        (oven, shift) -> most minutes of batches and changeovers [min]: the
        available minutes, or less when the batches must be out earlier for
        their product to be transferred and leave a tunnel by the shift end.
    tunnel : dict
        (tunnel, shift) -> span for feed, changeovers and drain [min]: the
        available minutes less the part of the fill the tunnel's own stops
        do not cover.
    fill : dict
        tunnel -> shortest load + cook + unload + transfer of a route into it
        [min] (0 when no route reaches it).
    drain : dict
        shift -> True when the belt must be empty at the end of the shift.
    residence : dict
        route key -> residence at the route's belt speed [min].
    cuts : dict
        (machine, shift) -> minutes taken off by schedule cuts [min].
    """

    oven: dict[tuple[str, str], float]
    tunnel: dict[tuple[str, str], float]
    fill: dict[str, float]
    drain: dict[str, bool]
    residence: dict[str, float]
    cuts: dict[tuple[str, str], float]


def time_caps(
    inputs: PlanInputs,
    cand: Candidates,
    cuts: Mapping[tuple[str, str], float] | None = None,
) -> TimeCaps:
    """Fill, drain and the minutes left to each machine in each shift.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    cand : Candidates
        Cook options and routes.
    cuts : mapping, optional
        (machine, shift) -> minutes to take off that machine's cap [min]
        (from a schedule that could not place the plan).

    Returns
    -------
    TimeCaps
    """
    cuts = dict(cuts or {})
    ovens = {o.name: o for o in inputs.ovens}
    tunnels = {t.name: t for t in inputs.tunnels}
    last = inputs.shifts[-1].name
    drain = {s.name: (not inputs.back_to_back) or s.name == last for s in inputs.shifts}
    residence = {r.key: residence_min(r, tunnels[r.tunnel]) for r in cand.routes}
    fill: dict[str, float] = {}
    for t, tun in tunnels.items():
        firsts = [
            ovens[r.oven].load_unload_min + cand.cook[r.source].cook_min + tun.transfer_min
            for r in cand.routes
            if r.tunnel == t and r.source in cand.cook
        ]
        fill[t] = min(firsts) if firsts else 0.0
    quickest: dict[tuple[str, str], float] = {}
    for r in cand.routes:
        k = (r.oven, r.tunnel)
        quickest[k] = min(quickest.get(k, math.inf), residence[r.key])
    oven_cap: dict[tuple[str, str], float] = {}
    tunnel_cap: dict[tuple[str, str], float] = {}
    for s in inputs.shifts:
        common = sum(x.minutes for x in s.stops if x.machine is None)
        for t in tunnels:
            own = sum(x.minutes for x in s.stops if x.machine == t)
            cap = s.available(t) - max(0.0, fill[t] - own) - cuts.get((t, s.name), 0.0)
            tunnel_cap[(t, s.name)] = max(cap, 0.0)
        for o in ovens:
            ends = [
                s.window(t) - common - tunnels[t].transfer_min - (res if drain[s.name] else 0.0)
                for (o2, t), res in quickest.items()
                if o2 == o
            ]
            cap = min(s.available(o), max(ends)) if ends else s.available(o)
            oven_cap[(o, s.name)] = max(cap - cuts.get((o, s.name), 0.0), 0.0)
    return TimeCaps(oven_cap, tunnel_cap, fill, drain, residence, cuts)


@dataclass
class PlanModel:
    """A built plan model: the PuLP problem and its index maps.

    Attributes
    ----------
    prob : pulp.LpProblem
        The problem (always a minimisation).
    inputs : PlanInputs
        Planner inputs.
    loads : dict
        Load key -> BatchLoad, for every load in the model.
    routes : dict
        Route key -> TunnelRoute.
    n, w, x, z, y, f : dict
        Variables by key (see the module docstring).
    short, extra : dict
        Elastic variables: demand group index (or ``"output"``) -> kg short;
        (machine, shift) -> extra minutes. Empty unless elastic.
    rows : dict
        Constraint group name -> {key: LpConstraint}.
    groups : list of DemandGroup
        Demand groups, index = key of ``rows["demand_min"]``.
    elastic : bool
        Whether this is the elastic (shortfall) model.
    caps : TimeCaps or None
        Fill, drain and the minutes each machine may use per shift.
    u, u_level : dict
        (tunnel, level, shift) -> binary "a run of this residence level or
        slower is fed" and the level's residence [min] (shifts with a drain).
    """

    prob: pulp.LpProblem
    inputs: PlanInputs
    loads: dict[str, BatchLoad]
    routes: dict[str, TunnelRoute]
    n: dict[tuple[str, str], pulp.LpVariable] = field(default_factory=dict)
    w: dict[tuple[str, str, str], pulp.LpVariable] = field(default_factory=dict)
    x: dict[tuple[str, str], pulp.LpVariable] = field(default_factory=dict)
    z: dict[tuple[str, str, str], pulp.LpVariable] = field(default_factory=dict)
    y: dict[tuple[str, str, str, str], pulp.LpVariable] = field(default_factory=dict)
    f: dict[tuple[int, str], pulp.LpVariable] = field(default_factory=dict)
    short: dict[object, pulp.LpVariable] = field(default_factory=dict)
    extra: dict[tuple[str, str], pulp.LpVariable] = field(default_factory=dict)
    rows: dict[str, dict] = field(default_factory=dict)
    groups: list[DemandGroup] = field(default_factory=list)
    elastic: bool = False
    tie_per_min: float = 0.0
    lam: dict[str, pulp.LpVariable] = field(default_factory=dict)
    patterns: dict[str, ShiftPattern] = field(default_factory=dict)
    pattern_mode: bool = False
    caps: TimeCaps | None = None
    u: dict[tuple[str, int, str], pulp.LpVariable] = field(default_factory=dict)
    u_level: dict[tuple[str, int, str], float] = field(default_factory=dict)
    _count: int = 0

    def _var(self, prefix: str, low: float | None, up: float | None, cat: str):
        self._count += 1
        return self.prob.add_variable(f"{prefix}{self._count:07d}", low, up, cat=cat)

    @property
    def integer_vars(self) -> list[pulp.LpVariable]:
        """All integer and binary variables."""
        return [
            *self.n.values(),
            *self.z.values(),
            *self.y.values(),
            *self.f.values(),
            *self.lam.values(),
            *self.u.values(),
        ]

    def add_pattern(self, pattern: ShiftPattern) -> bool:
        """Add an oven-shift pattern (a column) to a pattern-mode model.

        Returns False when the pattern is already in the model.
        """
        if pattern.key in self.patterns:
            return False
        self.patterns[pattern.key] = pattern
        v = self._var("l", 0, 1, pulp.LpInteger)
        self.lam[pattern.key] = v
        self.prob.objective.addterm(v, self.tie_per_min * pattern.minutes)
        self.rows["pattern_choice"][(pattern.oven, pattern.shift)].expr.addterm(v, 1.0)
        caps: dict[tuple[str, str], float] = defaultdict(float)
        for lk, count in pattern.counts:
            load = self.loads[lk]
            for p, kg in load.kg:
                caps[(p, load.setting)] += kg * count
        for (p, os_), kg in sorted(caps.items()):
            row = self.rows["flow"].get((p, pattern.oven, os_, pattern.shift))
            if row is not None:
                row.expr.addterm(v, kg)
        return True

    @property
    def binary_vars(self) -> list[pulp.LpVariable]:
        """All binary (on/off) variables."""
        return [*self.z.values(), *self.y.values(), *self.f.values(), *self.u.values()]

    def available(self, machine: str, shift: str) -> float:
        """Available minutes of a machine in a shift [min]."""
        return next(s for s in self.inputs.shifts if s.name == shift).available(machine)

    def cap(self, machine: str, shift: str) -> float:
        """Minutes the model lets a machine use in a shift (fill, drain, cuts) [min]."""
        if (machine, shift) in self.caps.oven:
            return self.caps.oven[(machine, shift)]
        return self.caps.tunnel[(machine, shift)]

    def add_load(self, load: BatchLoad) -> bool:
        """Add a batch load (a column-generation column) to the built model.

        Returns False when the load is already in the model.
        """
        if load.key in self.loads:
            return False
        self.loads[load.key] = load
        oven = next(o for o in self.inputs.ovens if o.name == load.oven)
        for s in self.inputs.shifts:
            cap = self.cap(oven.name, s.name) + self._extra_cap()
            ub = math.floor(cap / load.cycle_min + 1e-9)
            if ub < 1:
                continue
            nv = self._var("n", 0, ub, pulp.LpInteger)
            self.n[(load.key, s.name)] = nv
            self.prob.objective.addterm(nv, self.tie_per_min * load.cycle_min)
            self.rows["oven_time"][(oven.name, s.name)].expr.addterm(nv, load.cycle_min)
            link = self.rows["oven_link"].get((oven.name, load.setting, s.name))
            if link is not None:
                link.expr.addterm(nv, load.cycle_min)
            for p, kg in load.kg:
                flow = self.rows["flow"].get((p, oven.name, load.setting, s.name))
                if flow is None:
                    continue  # no route takes p from here in this shift (fill, drain)
                wv = self._var("w", 0, None, pulp.LpContinuous)
                self.w[(load.key, p, s.name)] = wv
                row = pulp.LpConstraint(
                    pulp.LpAffineExpression([(wv, 1.0), (nv, -kg)]),
                    pulp.LpConstraintLE,
                    rhs=0.0,
                    name=f"cap{self._count:07d}",
                )
                self.prob.addConstraint(row)
                self.rows["capacity"][(load.key, p, s.name)] = row
                flow.expr.addterm(wv, 1.0)
        return True

    def _extra_cap(self) -> float:
        if not self.elastic:
            return 0.0
        return ELASTIC_EXTRA_CAP_FACTOR * max(
            max(s.minutes, *s.machine_minutes.values()) if s.machine_minutes else s.minutes
            for s in self.inputs.shifts
        )

    def primary_value(self) -> float:
        """The objective in its natural sense and units, from the variable values.

        Most kg [kg], most value [currency], soonest [weighted completion
        shift, 1-based], least energy [kJ]. Tie-break terms excluded.
        """
        obj = self.inputs.objective
        prods = {p.name: p for p in self.inputs.products}
        if obj is Objective.SOONEST:
            total = 0.0
            for gi, g in enumerate(self.groups):
                if g.cum_min_kg <= 0:
                    continue
                done = g.due
                for si in range(g.due):
                    v = self.f.get((gi, self.inputs.shifts[si].name))
                    if v is not None and (v.value() or 0) > 0.5:
                        done = si
                        break
                total += g.weight * (done + 1)
            return total
        total = 0.0
        for (rk, _s), v in self.x.items():
            kg = v.value() or 0.0
            r = self.routes[rk]
            if obj is Objective.MOST_KG:
                total += kg
            elif obj is Objective.MOST_VALUE:
                total += prods[r.product].value_per_kg * kg
            else:
                total += (r.heat_in_kj_per_kg + r.heat_out_kj_per_kg) * kg
        return total


def build_model(
    inputs: PlanInputs,
    cand: Candidates,
    mixed: list[BatchLoad] | tuple[BatchLoad, ...] = (),
    *,
    elastic: bool = False,
    patterns: dict | None = None,
    penalty: float | None = None,
    cuts: Mapping[tuple[str, str], float] | None = None,
) -> PlanModel:
    """Build the plan MILP.

    Two formulations of the ovens share the tunnel, flow and demand parts:
    *compact* (integer batches per load and shift, setting binaries) and
    *patterns* (one binary per oven-shift pattern, exactly one pattern per
    oven and shift; a pattern fixes the batches, settings and changeovers of
    that oven in that shift). Patterns give a much tighter LP (the knapsack
    of each oven-shift is convexified) and are generated by column generation.

    Parameters
    ----------
    inputs : PlanInputs
        Planner inputs.
    cand : Candidates
        Cook options, routes and single loads (from :func:`optimizer.planning.loads.candidates`).
    mixed : sequence of BatchLoad
        Mixed loads to include.
    elastic : bool
        Build the elastic model: non-negative shortfall [kg] on every demand
        minimum (and the fixed output) and extra minutes on every machine,
        minimising their relative size (kg short / minimum kg + extra minutes
        / available minutes). Always feasible. Compact formulation only.
    patterns : dict, optional
        (oven, shift) -> initial ShiftPatterns; selects the pattern
        formulation. An idle pattern is always added.
    penalty : float, optional
        Pattern formulation: cost per kg short of a demand minimum (phase-1
        shortfall variables used while generating columns, so the LP always
        has duals; set their upper bounds to 0 before the final MILP).
    cuts : mapping, optional
        (machine, shift) -> minutes taken off that machine in that shift
        [min], e.g. where a timed schedule could not place the plan.

    Returns
    -------
    PlanModel
    """
    prob = pulp.LpProblem("shift_plan", pulp.LpMinimize)
    m = PlanModel(prob=prob, inputs=inputs, loads={}, routes={}, elastic=elastic)
    m.pattern_mode = patterns is not None
    m.caps = caps = time_caps(inputs, cand, cuts)
    shifts = [s.name for s in inputs.shifts]
    ovens = {o.name: o for o in inputs.ovens}
    tunnels = {t.name: t for t in inputs.tunnels}
    avail = {(mc, s.name): s.available(mc) for s in inputs.shifts for mc in [*ovens, *tunnels]}
    cap = {**caps.oven, **caps.tunnel}
    total_minutes = max(1.0, sum(avail.values()))
    m.tie_per_min = TIE_BREAK / total_minutes
    xcap = m._extra_cap()
    obj = inputs.objective
    prods = {p.name: p for p in inputs.products}
    for g in ("oven_time", "oven_link", "tunnel_time", "tunnel_link", "drain", "flow", "capacity"):
        m.rows[g] = {}
    for g in ("demand_min", "demand_max", "output", "done", "done_order", "pattern_choice"):
        m.rows[g] = {}
    objective_terms: list[tuple[pulp.LpVariable, float]] = []
    penalty_terms: list[tuple[pulp.LpVariable, float]] = []

    # Oven rows (time, link) and setting binaries.
    oven_settings = sorted({(c.oven, c.setting) for c in cand.cook.values()})
    oven_terms: dict[tuple[str, str], list] = defaultdict(list)
    for o, os_ in [] if m.pattern_mode else oven_settings:
        oven = ovens[o]
        for s in shifts:
            if oven.changeover_min > 0:
                zv = m._var("z", 0, 1, pulp.LpInteger)
                m.z[(o, os_, s)] = zv
                oven_terms[(o, s)].append((zv, oven.changeover_min))
    for o in [] if m.pattern_mode else sorted({o for o, _ in oven_settings}):
        oven = ovens[o]
        for s in shifts:
            terms = oven_terms[(o, s)]
            rhs = cap[(o, s)] + (oven.changeover_min if terms else 0.0)
            if elastic:
                ev = m._var("e", 0, xcap, pulp.LpContinuous)
                m.extra[(o, s)] = ev
                terms = [*terms, (ev, -1.0)]
                penalty_terms.append((ev, 1.0 / max(avail[(o, s)], 1.0)))
            row = pulp.LpConstraint(
                pulp.LpAffineExpression(terms),
                pulp.LpConstraintLE,
                rhs=rhs,
                name=f"oven_time_{len(m.rows['oven_time']):05d}",
            )
            prob.addConstraint(row)
            m.rows["oven_time"][(o, s)] = row
    for (o, os_, s), zv in m.z.items():
        row = pulp.LpConstraint(
            pulp.LpAffineExpression([(zv, -(cap[(o, s)] + xcap))]),
            pulp.LpConstraintLE,
            rhs=0.0,
            name=f"oven_link_{len(m.rows['oven_link']):05d}",
        )
        prob.addConstraint(row)
        m.rows["oven_link"][(o, os_, s)] = row

    # Tunnel route variables.
    route_terms_flow: dict[tuple[str, str, str, str], list] = defaultdict(list)
    tunnel_terms: dict[tuple[str, str], list] = defaultdict(list)
    run_terms: dict[tuple[str, str, str, str], list] = defaultdict(list)
    product_shift_x: dict[tuple[str, str], list] = defaultdict(list)
    run_residence: dict[tuple[str, str, str], float] = {}
    for r in cand.routes:
        m.routes[r.key] = r
        res = caps.residence[r.key]
        run_residence[r.run] = min(run_residence.get(r.run, math.inf), res)
        for s in shifts:
            cap_min = cap[(r.tunnel, s)] - (res if caps.drain[s] else 0.0) + xcap
            if cap_min <= 1e-9:
                continue
            xv = m._var("x", 0, r.rate_kg_per_min * cap_min, pulp.LpContinuous)
            m.x[(r.key, s)] = xv
            minutes = 1.0 / r.rate_kg_per_min
            route_terms_flow[(*r.source, s)].append((xv, -1.0))
            tunnel_terms[(r.tunnel, s)].append((xv, minutes))
            run_terms[(*r.run, s)].append((xv, minutes))
            product_shift_x[(r.product, s)].append(xv)
            tie = m.tie_per_min * minutes
            if obj is Objective.MOST_KG:
                objective_terms.append((xv, -1.0 + tie))
            elif obj is Objective.MOST_VALUE:
                objective_terms.append((xv, -prods[r.product].value_per_kg + tie))
            elif obj is Objective.LEAST_ENERGY:
                objective_terms.append((xv, r.heat_in_kj_per_kg + r.heat_out_kj_per_kg + tie))
            else:
                objective_terms.append((xv, tie))
    # Tunnel run binaries (changeovers), residence levels (drain) and time rows.
    levels = {
        (t, s): drain_levels({k[1:3]: run_residence[(t, *k[1:3])] for k in keys_ts})
        for (t, s), keys_ts in _runs_by_tunnel_shift(run_terms).items()
        if caps.drain[s]
    }
    for (t, s), (steps, _of_run) in sorted(levels.items()):
        prev_u = None
        for li, (lo_res, step) in enumerate(steps):
            uv = m._var("u", 0, 1, pulp.LpInteger)
            m.u[(t, li, s)] = uv
            m.u_level[(t, li, s)] = lo_res
            tunnel_terms[(t, s)].append((uv, step))
            if prev_u is not None:  # a slower level in use means every faster one counts
                row = pulp.LpConstraint(
                    pulp.LpAffineExpression([(uv, 1.0), (prev_u, -1.0)]),
                    pulp.LpConstraintLE,
                    rhs=0.0,
                    name=f"drain_{len(m.rows['drain']):05d}",
                )
                prob.addConstraint(row)
                m.rows["drain"][(t, li, s)] = row
            prev_u = uv
    for key in sorted(run_terms):
        t, p, ts, s = key
        tun = tunnels[t]
        drained = (t, s) in levels
        res = run_residence[(t, p, ts)] if drained else 0.0
        big_m = cap[(t, s)] - res + xcap
        uv = m.u[(t, levels[(t, s)][1][(p, ts)], s)] if drained else None
        if tun.changeover_min > 0:
            yv = m._var("y", 0, 1, pulp.LpInteger)
            m.y[key] = yv
            tunnel_terms[(t, s)].append((yv, tun.changeover_min))
            on = yv
            if uv is not None:
                row = pulp.LpConstraint(
                    pulp.LpAffineExpression([(yv, 1.0), (uv, -1.0)]),
                    pulp.LpConstraintLE,
                    rhs=0.0,
                    name=f"drain_{len(m.rows['drain']):05d}",
                )
                prob.addConstraint(row)
                m.rows["drain"][key] = row
        elif uv is not None:
            on = uv
        else:
            continue
        row = pulp.LpConstraint(
            pulp.LpAffineExpression([*run_terms[key], (on, -big_m)]),
            pulp.LpConstraintLE,
            rhs=0.0,
            name=f"tunnel_link_{len(m.rows['tunnel_link']):05d}",
        )
        prob.addConstraint(row)
        m.rows["tunnel_link"][key] = row
    for t, s in sorted(tunnel_terms):
        tun = tunnels[t]
        terms = tunnel_terms[(t, s)]
        has_y = tun.changeover_min > 0
        rhs = cap[(t, s)] + (tun.changeover_min if has_y else 0.0)
        if elastic:
            ev = m._var("e", 0, xcap, pulp.LpContinuous)
            m.extra[(t, s)] = ev
            terms = [*terms, (ev, -1.0)]
            penalty_terms.append((ev, 1.0 / max(avail[(t, s)], 1.0)))
        row = pulp.LpConstraint(
            pulp.LpAffineExpression(terms),
            pulp.LpConstraintLE,
            rhs=rhs,
            name=f"tunnel_time_{len(m.rows['tunnel_time']):05d}",
        )
        prob.addConstraint(row)
        m.rows["tunnel_time"][(t, s)] = row

    # Flow rows: oven kg (added with the loads) minus tunnel kg = 0.
    for key in sorted(route_terms_flow):
        row = pulp.LpConstraint(
            pulp.LpAffineExpression(route_terms_flow[key]),
            pulp.LpConstraintGE if m.pattern_mode else pulp.LpConstraintEQ,
            rhs=0.0,
            name=f"flow_{len(m.rows['flow']):06d}",
        )
        prob.addConstraint(row)
        m.rows["flow"][key] = row

    # Demand.
    m.groups = demand_groups(inputs)
    for gi, g in enumerate(m.groups):
        if g.cum_min_kg <= 0:
            continue
        xs = [v for s in shifts[: g.due + 1] for v in product_shift_x[(g.product, s)]]
        terms = [(v, 1.0) for v in xs]
        if elastic:
            sv = m._var("u", 0, g.cum_min_kg, pulp.LpContinuous)
            m.short[gi] = sv
            terms.append((sv, 1.0))
            penalty_terms.append((sv, 1.0 / g.cum_min_kg))
        elif penalty is not None:
            sv = m._var("u", 0, g.cum_min_kg, pulp.LpContinuous)
            m.short[gi] = sv
            terms.append((sv, 1.0))
            objective_terms.append((sv, penalty))
        row = pulp.LpConstraint(
            pulp.LpAffineExpression(terms),
            pulp.LpConstraintGE,
            rhs=g.cum_min_kg,
            name=f"demand_min_{gi:05d}",
        )
        prob.addConstraint(row)
        m.rows["demand_min"][gi] = row
        if obj is Objective.SOONEST and not elastic:
            prev = None
            for si in range(g.due):
                s = shifts[si]
                fv = m._var("f", 0, 1, pulp.LpInteger)
                m.f[(gi, s)] = fv
                cum = [
                    (v, 1.0) for s2 in shifts[: si + 1] for v in product_shift_x[(g.product, s2)]
                ]
                row = pulp.LpConstraint(
                    pulp.LpAffineExpression([*cum, (fv, -g.cum_min_kg)]),
                    pulp.LpConstraintGE,
                    rhs=0.0,
                    name=f"done_{len(m.rows['done']):06d}",
                )
                prob.addConstraint(row)
                m.rows["done"][(gi, s)] = row
                if prev is not None:
                    row = pulp.LpConstraint(
                        pulp.LpAffineExpression([(prev, 1.0), (fv, -1.0)]),
                        pulp.LpConstraintLE,
                        rhs=0.0,
                        name=f"done_order_{len(m.rows['done_order']):06d}",
                    )
                    prob.addConstraint(row)
                    m.rows["done_order"][(gi, s)] = row
                prev = fv
                # Shifts before completion: sum over s < due of (1 - f).
                objective_terms.append((fv, -g.weight))
    for p, cap in sorted(product_caps(inputs).items()):
        if not math.isfinite(cap):
            continue
        xs = [v for s in shifts for v in product_shift_x[(p, s)]]
        row = pulp.LpConstraint(
            pulp.LpAffineExpression([(v, 1.0) for v in xs]),
            pulp.LpConstraintLE,
            rhs=cap,
            name=f"demand_max_{len(m.rows['demand_max']):05d}",
        )
        prob.addConstraint(row)
        m.rows["demand_max"][p] = row
    if obj is Objective.LEAST_ENERGY and inputs.fixed_output_kg:
        terms = [(v, 1.0) for v in m.x.values()]
        if elastic:
            sv = m._var("u", 0, inputs.fixed_output_kg, pulp.LpContinuous)
            m.short["output"] = sv
            terms.append((sv, 1.0))
            penalty_terms.append((sv, 1.0 / inputs.fixed_output_kg))
        row = pulp.LpConstraint(
            pulp.LpAffineExpression(terms),
            pulp.LpConstraintGE,
            rhs=inputs.fixed_output_kg,
            name="output_00000",
        )
        prob.addConstraint(row)
        m.rows["output"]["total"] = row

    if elastic:
        # Only the relaxation counts (plus the tie-break, so the plan is definite).
        objective_terms = [*penalty_terms] + [
            (v, m.tie_per_min / m.routes[rk].rate_kg_per_min) for (rk, _), v in m.x.items()
        ]
    constant = 0.0
    if obj is Objective.SOONEST and not elastic:
        constant = sum(g.weight * (g.due + 1) for g in m.groups if g.cum_min_kg > 0)
    prob.setObjective(pulp.LpAffineExpression(objective_terms, constant=constant))

    if m.pattern_mode:
        for load in [*cand.singles, *mixed]:
            m.loads[load.key] = load
        for o in sorted({o for o, _ in oven_settings}):
            for s in shifts:
                row = pulp.LpConstraint(
                    pulp.LpAffineExpression([]),
                    pulp.LpConstraintEQ,
                    rhs=1.0,
                    name=f"pattern_choice_{len(m.rows['pattern_choice']):05d}",
                )
                prob.addConstraint(row)
                m.rows["pattern_choice"][(o, s)] = row
                m.add_pattern(make_pattern(o, s, {}, m.loads, ovens[o].changeover_min))
                for pat in patterns.get((o, s), ()):
                    m.add_pattern(pat)
        return m
    for load in [*cand.singles, *mixed]:
        m.add_load(load)
    return m


@dataclass(frozen=True)
class MatrixForm:
    """The model as matrices: minimise ``c @ v + c0`` s.t. ``row_lb <= A v <= row_ub``.

    Attributes
    ----------
    c : ndarray
        Objective coefficients.
    c0 : float
        Objective constant.
    a : scipy.sparse.csr_matrix
        Constraint matrix.
    row_lb, row_ub : ndarray
        Row bounds (``-inf``/``inf`` where open).
    lb, ub : ndarray
        Variable bounds.
    integrality : ndarray
        1 for integer variables, 0 for continuous.
    names : tuple of str
        Variable names, column order.
    """

    c: np.ndarray
    c0: float
    a: sp.csr_matrix
    row_lb: np.ndarray
    row_ub: np.ndarray
    lb: np.ndarray
    ub: np.ndarray
    integrality: np.ndarray
    names: tuple[str, ...]


def to_matrices(model: PlanModel) -> MatrixForm:
    """Export the model's matrices (for a second solve path, e.g. ``scipy.optimize.milp``)."""
    prob = model.prob
    variables = prob.variables()
    index = {v.name: i for i, v in enumerate(variables)}
    c = np.zeros(len(variables))
    for v, coef in prob.objective.items():
        c[index[v.name]] = coef
    rows, cols, vals, lo, hi = [], [], [], [], []
    for i, con in enumerate(prob._constraints.values()):
        for v, coef in con.items():
            rows.append(i)
            cols.append(index[v.name])
            vals.append(coef)
        rhs = -con.constant
        if con.sense == pulp.LpConstraintLE:
            lo.append(-np.inf)
            hi.append(rhs)
        elif con.sense == pulp.LpConstraintGE:
            lo.append(rhs)
            hi.append(np.inf)
        else:
            lo.append(rhs)
            hi.append(rhs)
    a = sp.csr_matrix((vals, (rows, cols)), shape=(len(lo), len(variables)))
    lb = np.array([-np.inf if v.lowBound is None else v.lowBound for v in variables], float)
    ub = np.array([np.inf if v.upBound is None else v.upBound for v in variables], float)
    integ = np.array([1 if v.cat == pulp.LpInteger else 0 for v in variables])
    return MatrixForm(
        c,
        float(prob.objective.constant),
        a,
        np.array(lo, float),
        np.array(hi, float),
        lb,
        ub,
        integ,
        tuple(v.name for v in variables),
    )
