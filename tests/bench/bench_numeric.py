"""Benchmark: thermal.numeric batched solver against per-product method of lines.

1,000 products (slabs of several thicknesses and compositions) go through a
cook (oven air, convection plus radiation) and a chill (room-air transfer,
then a cold tunnel zone), each with its own air settings and dwell times.

* Ours: one batched :func:`thermal.numeric.simulate` call for all 1,000,
  with adaptive steps (``step_tolerance``) when a rung of that ladder meets
  the accuracy, else fixed steps; the fixed-step time is printed too.
* Baseline (named): ``scipy.integrate.solve_ivp`` (BDF, tridiagonal Jacobian
  sparsity) on the same cell-centred finite-volume semi-discretisation in
  temperature with the apparent specific heat, one product at a time. It is
  timed on a subsample of 20 products and scaled to 1,000 (said below).
* Equal accuracy: both methods are set to the cheapest grid / step /
  tolerance (from a short ladder, tried cheapest first) whose core temperature stays within
  0.05 K of a fine reference (solve_ivp, 96 cells, rtol 1e-9) over the whole
  history, for every product of the subsample.

Prints the times and the speed ratio; never fails on time. Run with
``.venv/bin/python tests/bench/bench_numeric.py``.
"""

from __future__ import annotations

import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.sparse import diags

from thermal.foods import Composition, FoodProperties
from thermal.geometry import Slab
from thermal.numeric import STEFAN_BOLTZMANN, Segment, simulate

N_PRODUCTS = 1000
N_SUB = 20
TOL_K = 0.05
RNG = np.random.default_rng(20261201)

FOODS = [
    FoodProperties(Composition(0.74, 0.22, 0.03, 0.0, 0.0, 0.01)),  # lean-meat-like
    FoodProperties(Composition(0.65, 0.17, 0.16, 0.0, 0.0, 0.02)),  # fattier meat
    FoodProperties(Composition(0.70, 0.12, 0.05, 0.11, 0.01, 0.01)),  # meat with binder
    FoodProperties(Composition(0.78, 0.18, 0.02, 0.0, 0.0, 0.02)),  # poultry-like
    FoodProperties(Composition(0.60, 0.10, 0.10, 0.18, 0.01, 0.01)),  # filled dough
]


def make_batch(n: int):
    """Random but reproducible products and settings (invented demo data)."""
    return {
        "half": RNG.uniform(0.008, 0.025, n),  # half-thickness [m]
        "food": RNG.integers(0, len(FOODS), n),
        "t0": RNG.uniform(2.0, 8.0, n),
        "cook_t": RNG.uniform(140.0, 190.0, n),
        "cook_h": RNG.uniform(15.0, 40.0, n),
        "cook_s": RNG.uniform(1800.0, 4200.0, n),
        "eps": np.full(n, 0.9),
        "chill_t": RNG.uniform(-2.0, 2.0, n),
        "chill_h": RNG.uniform(15.0, 40.0, n),
        "chill_s": RNG.uniform(2400.0, 5400.0, n),
    }


def segments(b, idx=slice(None)):
    return [
        Segment(b["cook_s"][idx], b["cook_t"][idx], b["cook_h"][idx], None, b["eps"][idx]),
        Segment(300.0, 20.0, 8.0, None, b["eps"][idx]),
        Segment(b["chill_s"][idx], b["chill_t"][idx], b["chill_h"][idx]),
    ]


def run_ours(b, idx, n_cells, dt, step_tolerance=None):
    geo = [Slab(2 * h) for h in b["half"][idx]]
    props = [FOODS[i] for i in b["food"][idx]]
    return simulate(
        geo,
        props,
        b["t0"][idx],
        segments(b, idx),
        n_cells=n_cells,
        dt=dt,
        step_tolerance=step_tolerance,
    )


def run_mol(b, i, n, rtol, t_eval, dense=False):
    """Per-product method of lines (baseline): cell-centred FV in T, BDF.

    Returns (times, core) at ``t_eval``, or with ``dense`` a function giving
    the core temperature at any times (for the reference).
    """
    food = FOODS[b["food"][i]]
    half = b["half"][i]
    dx = half / n
    rho = float(food.density(b["t0"][i]))
    sched = [
        (b["cook_s"][i], b["cook_t"][i], b["cook_h"][i], b["eps"][i]),
        (300.0, 20.0, 8.0, b["eps"][i]),
        (b["chill_s"][i], b["chill_t"][i], b["chill_h"][i], 0.0),
    ]
    sparsity = diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(n, n))
    y = np.full(n, b["t0"][i])
    t_start = 0.0
    out_t, out_core, pieces = [], [], []
    for dur, t_air, h, eps in sched:
        rad = eps * STEFAN_BOLTZMANN
        wall4 = (t_air + 273.15) ** 4

        def rhs(_, t, t_air=t_air, h=h, rad=rad, wall4=wall4):
            k = food.conductivity(t)
            cp = food.specific_heat(t)
            kf = 0.5 * (k[1:] + k[:-1])
            q = np.zeros(n + 1)
            q[1:-1] = kf * (t[1:] - t[:-1]) / dx
            g = 2.0 * k[-1] / dx
            ts = t[-1]
            for _ in range(4):
                f = g * (ts - t[-1]) - h * (t_air - ts) - rad * (wall4 - (ts + 273.15) ** 4)
                ts -= f / (g + h + 4 * rad * (ts + 273.15) ** 3)
            q[-1] = g * (ts - t[-1])
            return (q[1:] - q[:-1]) / (dx * rho * cp)

        te = t_eval[(t_eval >= t_start) & (t_eval <= t_start + dur)] - t_start
        te = np.unique(np.clip(np.append(te, dur), 0.0, dur))
        sol = solve_ivp(
            rhs,
            (0.0, dur),
            y,
            method="BDF",
            rtol=rtol,
            atol=rtol,
            jac_sparsity=sparsity,
            t_eval=te,
            dense_output=dense,
        )
        if dense:
            pieces.append((t_start, t_start + dur, sol.sol))
        out_t.append(sol.t + t_start)
        out_core.append((9 * sol.y[0] - sol.y[1]) / 8)
        y = sol.y[:, -1]
        t_start += dur
    if dense:

        def core_at(t):
            t = np.asarray(t, dtype=float)
            out = np.empty_like(t)
            for lo, hi, f in pieces:
                m = (t >= lo) & (t <= hi)
                y = f(np.clip(t[m] - lo, 0.0, hi - lo))
                out[m] = (9 * y[0] - y[1]) / 8
            return out

        return core_at
    return np.concatenate(out_t), np.concatenate(out_core)


