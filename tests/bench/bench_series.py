"""Benchmark: vectorised ``fourier_for_ratio`` against two baselines.

Run with ``.venv/bin/python tests/bench/bench_series.py [cases]``; not part of
the test suite, never fails on time. For each shape, ``cases`` random cases
(default 100,000): Biot log-uniform over 1e-3 … 1e4 plus 2 % at Bi = inf,
target ratio log-uniform over 1e-4 … 0.99, half at the centre and half at a
uniform random position.

Baselines, measured in the same run:

(a) a lean per-case loop of ``scipy.optimize.brentq`` over the same series:
    each case's eigen data set up once (``thermal.series._point_evaluator``)
    and its bracket taken from the one-term estimate; timed on a subsample
    and scaled to the full count (the output says so);
(b) the closed-form one-term inverse ``Fo = ln(C1 X1 / θ) / ζ1²`` with ζ1 from
    ``thermal.series.eigenvalues`` — the floor any exact method has to beat.

Times are CPU seconds of this process (``time.process_time``, best of three
for the vectorised runs) so that other work on the machine does not skew the
ratios. A second line per shape, labelled as deliberately slow, times a
per-case brentq that re-evaluates the whole series from scratch at every
call (``thermal.series.temperature_ratio`` on one case at a time) on the
same subsample, for information only. Printed: times, the two ratios
(speed-up over (a); slowdown against (b)), the largest relative difference
from the brentq answers, and for information the error of the one-term
formula.
"""

from __future__ import annotations

import sys
import time

import numpy as np
from scipy import special
from scipy.optimize import brentq

from thermal import series

SUBSAMPLE = 1000


def random_cases(shape: str, count: int, rng: np.random.Generator):
    biot = 10 ** rng.uniform(-3, 4, count)
    biot[rng.random(count) < 0.02] = np.inf
    ratio = 10 ** rng.uniform(-4, np.log10(0.99), count)
    position = np.where(rng.random(count) < 0.5, 0.0, rng.uniform(0, 1, count))
    return biot, ratio, position


def one_term(shape: str, biot, ratio, position):
    """Closed-form one-term inverse (Incropera et al. eqs. 5.40, 5.52, 5.53)."""
    z = series.eigenvalues(shape, biot, 1)[..., 0]
    if shape == "slab":
        c1 = 4 * np.sin(z) / (2 * z + np.sin(2 * z))
        x1 = np.cos(z * position)
    elif shape == "cylinder":
        j0, j1 = special.j0(z), special.j1(z)
        c1 = 2 / z * j1 / (j0**2 + j1**2)
        x1 = special.j0(z * position)
    else:
        c1 = 4 * (np.sin(z) - z * np.cos(z)) / (2 * z - np.sin(2 * z))
        x1 = np.sinc(z * position / np.pi)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(c1 * x1 / ratio) / z**2


def slow_brentq_loop(shape: str, biot, ratio, position):
    """Deliberately slow per-case brentq: the full series evaluated from scratch each call."""
    out = np.empty(biot.size)
    for i in range(biot.size):
        b, r, x = float(biot[i]), float(ratio[i]), float(position[i])
        if np.isinf(b) and x == 1.0:
            out[i] = 0.0
            continue

        def gap(fo, b=b, r=r, x=x):
            return float(series.temperature_ratio(shape, b, fo, x)) - r

        hi = 1.0
        while gap(hi) > 0:
            hi *= 4.0
        lo = hi / 4.0
        while gap(lo) < 0 and lo > 1e-300:
            lo /= 4.0
        out[i] = brentq(gap, lo, hi, xtol=1e-300, rtol=4e-15, maxiter=400)
    return out


