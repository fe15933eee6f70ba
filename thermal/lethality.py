"""Lethality along a temperature history: F-value, log reduction, holds, crossings.

A history is a pair ``(times, temps)``: sample times [s] and the temperature
at one point of the product (normally the slowest-heating point, the core)
[°C]. Between samples the temperature is taken as linear in time, which is
how a probe record or a solver output is normally read. Every function here
is exact for that piecewise-linear history: the F-value integrand
``10**((T - T_ref)/z)`` is then an exponential in time on each interval and
is integrated in closed form (its logarithmic mean times the interval length),
not by a trapezoid rule; crossing times are interpolated linearly.

All functions are vectorised over a batch of histories: ``temps`` has shape
``(..., n)``; ``times`` has shape ``(n,)`` (shared) or the same shape as
``temps``. Scalar organism parameters and thresholds broadcast against the
batch shape ``temps.shape[:-1]``.

References
----------
.. [1] Bigelow, W. D. (1921). The logarithmic nature of thermal death time
   curves. *Journal of Infectious Diseases*, 29(5), 528-536.
.. [2] Ball, C. O. (1923). Thermal process time for canned food. *Bulletin of
   the National Research Council*, 7(37).
.. [3] Stumbo, C. R. (1973). *Thermobacteriology in Food Processing*, 2nd ed.
   Academic Press (F-value and D/z model).
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal._checks import as_float_array, nonnegative, positive
from thermal.errors import ThermalInputError

__all__ = [
    "cumulative_f_value",
    "f_value",
    "first_time_at",
    "hold_reached_time",
    "lethal_rate",
    "log_reduction",
    "longest_hold_above",
    "time_to_f_value",
]

_LN10 = float(np.log(10.0))


def _history(times: ArrayLike, temps: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Validate a history and broadcast ``times`` to the shape of ``temps``."""
    t = as_float_array("times", times)
    y = as_float_array("temps", temps)
    if y.ndim == 0:
        raise ThermalInputError("temps: must hold at least one sample, got a scalar")
    if t.ndim == 0:
        raise ThermalInputError("times: must be an array of sample times [s], got a scalar")
    if t.shape[-1] != y.shape[-1]:
        raise ThermalInputError(
            f"times: must have as many samples as temps along the last axis, got "
            f"{t.shape[-1]} times and {y.shape[-1]} temperatures"
        )
    try:
        t = np.broadcast_to(t, y.shape)
    except ValueError:
        raise ThermalInputError(
            f"times: shape {t.shape} does not broadcast to temps shape {y.shape}"
        ) from None
    if y.shape[-1] > 1:
        step = np.diff(t, axis=-1)
        if (step < 0).any():
            where = np.argwhere(step < 0)[0]
            k = int(where[-1]) + 1
            raise ThermalInputError(
                f"times: must be non-decreasing, got times[{k}] = {float(t[(*where[:-1], k)])} s "
                f"after times[{k - 1}] = {float(t[(*where[:-1], k - 1)])} s"
            )
    return t, y


def _as_batch(name: str, value: NDArray[np.float64], batch_shape: tuple[int, ...]):
    try:
        return np.broadcast_to(value, batch_shape)
    except ValueError:
        raise ThermalInputError(
            f"{name}: shape {value.shape} does not broadcast to the batch shape {batch_shape}"
        ) from None


def lethal_rate(temps: ArrayLike, t_ref: ArrayLike, z: ArrayLike) -> NDArray[np.float64]:
    """Lethal rate ``L = 10**((T - T_ref)/z)`` [-].

    Parameters
    ----------
    temps : array_like
        Temperature [°C].
    t_ref : array_like
        Reference temperature of the organism's D-value [°C].
    z : array_like
        z-value: temperature rise that divides the D-value by ten [K].

    Returns
    -------
    ndarray
        Minutes (or seconds) at ``t_ref`` equivalent to one minute (second) at
        ``temps`` [-].

    References
    ----------
    .. [1] Bigelow (1921), see module references.
    """
    temps = as_float_array("temps", temps)
    t_ref = as_float_array("t_ref", t_ref)
    z = positive("z", z)
    return np.power(10.0, (temps - t_ref) / z)


