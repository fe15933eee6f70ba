"""Hand-made planner inputs for the planner tests (invented plants, not real data)."""

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
    TunnelData,
)


def dwell_row(
    product: str,
    oven: str,
    oven_setting: str,
    tunnel: str,
    tunnel_setting: str,
    loading: str,
    cook_min: float,
    speed: float,
    *,
    heat_in: float = 300.0,
    heat_out: float = 250.0,
    chill_min: float | None = None,
    feasible: bool = True,
    reason: str = "",
) -> dict:
    """One dwell-table row with the agreed columns."""
    return {
        "product": product,
        "oven": oven,
        "oven_setting": oven_setting,
        "tunnel": tunnel,
        "tunnel_setting": tunnel_setting,
        "loading": loading,
        "cook_min": cook_min if feasible else math.nan,
        "cook_feasible": feasible,
        "cook_binding": "core",
        "cook_reason": "",
        "cook_method": "series",
        "heat_in_kj_per_kg": heat_in,
        "chill_min": chill_min if chill_min is not None else 30.0,
        "chill_feasible": feasible,
        "chill_binding": "core",
        "chill_reason": "",
        "chill_method": "series",
        "heat_out_kj_per_kg": heat_out,
        "max_belt_speed_m_per_min": speed if feasible else math.nan,
        "feasible": feasible,
        "reason": reason,
    }


def table(rows: list[dict]) -> pd.DataFrame:
    """The dwell DataFrame from rows."""
    return pd.DataFrame(rows)


def one_line(
    *,
    trays: int = 10,
    capacity_kg: float = 1000.0,
    load_unload: float = 10.0,
    oven_changeover: float = 0.0,
    tunnel_changeover: float = 0.0,
    shift_minutes: float = 480.0,
    n_shifts: int = 1,
    products: dict | None = None,
    orders: list[OrderData] | None = None,
    tunnel_width: float = 1.0,
    objective: Objective = Objective.MOST_KG,
    fixed_output_kg: float | None = None,
    extra_rows: list[dict] | None = None,
    extra_products: tuple[str, ...] = (),
) -> PlanInputs:
    """One oven (settings 'hot', 'mild'), one tunnel (setting 'cold', loading 'full').

    ``products`` maps name -> (kg_per_tray, cook_min at 'hot', belt speed
    m/min, kwargs for ProductData); belt density 10 kg/m2. ``extra_products``
    are 10 kg/tray products whose dwell rows come only from ``extra_rows``.
    """
    products = products or {"A": (10.0, 50.0, 1.0, {})}
    oven = OvenData("oven-1", trays, capacity_kg, ("hot", "mild"), load_unload, oven_changeover)
    tunnel = TunnelData(
        "tunnel-1",
        20.0,
        tunnel_width,
        0.05,
        5.0,
        ("cold",),
        (LoadingOption("full", 1.0),),
        tunnel_changeover,
    )
    prods = tuple(
        ProductData(name, kgpt, 10.0, **kw) for name, (kgpt, _c, _v, kw) in products.items()
    ) + tuple(ProductData(name, 10.0, 10.0) for name in extra_products)
    # chill_min is the residence the 20-m belt gives at the fastest speed v
    rows = [
        dwell_row(name, "oven-1", "hot", "tunnel-1", "cold", "full", cook, v, chill_min=20.0 / v)
        for name, (_k, cook, v, _kw) in products.items()
    ] + (extra_rows or [])
    shifts = tuple(ShiftData(f"s{i + 1}", shift_minutes) for i in range(n_shifts))
    orders = orders or [OrderData(name) for name in products]
    return PlanInputs(
        (oven,), (tunnel,), prods, shifts, tuple(orders), table(rows), objective, fixed_output_kg
    )