def lean_brentq_loop(shape: str, biot, ratio, position):
    """Baseline (a): per-case brentq with each case's eigen data computed once.

    The bracket comes from the one-term estimate, and the series terms are
    set up once per case for the bracket's lower end
    (``thermal.series._point_evaluator``).
    """
    fo1 = one_term(shape, biot, ratio, position)
    out = np.empty(biot.size)
    for i in range(biot.size):
        b, r, x = float(biot[i]), float(ratio[i]), float(position[i])
        if np.isinf(b) and x == 1.0:
            out[i] = 0.0
            continue
        guess = fo1[i] if np.isfinite(fo1[i]) and fo1[i] > 0 else 1e-3
        lo, hi = 0.25 * guess, 4.0 * guess
        theta = series._point_evaluator(shape, b, x, lo)
        while theta(lo) < r and lo > 1e-300:
            lo /= 16.0
            theta = series._point_evaluator(shape, b, x, lo)
        while theta(hi) > r:
            hi *= 4.0
        out[i] = brentq(lambda f, th=theta, r=r: th(f) - r, lo, hi, xtol=1e-300, rtol=4e-15)
    return out


def best_of(repeats: int, fun, *args):
    best, value = np.inf, None
    for _ in range(repeats):
        start = time.process_time()
        value = fun(*args)
        best = min(best, time.process_time() - start)
    return best, value


def main(count: int) -> None:
    rng = np.random.default_rng(20260101)
    print(f"fourier_for_ratio on {count:,} random cases per shape")
    print(
        f"(a) lean per-case brentq (eigen data once per case) timed on {SUBSAMPLE:,} of them "
        f"and scaled to {count:,}"
    )
    print("times: CPU seconds of this process (time.process_time)")
    total = {"vector": 0.0, "lean": 0.0, "floor": 0.0, "slow": 0.0}
    worst_all = 0.0
    for shape in series.SHAPES:
        biot, ratio, position = random_cases(shape, count, rng)
        series.fourier_for_ratio(shape, biot[:100], ratio[:100], position[:100])  # warm caches
        t_vec, fo = best_of(3, series.fourier_for_ratio, shape, biot, ratio, position)
        t_floor, fo1 = best_of(3, one_term, shape, biot, ratio, position)
        sub = slice(0, min(SUBSAMPLE, count))
        scale = count / (sub.stop - sub.start)
        t_lean_sub, ref = best_of(1, lean_brentq_loop, shape, biot[sub], ratio[sub], position[sub])
        t_lean = t_lean_sub * scale
        t_slow_sub, slow = best_of(1, slow_brentq_loop, shape, biot[sub], ratio[sub], position[sub])
        t_slow = t_slow_sub * scale
        with np.errstate(invalid="ignore", divide="ignore"):
            rel = np.abs(fo[sub] - ref) / np.maximum(ref, 1e-300)
            one_err = np.abs(fo1 - fo) / fo
        worst = float(np.max(rel))
        worst_all = max(worst_all, worst)
        valid = np.isfinite(one_err) & (fo > 0.2)
        print(
            f"{shape:9s} vectorised {t_vec:7.3f} s | lean brentq loop {t_lean:7.1f} s (scaled) "
            f"-> {t_lean / t_vec:6.0f}x faster | one-term {t_floor:6.3f} s "
            f"-> {t_vec / t_floor:5.2f}x slower | max rel. diff vs brentq {worst:.1e} | "
            f"one-term error at Fo > 0.2 up to {np.max(one_err[valid]):.1e}"
        )
        slow_diff = float(np.max(np.abs(slow - ref) / np.maximum(ref, 1e-300)))
        print(
            f"{'':9s} (for information, deliberately slow) per-case brentq re-evaluating the "
            f"series from scratch: {t_slow:7.1f} s (scaled) -> {t_slow / t_vec:5.0f}x; "
            f"max rel. diff vs (a) {slow_diff:.1e}"
        )
        total["vector"] += t_vec
        total["lean"] += t_lean
        total["floor"] += t_floor
        total["slow"] += t_slow
    print(
        f"all shapes: {total['lean'] / total['vector']:.0f}x faster than the lean per-case "
        f"brentq (a); {total['vector'] / total['floor']:.2f}x the one-term floor "
        f"(target <= 10x); max relative difference vs brentq {worst_all:.1e}; "
        f"(deliberately slow loop, for information: {total['slow'] / total['vector']:.0f}x)"
    )


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