def _interval_f(t, y, t_ref, z):
    """Exact F over each interval of a piecewise-linear history, shape (..., n-1)."""
    dt = np.diff(t, axis=-1)
    tr = np.asarray(t_ref)[..., None]
    zz = np.asarray(z)[..., None]
    ln0 = _LN10 * (y[..., :-1] - tr) / zz
    ln1 = _LN10 * (y[..., 1:] - tr) / zz
    d = ln1 - ln0
    small = np.abs(d) < 1e-6
    # Logarithmic mean of the two end rates; near-equal ends use its series
    # about the geometric mean, g (1 + d^2/24), to avoid 0/0.
    with np.errstate(divide="ignore", invalid="ignore"):
        exact = (np.exp(ln1) - np.exp(ln0)) / np.where(small, 1.0, d)
    series = np.exp(0.5 * (ln0 + ln1)) * (1.0 + d * d / 24.0)
    return dt * np.where(small, series, exact)


def cumulative_f_value(
    times: ArrayLike, temps: ArrayLike, t_ref: ArrayLike, z: ArrayLike
) -> NDArray[np.float64]:
    """F-value accumulated from the first sample up to each sample [s].

    ``F(t) = ∫₀ᵗ 10**((T(s) - T_ref)/z) ds``, integrated exactly for a
    temperature that is linear between samples.

    Parameters
    ----------
    times : array_like
        Sample times, non-decreasing, shape ``(n,)`` or ``temps.shape`` [s].
    temps : array_like
        Temperatures at the point judged, shape ``(..., n)`` [°C].
    t_ref : array_like
        Reference temperature [°C]; broadcasts to the batch shape.
    z : array_like
        z-value [K], > 0; broadcasts to the batch shape.

    Returns
    -------
    ndarray
        Equivalent time at ``t_ref`` up to each sample, shape ``temps.shape``
        [s]; the first entry is 0.

    References
    ----------
    .. [1] Ball (1923); Stumbo (1973), see module references.
    """
    t, y = _history(times, temps)
    batch = y.shape[:-1]
    tr = _as_batch("t_ref", as_float_array("t_ref", t_ref), batch)
    zz = _as_batch("z", positive("z", z), batch)
    out = np.zeros(y.shape)
    if y.shape[-1] > 1:
        np.cumsum(_interval_f(t, y, tr, zz), axis=-1, out=out[..., 1:])
    return out


def f_value(
    times: ArrayLike, temps: ArrayLike, t_ref: ArrayLike, z: ArrayLike
) -> NDArray[np.float64]:
    """F-value of a whole history [s].

    Parameters
    ----------
    times : array_like
        Sample times, non-decreasing, shape ``(n,)`` or ``temps.shape`` [s].
    temps : array_like
        Temperatures at the point judged, shape ``(..., n)`` [°C].
    t_ref : array_like
        Reference temperature [°C].
    z : array_like
        z-value [K], > 0.

    Returns
    -------
    ndarray
        ``∫ 10**((T - T_ref)/z) dt`` over the history, shape ``temps.shape[:-1]``
        (a 0-d array for one history) [s]. Exact for temperatures linear
        between samples.

    References
    ----------
    .. [1] Ball (1923); Stumbo (1973), see module references.
    """
    return cumulative_f_value(times, temps, t_ref, z)[..., -1]


def log_reduction(
    times: ArrayLike, temps: ArrayLike, d_ref: ArrayLike, t_ref: ArrayLike, z: ArrayLike
) -> NDArray[np.float64]:
    """Decimal log reduction delivered by a history, ``F / D_ref`` [log10].

    Parameters
    ----------
    times : array_like
        Sample times [s].
    temps : array_like
        Temperatures at the point judged, shape ``(..., n)`` [°C].
    d_ref : array_like
        D-value of the organism at ``t_ref`` (time for a tenfold reduction)
        [s], > 0.
    t_ref : array_like
        Reference temperature [°C].
    z : array_like
        z-value [K], > 0.

    Returns
    -------
    ndarray
        Log10 reduction, shape ``temps.shape[:-1]`` [-].

    References
    ----------
    .. [1] Bigelow (1921); Stumbo (1973), see module references.
    """
    d = positive("d_ref", d_ref)
    return f_value(times, temps, t_ref, z) / d


