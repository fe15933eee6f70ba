"""Hand-made plants and plans for the scheduler tests (invented numbers, not real data).

A plan here is written by hand as a :class:`PlanResult` (batches and tunnel
runs), so a schedule's exact times can be worked out on paper.
"""

from __future__ import annotations

import math

from optimizer.planning.inputs import (
    LoadingOption,
    OrderData,
    OvenData,
    PlanInputs,
    ProductData,
    ShiftData,
    StopData,
    TunnelData,
)
from optimizer.planning.results import (
    BatchContent,
    PlannedBatch,
    PlanResult,
    SolveStatus,
    TunnelRun,
)
from tests._planner_cases import dwell_row, table


def plant(
    *,
    ovens: tuple[str, ...] = ("ov",),
    trays: int = 10,
    load_min: float = 4.0,
    unload_min: float = 2.0,
    oven_changeover: float = 0.0,
    length_m: float = 10.0,
    speeds: tuple[float, float] = (0.1, 2.0),
    transfer: float = 2.0,
    hot_hold: float = 20.0,
    tunnel_changeover: float = 0.0,
    products: dict[str, tuple[float, float]] | None = None,
    shifts: tuple[float, ...] = (480.0,),
    stops: tuple[tuple[StopData, ...], ...] | None = None,
    back_to_back: bool = False,
    settings: tuple[str, ...] = ("s1",),
    tunnel_settings: tuple[str, ...] = ("c1",),
    tunnels: tuple[str, ...] = ("tn",),
) -> PlanInputs:
    """A plant of ovens feeding the tunnels ``tunnels`` (default one, ``tn``).

    Every tunnel has the same belt (width 1 m, loading ``full`` = 100 %);
    a second or third tunnel is 1.5 or 2 times as long.

    ``products``: name -> (kg per tray, belt kg/m2); default one product
    ``a`` of 5 kg/tray at 10 kg/m2 (10 kg per metre of belt).
    """
    products = products or {"a": (5.0, 10.0)}
    prods = tuple(
        ProductData(name=k, kg_per_tray=v[0], belt_kg_per_m2=v[1], hot_hold_min=hot_hold)
        for k, v in sorted(products.items())
    )
    ovs = tuple(
        OvenData(
            name=o,
            trays=trays,
            capacity_kg=1e6,
            settings=settings,
            load_unload_min=load_min + unload_min,
            changeover_min=oven_changeover,
            unload_min=unload_min,
        )
        for o in ovens
    )
    tuns = tuple(
        TunnelData(
            name=name,
            length_m=length_m * (1.0 + 0.5 * i),
            width_m=1.0,
            min_speed_m_per_min=speeds[0],
            max_speed_m_per_min=speeds[1],
            settings=tunnel_settings,
            loadings=(LoadingOption("full", 1.0),),
            changeover_min=tunnel_changeover,
            transfer_min=transfer,
            hot_hold_min=hot_hold,
        )
        for i, name in enumerate(tunnels)
    )
    stops = stops or tuple(() for _ in shifts)
    shift_data = tuple(
        ShiftData(
            name=f"s{i}",
            minutes=m - sum(x.minutes for x in st if x.machine is None),
            machine_minutes={
                mach: m - sum(x.minutes for x in st if x.applies_to(mach))
                for mach in (*ovens, *tunnels)
                if any(x.machine == mach for x in st)
            },
            stops=st,
        )
        for i, (m, st) in enumerate(zip(shifts, stops, strict=True))
    )
    rows = [
        dwell_row(p, o, s, tn, ts, "full", 30.0, 1.0)
        for p in products
        for o in ovens
        for s in settings
        for tn in tunnels
        for ts in tunnel_settings
    ]
    return PlanInputs(
        ovens=ovs,
        tunnels=tuns,
        products=prods,
        shifts=shift_data,
        orders=tuple(OrderData(product=p) for p in sorted(products)),
        dwell=table(rows),
        back_to_back=back_to_back,
    )


def line(
    inputs: PlanInputs,
    shift: str,
    oven: str,
    setting: str,
    batches: int,
    cook_min: float,
    contents: dict[str, tuple[int, float]],
) -> PlannedBatch:
    """``batches`` batches of one load; ``contents``: product -> (trays per batch, kg)."""
    o = next(x for x in inputs.ovens if x.name == oven)
    load = f"{oven}|{setting}|" + "+".join(f"{p}:{t}" for p, (t, _) in sorted(contents.items()))
    return PlannedBatch(
        oven=oven,
        shift=shift,
        setting=setting,
        load=load,
        description=load,
        batches=batches,
        cook_min=cook_min,
        cycle_min=cook_min + o.load_unload_min,
        contents=tuple(
            BatchContent(p, t, t * inputs.product(p).kg_per_tray, kg)
            for p, (t, kg) in sorted(contents.items())
        ),
    )


def run(
    inputs: PlanInputs,
    shift: str,
    product: str,
    oven: str,
    oven_setting: str,
    kg: float,
    residence: float,
    tunnel_setting: str = "c1",
    tunnel: str = "tn",
) -> TunnelRun:
    """kg of a product through ``tunnel`` at the speed ``length / residence``."""
    t = next(x for x in inputs.tunnels if x.name == tunnel)
    speed = min(t.length_m / residence, t.max_speed_m_per_min)
    kg_per_m = inputs.product(product).belt_kg_per_m2 * t.width_m
    return TunnelRun(
        tunnel=tunnel,
        shift=shift,
        product=product,
        oven=oven,
        oven_setting=oven_setting,
        tunnel_setting=tunnel_setting,
        loading="full",
        belt_speed_m_per_min=speed,
        rate_kg_per_min=speed * kg_per_m,
        kg=kg,
        chill_min=residence,
    )


def result(inputs: PlanInputs, batches, runs) -> PlanResult:
    """A PlanResult carrying hand-written batches and runs."""
    batches = tuple(batches)
    runs = tuple(runs)
    return PlanResult(
        status=SolveStatus.OPTIMAL,
        objective=inputs.objective,
        objective_value=sum(r.kg for r in runs),
        objective_unit="kg",
        best_bound=None,
        gap=0.0,
        solver="hand",
        build_seconds=0.0,
        solve_seconds=0.0,
        total_kg=sum(r.kg for r in runs),
        shifts=tuple(s.name for s in inputs.shifts),
        batches=batches,
        runs=runs,
    )


INF = math.inf
