"""From a validated scenario and its dwell table to the planner's inputs.

:func:`plan_inputs` is the only place that knows both the scenario models
(:mod:`optimizer.scenario.models`) and the planner's plain dataclasses
(:mod:`optimizer.planning.inputs`). Units pass through unchanged: the scenario already
holds minutes [min], kilograms [kg], metres [m] and belt speeds [m/min].

Mapping choices (documented here because the two sides differ slightly):

- An oven's ``load_unload_min`` is its load plus unload minutes, of which
  ``unload_min`` its unload minutes.
- A tunnel's ``transfer_min`` is its ``transfer.duration`` (0 without a
  transfer) and its ``hot_hold_min`` its own ``hot_hold_max``.
- A shift's stops pass through (machine, minutes, reason, optional start)
  for the timed schedule to place.
- A shift's ``minutes`` is its minutes less the stops that apply to every
  machine; a machine whose own figure differs (an override in ``machines`` or
  a stop of that machine alone) gets an entry in ``machine_minutes``.
- A product's hot-hold limit is the product's own ``hot_hold_max`` and the
  ``hot_hold_max`` of every tunnel, whichever is shortest (the planner holds
  one limit per product; a batch may go to any tunnel its oven feeds, so the
  shortest limit is the safe one). No limit anywhere gives ``inf``.
- A scenario without orders plans every product with no minimum and no
  maximum ("make as much as fits").
"""

from __future__ import annotations

import math

import pandas as pd

from optimizer.planning.inputs import (
    LoadingOption,
    Objective,
    OrderData,
    OvenData,
    PlanInputs,
    ProductData,
    ShiftData,
    StopData,
    TunnelData,
)
from optimizer.scenario.models import Scenario

__all__ = ["plan_inputs"]

_OBJECTIVES = {
    "most_kg": Objective.MOST_KG,
    "most_value": Objective.MOST_VALUE,
    "soonest": Objective.SOONEST,
    "least_energy": Objective.LEAST_ENERGY,
}


def _hot_hold(scenario: Scenario, own: float | None) -> float:
    limits = [t.hot_hold_max for t in scenario.tunnels if t.hot_hold_max is not None]
    if own is not None:
        limits.append(own)
    return min(limits) if limits else math.inf


def _shift(scenario: Scenario, shift) -> ShiftData:
    machines = [o.name for o in scenario.ovens] + [t.name for t in scenario.tunnels]
    common = shift.minutes - sum(s.minutes for s in shift.stops if s.machine is None)
    own = {m: shift.available(m) for m in machines}
    differ = {m: v for m, v in own.items() if abs(v - common) > 1e-9}
    stops = tuple(StopData(x.minutes, x.machine, x.reason, x.start) for x in shift.stops)
    return ShiftData(name=shift.name, minutes=max(common, 0.0), machine_minutes=differ, stops=stops)


def plan_inputs(scenario: Scenario, dwell: pd.DataFrame) -> PlanInputs:
    """Build the planner's inputs from a scenario and its dwell table.

    Parameters
    ----------
    scenario : Scenario
        A validated scenario (:func:`optimizer.scenario.models.load_scenario`).
    dwell : pandas.DataFrame
        The dwell table of the same scenario
        (:func:`optimizer.dwell.table.build_dwell_table`).

    Returns
    -------
    optimizer.planning.inputs.PlanInputs
        Ovens, tunnels, products, shifts (in file order), orders, the dwell
        table and the objective; minutes [min], kg, m and m/min throughout.

    Raises
    ------
    optimizer.planning.inputs.PlanInputError
        If the planner's own checks refuse something (for example a dwell
        table missing a column).
    """
    ovens = tuple(
        OvenData(
            name=o.name,
            trays=o.trays,
            capacity_kg=o.capacity,
            settings=tuple(s.name for s in o.settings),
            load_unload_min=o.load_time + o.unload_time,
            changeover_min=o.changeover,
            unload_min=o.unload_time,
        )
        for o in scenario.ovens
    )
    tunnels = tuple(
        TunnelData(
            name=t.name,
            length_m=t.length,
            width_m=t.belt_width,
            min_speed_m_per_min=t.belt_speed_min,
            max_speed_m_per_min=t.belt_speed_max,
            settings=tuple(s.name for s in t.settings),
            loadings=tuple(LoadingOption(x.name, x.coverage) for x in t.loadings),
            changeover_min=t.changeover,
            transfer_min=0.0 if t.transfer is None else t.transfer.duration,
            hot_hold_min=math.inf if t.hot_hold_max is None else t.hot_hold_max,
        )
        for t in scenario.tunnels
    )
    products = tuple(
        ProductData(
            name=p.name,
            kg_per_tray=p.kg_per_tray,
            belt_kg_per_m2=p.belt_loading,
            value_per_kg=p.value_per_kg,
            hot_hold_min=_hot_hold(scenario, p.hot_hold_max),
        )
        for p in scenario.products
    )
    shifts = tuple(_shift(scenario, s) for s in scenario.shifts)
    if scenario.orders:
        orders = tuple(
            OrderData(
                product=o.product,
                min_kg=o.min_kg,
                max_kg=o.max_kg if o.max_kg is not None else math.inf,
                due_shift=o.due_shift,
                weight=o.weight,
                name=o.name,
            )
            for o in scenario.orders
        )
    else:
        orders = tuple(OrderData(product=p.name) for p in scenario.products)
    return PlanInputs(
        ovens=ovens,
        tunnels=tunnels,
        products=products,
        shifts=shifts,
        orders=orders,
        dwell=dwell,
        objective=_OBJECTIVES[scenario.objective.kind],
        fixed_output_kg=scenario.objective.fixed_output,
        back_to_back=scenario.back_to_back,
    )