def time_to_f_value(
    times: ArrayLike, temps: ArrayLike, target: ArrayLike, t_ref: ArrayLike, z: ArrayLike
) -> NDArray[np.float64]:
    """Earliest time at which the accumulated F-value reaches ``target`` [s].

    The crossing inside an interval is found by inverting the exact
    exponential integral, so the answer is exact for a piecewise-linear
    history.

    Parameters
    ----------
    times : array_like
        Sample times [s].
    temps : array_like
        Temperatures, shape ``(..., n)`` [°C].
    target : array_like
        F-value to reach [s], >= 0 (0 gives the first sample time).
    t_ref : array_like
        Reference temperature [°C].
    z : array_like
        z-value [K].

    Returns
    -------
    ndarray
        Time [s], shape ``temps.shape[:-1]``; NaN where the history never
        accumulates ``target``.

    References
    ----------
    .. [1] Ball (1923); Stumbo (1973), see module references.
    """
    t, y = _history(times, temps)
    batch = y.shape[:-1]
    goal = _as_batch("target", nonnegative("target", target), batch)
    tr = _as_batch("t_ref", as_float_array("t_ref", t_ref), batch)
    zz = _as_batch("z", positive("z", z), batch)
    cum = cumulative_f_value(t, y, tr, zz)
    reached = cum >= goal[..., None]
    ok = reached.any(axis=-1)
    k = np.argmax(reached, axis=-1)  # first sample index at or past the goal
    out = np.full(batch, np.nan)
    at_start = ok & (k == 0)
    out[at_start] = t[..., 0][at_start]
    inner = ok & (k > 0)
    if inner.any():
        ki = k[inner]
        ti, yi, ci = t[inner], y[inner], cum[inner]
        rows = np.arange(ki.size)
        t0, t1 = ti[rows, ki - 1], ti[rows, ki]
        y0, y1 = yi[rows, ki - 1], yi[rows, ki]
        need = goal[inner] - ci[rows, ki - 1]
        dt = t1 - t0
        slope = _LN10 * (y1 - y0) / zz[inner]  # d ln L / d s, per unit fraction * dt
        rate0 = np.power(10.0, (y0 - tr[inner]) / zz[inner])
        # F(s) = rate0 * dt * (exp(slope s) - 1) / slope for fraction s in [0, 1]
        with np.errstate(divide="ignore", invalid="ignore"):
            frac_exp = np.log1p(need * slope / (rate0 * dt)) / slope
        frac_lin = need / (rate0 * dt)
        frac = np.where(np.abs(slope) < 1e-9, frac_lin, frac_exp)
        out[inner] = t0 + np.clip(frac, 0.0, 1.0) * dt
    return out


def first_time_at(
    times: ArrayLike,
    temps: ArrayLike,
    level: ArrayLike,
    direction: Literal["rising", "falling"] = "rising",
) -> NDArray[np.float64]:
    """Earliest time at which a history reaches ``level`` [s].

    Parameters
    ----------
    times : array_like
        Sample times [s].
    temps : array_like
        Temperatures, shape ``(..., n)`` [°C].
    level : array_like
        Temperature to reach [°C]; broadcasts to the batch shape.
    direction : {"rising", "falling"}
        ``"rising"``: first time ``T >= level``; ``"falling"``: first time
        ``T <= level``. A history that starts on the far side of the level
        gives its first sample time.

    Returns
    -------
    ndarray
        Time [s] with the crossing interpolated linearly between samples;
        NaN where the level is never reached.
    """
    if direction not in ("rising", "falling"):
        raise ThermalInputError(f"direction: must be 'rising' or 'falling', got {direction!r}")
    t, y = _history(times, temps)
    batch = y.shape[:-1]
    lv = _as_batch("level", as_float_array("level", level), batch)[..., None]
    reached = y >= lv if direction == "rising" else y <= lv
    ok = reached.any(axis=-1)
    k = np.argmax(reached, axis=-1)
    out = np.full(batch, np.nan)
    out[ok & (k == 0)] = t[..., 0][ok & (k == 0)]
    inner = ok & (k > 0)
    if inner.any():
        ki = k[inner]
        rows = np.arange(ki.size)
        ti, yi = t[inner], y[inner]
        t0, t1 = ti[rows, ki - 1], ti[rows, ki]
        y0, y1 = yi[rows, ki - 1], yi[rows, ki]
        frac = (lv[inner][:, 0] - y0) / (y1 - y0)
        out[inner] = t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0)
    return out


