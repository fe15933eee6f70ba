"""Benchmark of the shift planner on generated plants (a script, not a test).

The plants and the dwell table here are synthetic: every number is invented
(random but seeded) to have the size and shape of a large plant - about 60
products, 8 ovens x 8 air settings, 4 tunnels x 6 air settings with two belt
loadings, 21 shifts (a week of three shifts). They are not physics results.

For each plant size it prints model build time, solve time, the gap and the
objective, for HiGHS (in-process) and, as the named baseline measured in the
same run, CBC; then the ratios. It never fails on time.

Run::

    .venv/bin/python tests/bench/bench_planner.py            # medium + large
    .venv/bin/python tests/bench/bench_planner.py --only large --time-limit 60
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np
import pandas as pd

from optimizer.planning.inputs import (
    LoadingOption,
    OrderData,
    OvenData,
    PlanInputs,
    ProductData,
    ShiftData,
    SolveOptions,
    TunnelData,
)
from optimizer.planning.solve import plan_buckets

SIZES = {
    # name: products, ovens, oven settings, tunnels, tunnel settings, shifts
    "small": (12, 2, 4, 1, 3, 3),
    "medium": (30, 4, 6, 2, 4, 9),
    "large": (60, 8, 8, 4, 6, 21),
}


def generate_plant(
    n_products: int,
    n_ovens: int,
    n_oven_settings: int,
    n_tunnels: int,
    n_tunnel_settings: int,
    n_shifts: int,
    seed: int = 7,
) -> PlanInputs:
    """A synthetic plant with an invented dwell table (not physics).

    Each oven feeds the tunnel ``oven * n_tunnels // n_ovens``. Each product
    belongs to a family that uses half the ovens, is cookable at about half
    of the oven settings and chills at half of the tunnel settings. Orders:
    a minimum of 10-30 % of an even share of the tunnels' throughput, due in
    the first (then scaled to one shift), middle or last shift, and a maximum
    at three times the minimum.
    """
    rng = np.random.default_rng(seed)
    oset = [f"os{k}" for k in range(n_oven_settings)]
    tset = [f"ts{k}" for k in range(n_tunnel_settings)]
    loadings = (LoadingOption("dense", 0.8), LoadingOption("open", 0.55))
    ovens = tuple(
        OvenData(
            f"oven-{i + 1}",
            int(rng.integers(12, 25)),
            float(rng.integers(300, 600)),
            tuple(oset),
            float(rng.integers(8, 16)),
            float(rng.integers(20, 45)),
        )
        for i in range(n_ovens)
    )
    tunnels = tuple(
        TunnelData(
            f"tunnel-{j + 1}",
            float(rng.integers(20, 40)),
            float(rng.uniform(0.8, 1.4)),
            0.2,
            3.0,
            tuple(tset),
            loadings,
            float(rng.integers(5, 15)),
        )
        for j in range(n_tunnels)
    )
    feeds = {o.name: tunnels[i * n_tunnels // n_ovens].name for i, o in enumerate(ovens)}
    shifts = tuple(ShiftData(f"shift-{s + 1:02d}", 450.0) for s in range(n_shifts))
    products = []
    rows = []
    for p in range(n_products):
        name = f"prod-{p + 1:02d}"
        kgpt = float(rng.uniform(6, 20))
        products.append(
            ProductData(
                name,
                kgpt,
                float(rng.uniform(6, 14)),
                value_per_kg=float(rng.uniform(2, 9)),
                hot_hold_min=float(rng.choice([math.inf, 30.0, 45.0])),
            )
        )
        base_cook = float(rng.uniform(35, 110))
        base_chill = float(rng.uniform(15, 60))
        family = p % 2
        my_ovens = [o for i, o in enumerate(ovens) if (i // max(1, n_ovens // 4)) % 2 == family]
        my_osets = sorted(
            rng.choice(n_oven_settings, size=max(2, n_oven_settings // 2), replace=False)
        )
        my_tsets = sorted(
            rng.choice(n_tunnel_settings, size=max(2, n_tunnel_settings // 2), replace=False)
        )
        for o in my_ovens:
            oven_factor = float(rng.uniform(0.9, 1.1))
            for k in my_osets:
                cook = base_cook * oven_factor * (1.3 - 0.08 * k)
                t = next(x for x in tunnels if x.name == feeds[o.name])
                for m in my_tsets:
                    chill = base_chill * (0.7 + 0.1 * m) * (1 + 0.02 * k)
                    for ld in loadings:
                        slow = 1.25 if ld.name == "dense" else 1.0
                        speed = t.length_m / (chill * slow)
                        rows.append(
                            {
                                "product": name,
                                "oven": o.name,
                                "oven_setting": oset[k],
                                "tunnel": t.name,
                                "tunnel_setting": tset[m],
                                "loading": ld.name,
                                "cook_min": cook,
                                "heat_in_kj_per_kg": 250 + 3 * k + rng.uniform(0, 20),
                                "chill_min": chill * slow,
                                "heat_out_kj_per_kg": 220 - 4 * m + (10 if slow > 1 else 0),
                                "max_belt_speed_m_per_min": min(speed, t.max_speed_m_per_min),
                                "feasible": speed >= t.min_speed_m_per_min,
                                "reason": "" if speed >= t.min_speed_m_per_min else "too slow",
                            }
                        )
    # Demand: the tunnels bound the plant; share a typical tunnel's kg per shift out.
    df = pd.DataFrame(rows)
    width = {t.name: t.width_m for t in tunnels}
    cover = {ld.name: ld.coverage for ld in loadings}
    dens = {pr.name: pr.belt_kg_per_m2 for pr in products}
    rate = (
        df["product"].map(dens)
        * df["loading"].map(cover)
        * df["tunnel"].map(width)
        * df["max_belt_speed_m_per_min"]
    )
    tunnel_kg = float(rate.median()) * 450.0 * n_shifts * n_tunnels
    per_product = tunnel_kg / n_products
    orders = []
    for i, pr in enumerate(products):
        mn = float(rng.uniform(0.1, 0.3)) * per_product
        due = shifts[[0, n_shifts // 2, n_shifts - 1][i % 3]].name if i % 3 else None
        if due == shifts[0].name:
            mn = mn / n_shifts
        orders.append(
            OrderData(pr.name, min_kg=round(mn, 0), max_kg=round(3.0 * mn, 0), due_shift=due)
        )
    return PlanInputs(ovens, tunnels, tuple(products), shifts, tuple(orders), pd.DataFrame(rows))


def run(size: str, solver: str, time_limit: float, gap: float, threads: int, mix: int = 2) -> dict:
    inp = generate_plant(*SIZES[size])
    t0 = time.perf_counter()
    r = plan_buckets(
        inp,
        SolveOptions(
            solver=solver,
            time_limit_s=time_limit,
            gap_rel=gap,
            threads=threads,
            max_mix_products=mix,
        ),
    )
    total = time.perf_counter() - t0
    return {
        "size": size,
        "solver": solver,
        "status": r.status.value,
        "objective_kg": r.objective_value,
        "bound": r.best_bound,
        "gap": r.gap,
        "build_s": r.build_seconds,
        "solve_s": r.solve_seconds,
        "total_s": total,
        "build_share": r.build_seconds / total if total > 0 else float("nan"),
        "mixed_loads": r.mixed_loads,
        "cg_rounds": r.column_generation_rounds,
        "batches": sum(b.batches for b in r.batches),
        "rows": len(inp.dwell),
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", choices=sorted(SIZES), action="append")
    ap.add_argument("--time-limit", type=float, default=60.0)
    ap.add_argument("--gap", type=float, default=0.005)
    ap.add_argument("--threads", type=int, default=2)
    ap.add_argument("--no-cbc", action="store_true")
    ap.add_argument("--mix", type=int, default=2, choices=[1, 2])
    args = ap.parse_args()
    sizes = args.only or ["medium", "large"]
    print("Synthetic plants with an invented dwell table (not physics).")
    for size in sizes:
        res = {}
        for solver in ["highs"] + ([] if args.no_cbc else ["cbc"]):
            res[solver] = out = run(size, solver, args.time_limit, args.gap, args.threads, args.mix)
            print(
                f"{size:6s} {solver:5s} status={out['status']:18s}"
                f" obj={out['objective_kg'] or 0:12.1f}"
                f" gap={(out['gap'] if out['gap'] is not None else float('nan')):.4f}"
                f" build={out['build_s']:.2f}s solve={out['solve_s']:.2f}s"
                f" total={out['total_s']:.2f}s build_share={out['build_share']:.2f}"
                f" mixed={out['mixed_loads']} cg_rounds={out['cg_rounds']}"
                f" dwell_rows={out['rows']}"
            )
        if "cbc" in res and res["cbc"]["objective_kg"] and res["highs"]["objective_kg"]:
            h, c = res["highs"], res["cbc"]
            print(
                f"{size:6s} ratio HiGHS/CBC (baseline CBC):"
                f" total time {h['total_s'] / c['total_s']:.2f},"
                f" objective {h['objective_kg'] / c['objective_kg']:.4f}"
            )


if __name__ == "__main__":
    main()