def main() -> None:
    b = make_batch(N_PRODUCTS)
    sub = np.arange(N_SUB)
    total = b["cook_s"] + 300.0 + b["chill_s"]

    # fine reference for the subsample
    t0 = time.perf_counter()
    refs = []
    for i in sub:
        t_eval = np.linspace(0.0, total[i], 400)
        refs.append((t_eval, run_mol(b, i, 96, 1e-9, t_eval, dense=True)))
    print(
        f"reference (solve_ivp, 96 cells, rtol 1e-9) on {N_SUB}: {time.perf_counter() - t0:.1f} s"
    )

    def err_ours(res):
        e = 0.0
        for j in range(sub.size):
            e = max(e, np.abs(res.core[j] - refs[j][1](res.times[j])).max())
        return e

    def first_passing(ladder):
        for n_cells, dt, tol in ladder:
            e = err_ours(run_ours(b, sub, n_cells, dt, tol))
            steps = "fixed steps" if tol is None else f"adaptive, {tol:g} K per step"
            print(f"  ours n={n_cells:3d} dt={dt:5.0f} s ({steps}): max core error {e:.3f} K")
            if e <= TOL_K:
                return (n_cells, dt, tol)
        return None

    # adaptive steps (step doubling) first, cheapest first; fixed steps for information
    chosen_ours = first_passing([(20, 15.0, 0.05), (24, 15.0, 0.05), (24, 15.0, 0.02)])
    chosen_fixed = first_passing(
        [(16, 30.0, None), (20, 20.0, None), (24, 15.0, None), (24, 10.0, None), (32, 10.0, None)]
    )
    chosen_ours = chosen_ours or chosen_fixed
    chosen_mol = None
    for n, rtol in [(16, 1e-5), (20, 1e-5), (24, 1e-6), (32, 1e-6), (48, 1e-7), (64, 1e-8)]:
        e = 0.0
        for j, i in enumerate(sub):
            t_mol, c = run_mol(b, i, n, rtol, refs[j][0])
            e = max(e, np.abs(c - refs[j][1](t_mol)).max())
        print(f"  solve_ivp n={n:3d} rtol={rtol:.0e}: max core error {e:.3f} K")
        if e <= TOL_K:
            chosen_mol = (n, rtol)
            break
    if chosen_ours is None or chosen_mol is None:
        print("could not reach the accuracy target on the ladder; no ratio printed")
        return

    t0 = time.perf_counter()
    res = run_ours(b, np.arange(N_PRODUCTS), *chosen_ours)
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    for i in sub:
        run_mol(b, i, chosen_mol[0], chosen_mol[1], np.linspace(0.0, total[i], 50))
    t_mol_sub = time.perf_counter() - t0
    t_mol = t_mol_sub * N_PRODUCTS / N_SUB
    print(
        f"ours: {N_PRODUCTS} products in one batched call, n={chosen_ours[0]}, "
        f"dt={chosen_ours[1]:.0f} s, step tolerance {chosen_ours[2]} K: {t_ours:.2f} s "
        f"({res.times.shape[1] - 1} steps, max implicit iterations {res.iterations})"
    )
    if chosen_fixed is not None and chosen_fixed != chosen_ours:
        t0 = time.perf_counter()
        run_ours(b, np.arange(N_PRODUCTS), *chosen_fixed)
        t_fixed = time.perf_counter() - t0
        print(
            f"  (for information) ours with fixed steps, n={chosen_fixed[0]}, "
            f"dt={chosen_fixed[1]:.0f} s: {t_fixed:.2f} s"
        )
    print(
        f"baseline solve_ivp BDF, n={chosen_mol[0]}, rtol={chosen_mol[1]:.0e}: "
        f"{t_mol_sub:.2f} s for {N_SUB} products, scaled x{N_PRODUCTS // N_SUB} "
        f"to {t_mol:.1f} s"
    )
    print(f"speed ratio (baseline / ours) at equal {TOL_K} K core accuracy: {t_mol / t_ours:.1f}x")


if __name__ == "__main__":
    main()