def _above_parts(t, y, thr):
    """Per interval: time above ``thr`` and the end of that part.

    Returns ``(above, end)`` with shape (..., n-1). The part of an interval
    above the threshold is contiguous because the history is linear in it.
    """
    t0, t1 = t[..., :-1], t[..., 1:]
    y0, y1 = y[..., :-1], y[..., 1:]
    up0, up1 = y0 >= thr, y1 >= thr
    with np.errstate(divide="ignore", invalid="ignore"):
        tc = t0 + (thr - y0) / (y1 - y0) * (t1 - t0)
    tc = np.where(np.isfinite(tc), tc, t0)
    start = np.where(up0, t0, np.where(up1, tc, t1))
    end = np.where(up1, t1, np.where(up0, tc, t0))
    return np.maximum(end - start, 0.0), end


def _runs(t, y, thr):
    """Run length of the above-threshold stretch at the end of each interval's
    above part, shape (..., n-1), and those end times."""
    above, end = _above_parts(t, y, thr)
    cum = np.concatenate([np.zeros((*above.shape[:-1], 1)), np.cumsum(above, axis=-1)], axis=-1)
    below = y < thr
    # Accumulated above-time at the last sample below the threshold at or
    # before each interval start (0 when the history starts above).
    base = np.where(below, cum, 0.0)[..., :-1]
    base = np.maximum.accumulate(base, axis=-1)
    return cum[..., 1:] - base, end


def longest_hold_above(
    times: ArrayLike, temps: ArrayLike, threshold: ArrayLike
) -> NDArray[np.float64]:
    """Longest unbroken time the history stays at or above ``threshold`` [s].

    Parameters
    ----------
    times : array_like
        Sample times [s].
    temps : array_like
        Temperatures, shape ``(..., n)`` [°C].
    threshold : array_like
        Temperature [°C]; broadcasts to the batch shape.

    Returns
    -------
    ndarray
        Longest hold [s], with the entry and exit crossings interpolated
        linearly; 0 for a history that never reaches the threshold or has a
        single sample.
    """
    t, y = _history(times, temps)
    batch = y.shape[:-1]
    thr = _as_batch("threshold", as_float_array("threshold", threshold), batch)[..., None]
    if y.shape[-1] < 2:
        return np.zeros(batch)
    runs, _ = _runs(t, y, thr)
    return runs.max(axis=-1)


def hold_reached_time(
    times: ArrayLike, temps: ArrayLike, threshold: ArrayLike, hold: ArrayLike
) -> NDArray[np.float64]:
    """Earliest time at which the history has stayed at or above ``threshold``
    for an unbroken ``hold`` [s].

    Parameters
    ----------
    times : array_like
        Sample times [s].
    temps : array_like
        Temperatures, shape ``(..., n)`` [°C].
    threshold : array_like
        Temperature [°C]; broadcasts to the batch shape.
    hold : array_like
        Required unbroken time at or above the threshold [s], >= 0. A hold of
        0 gives the first time the threshold is reached.

    Returns
    -------
    ndarray
        Time [s]; NaN where no stretch above the threshold lasts ``hold``.
    """
    t, y = _history(times, temps)
    batch = y.shape[:-1]
    need = _as_batch("hold", nonnegative("hold", hold), batch)
    first = first_time_at(t, y, threshold, "rising")
    if y.shape[-1] < 2:
        return np.where(need == 0.0, first, np.nan)
    thr = _as_batch("threshold", as_float_array("threshold", threshold), batch)[..., None]
    runs, end = _runs(t, y, thr)
    ok = runs >= need[..., None]
    any_ok = ok.any(axis=-1)
    k = np.argmax(ok, axis=-1)[..., None]
    when = np.take_along_axis(end, k, -1)[..., 0] - (np.take_along_axis(runs, k, -1)[..., 0] - need)
    out = np.where(any_ok, when, np.nan)
    return np.where(need == 0.0, first, out)
