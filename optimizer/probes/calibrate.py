"""Fit the surface heat-transfer coefficient of a logged trial run, with its uncertainty.

The run is simulated (:mod:`optimizer.probes.model`) from the logged air
history and the first readings, and ``h`` (optionally also a factor on the
product's conductivity and the probes' offset from the centre) is fitted by
nonlinear least squares on the core probe readings
(:func:`scipy.optimize.least_squares`, trust-region reflective, bounds
respected). ``h`` is fitted as ``log h``, so it stays positive and its
interval is a ratio.

Uncertainty
-----------
*Jacobian interval.* With the residual variance ``s² = SSR / (n - p)`` and
the Jacobian ``J`` at the optimum, the covariance of the parameters is
``s² (JᵀJ)⁻¹``; the 95 % interval is the estimate ± ``t(0.975, n - p)``
standard errors (on ``log h`` for ``h``). It assumes independent reading
errors; residuals that follow a trend (the model misses something) make it
too narrow, and a warning says so.

*Bootstrap over probes.* With two probes or more, the probes (each a piece
with its own start) are resampled with replacement and each resample refitted
by Gauss-Newton steps from the full fit, all resamples in one batched solver
call per step; the 2.5 and 97.5 percentiles of the refits are the interval.
It captures the piece-to-piece spread that the Jacobian interval does not;
with few probes it is coarse.

Warnings name what the data cannot identify: correlated parameters, a run
too short for the core to move, a Biot number at which the core hardly
depends on ``h`` (or, when the conductivity is fitted, too small for the
conductivity to show), a parameter at its bound.

References
----------
.. [1] Branch, M. A., Coleman, T. F., and Li, Y. (1999). A subspace,
   interior, and conjugate gradient method for large-scale bound-constrained
   minimization problems. *SIAM J. Sci. Comput.*, 21(1), 1-23 (the
   trust-region reflective method of ``least_squares``).
.. [2] Bates, D. M., and Watts, D. G. (1988). *Nonlinear Regression Analysis
   and Its Applications*. Wiley, ch. 2 (linear-approximation intervals).
.. [3] Efron, B., and Tibshirani, R. J. (1993). *An Introduction to the
   Bootstrap*. Chapman & Hall, ch. 13 (percentile intervals).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import optimize, stats

from optimizer.probes.logs import ProbeLog
from optimizer.probes.model import DEFAULT_STEPS, AirSegments, air_segments, probe_temperatures

__all__ = [
    "Calibration",
    "CalibrationError",
    "Estimate",
    "ProbeFit",
    "calibrate",
]

H_BOUNDS = (1.0, 1000.0)
"""Default bounds of the fitted h [W/(m² K)] (still air to strong impingement)."""
CONDUCTIVITY_BOUNDS = (0.5, 2.0)
"""Default bounds of the conductivity factor [-]."""
OFFSET_BOUNDS = (0.0, 0.5)
"""Default bounds of the probe offset from the centre, as a fraction of the
conduction length of the shortest direction [-]."""
BOOTSTRAP_DRAWS = 200
"""Resamples of the probes for the bootstrap interval [-]."""
_STEP = 1e-3
"""Central-difference step on every fitted parameter (log h, factor, offset) [-]."""
_SCAN = 12
"""Values of h tried in one batched call to start the fit [-]."""


class CalibrationError(ValueError):
    """A log or an option that cannot give a fit (names the channel or option)."""


@dataclass(frozen=True)
class Estimate:
    """A fitted parameter with its 95 % intervals.

    Attributes
    ----------
    name : str
        ``"h"``, ``"conductivity_factor"`` or ``"probe_offset"``.
    unit : str
        ``"W/(m² K)"`` or ``"-"``.
    value : float
        The estimate.
    low, high : float
        95 % interval from the Jacobian.
    boot_low, boot_high : float or None
        95 % percentile interval of the bootstrap over probes (None with one probe).
    bounds : tuple of float
        Bounds the fit kept to.
    at_bound : bool
        The estimate sits on a bound (within 0.1 % of the range).
    """

    name: str
    unit: str
    value: float
    low: float
    high: float
    boot_low: float | None
    boot_high: float | None
    bounds: tuple[float, float]
    at_bound: bool


@dataclass(frozen=True)
class ProbeFit:
    """Measured and fitted curves of one probe.

    Attributes
    ----------
    channel : str
        Log column.
    times : ndarray
        Times from the start of the fitted window [s].
    measured : ndarray
        Readings [°C] (NaN where missing).
    fitted : ndarray
        Model at the fitted parameters [°C].
    used : ndarray of bool
        Readings used in the fit.
    rms : float
        Root-mean-square residual of the used readings [K].
    """

    channel: str
    times: NDArray[np.float64]
    measured: NDArray[np.float64]
    fitted: NDArray[np.float64]
    used: NDArray[np.bool_]
    rms: float

    @property
    def residuals(self) -> NDArray[np.float64]:
        """Fitted minus measured [K] (NaN where not used)."""
        return np.where(self.used, self.fitted - self.measured, np.nan)


@dataclass(frozen=True)
class Calibration:
    """The fit of a trial run.

    Attributes
    ----------
    h : Estimate
        Surface coefficient, radiation included [W/(m² K)].
    conductivity_factor, probe_offset : Estimate or None
        The optional parameters, when fitted.
    probes : tuple of ProbeFit
        Each core probe used.
    rms : float
        Root-mean-square residual over all used readings [K].
    n_points : int
        Readings used [-].
    dof : int
        Degrees of freedom ``n - p`` [-].
    correlation : ndarray
        Correlation matrix of the fitted parameters (order of :attr:`estimates`).
    biot : float
        Biot number ``h L / k`` on the shortest conduction length at the fitted
        h and the run's mean product temperature [-].
    residual_lag1 : float
        Lag-1 autocorrelation of the residuals [-].
    warnings : tuple of str
        What the data could not identify, one line each.
    window : tuple of float
        Start and end of the fitted part of the log [s from its first reading].
    air : AirSegments
        The air history used.
    air_logged : ndarray or None
        The air readings at the probes' times [°C] (None when the log has no
        air channel).
    log_path, log_sha256 : str
        The log file and the SHA-256 of its bytes.
    started : str or None
        Date and time of the run's first reading (ISO), when the log has dates.
    evaluations : int
        Batched solver calls made [-].
    """

    h: Estimate
    conductivity_factor: Estimate | None
    probe_offset: Estimate | None
    probes: tuple[ProbeFit, ...]
    rms: float
    n_points: int
    dof: int
    correlation: NDArray[np.float64]
    biot: float
    residual_lag1: float
    warnings: tuple[str, ...]
    window: tuple[float, float]
    air: AirSegments
    air_logged: NDArray[np.float64] | None
    log_path: str
    log_sha256: str
    started: str | None
    evaluations: int

    @property
    def estimates(self) -> tuple[Estimate, ...]:
        """Every fitted parameter, h first."""
        return tuple(
            e for e in (self.h, self.conductivity_factor, self.probe_offset) if e is not None
        )


@dataclass(frozen=True)
class _Problem:
    geometry: Any
    properties: Any
    air: AirSegments
    times: NDArray[np.float64]
    measured: NDArray[np.float64]  # (K, n)
    used: NDArray[np.bool_]  # (K, n)
    start_core: NDArray[np.float64]  # (K,)
    start_surface: NDArray[np.float64]  # (K,)
    names: tuple[str, ...]  # fitted parameter names
    fixed: dict[str, float]
    n_cells: int | None
    steps: int

    def run(self, xs: NDArray[np.float64]) -> NDArray[np.float64]:
        """Model curves for parameter rows ``xs`` (m, p): shape (m, K, n)."""
        m = xs.shape[0]
        k = self.measured.shape[0]
        cols = {name: xs[:, i] for i, name in enumerate(self.names)}
        h = np.exp(cols["log_h"])
        kf = cols.get("conductivity_factor", np.full(m, self.fixed["conductivity_factor"]))
        # the offset is fitted as its signed square, in which the model is smooth at 0
        q = cols.get("probe_offset", np.full(m, self.fixed["probe_offset"]))
        off = np.sign(q) * np.sqrt(np.abs(q))
        y = probe_temperatures(
            self.geometry,
            self.properties,
            self.air,
            self.times,
            np.repeat(h, k),
            start_core=np.tile(self.start_core, m),
            start_surface=np.tile(self.start_surface, m),
            conductivity_factor=np.repeat(kf, k),
            offset=np.repeat(off, k),
            n_cells=self.n_cells,
            steps=self.steps,
        )
        return y.reshape(m, k, -1)

    def curves_and_jacobian(self, x: NDArray[np.float64]):
        """Model curves (K, n) and their Jacobian (K, n, p) by central differences."""
        p = x.size
        rows = [x]
        for j in range(p):
            for sign in (1.0, -1.0):
                xj = x.copy()
                xj[j] += sign * _STEP
                rows.append(xj)
        y = self.run(np.array(rows))
        jac = np.stack([(y[1 + 2 * j] - y[2 + 2 * j]) / (2 * _STEP) for j in range(p)], axis=-1)
        return y[0], jac


def _window_index(times: NDArray[np.float64], window: tuple[float, float] | None) -> NDArray:
    if window is None:
        return np.arange(times.size)
    lo, hi = window
    if not (hi > lo):
        raise CalibrationError(f"window: end must be after start, got {lo:g} s to {hi:g} s")
    idx = np.flatnonzero((times >= lo) & (times <= hi))
    if idx.size < 3:
        raise CalibrationError(
            f"window: holds {idx.size} readings ({lo:g} s to {hi:g} s); needs at least 3"
        )
    return idx


def _problem(
    log: ProbeLog,
    geometry: Any,
    properties: Any,
    probes: Sequence[str] | None,
    window: tuple[float, float] | None,
    air_temperature: float | None,
    names: tuple[str, ...],
    fixed: dict[str, float],
    n_cells: int | None,
    steps: int,
) -> _Problem:
    idx = _window_index(log.times, window)
    times = log.times[idx] - log.times[idx[0]]
    if probes is None:
        chans = list(log.cores)
    else:
        chans = []
        for name in probes:
            try:
                c = log.channel(name)
            except KeyError:
                known = ", ".join(c.name for c in log.cores)
                raise CalibrationError(
                    f"probe {name!r}: no such core channel in {log.path}; core channels: {known}"
                ) from None
            if c.role != "core":
                raise CalibrationError(f"probe {name!r}: is a {c.role} channel, not a core probe")
            chans.append(c)
    if not chans:
        raise CalibrationError(f"{log.path}: no core probe to fit")
    if log.air is not None:
        air = air_segments(times, log.air.values[idx])
    elif air_temperature is not None:
        air = AirSegments(np.array([times[-1]]), np.array([float(air_temperature)]))
    else:
        raise CalibrationError(
            f"{log.path}: the log has no air channel; name it, or give the air temperature"
        )
    measured = np.stack([c.values[idx] for c in chans])
    used = np.isfinite(measured)
    used[:, 0] = False  # the first reading is the start condition, not data
    starts = measured[:, 0]
    for c, s in zip(chans, starts, strict=True):
        if not math.isfinite(s):
            raise CalibrationError(
                f"probe {c.name!r}: no reading at the start of the fitted run "
                f"(line {int(log.lines[idx[0]])}); start the window where it reads"
            )
    surf = [c.values[idx[0]] for c in log.surfaces if math.isfinite(c.values[idx[0]])]
    start_surface = np.full(len(chans), float(np.mean(surf))) if surf else starts.copy()
    if used.sum() < 3 + len(names):
        raise CalibrationError(
            f"{log.path}: only {int(used.sum())} usable core readings for {len(names)} parameter(s)"
        )
    return _Problem(
        geometry,
        properties,
        air,
        times,
        measured,
        used,
        starts,
        start_surface,
        names,
        fixed,
        n_cells,
        steps,
    )


def _start(prob: _Problem, lo: NDArray, hi: NDArray, counter: list[int]) -> NDArray:
    """Best of a log-spaced scan of h (other parameters mid-range), one batched call."""
    grid = np.linspace(lo[0], hi[0], _SCAN)
    xs = np.tile(0.5 * (lo + hi), (_SCAN, 1))
    xs[:, 0] = grid
    for j, name in enumerate(prob.names):
        if name == "probe_offset":
            xs[:, j] = lo[j]
        if name == "conductivity_factor":
            xs[:, j] = min(max(1.0, lo[j]), hi[j])
    y = prob.run(xs)
    counter[0] += 1
    sse = np.nansum(np.where(prob.used, (y - prob.measured) ** 2, 0.0), axis=(1, 2))
    return xs[int(np.argmin(sse))].copy()


def _bootstrap(
    prob: _Problem,
    x_hat: NDArray,
    jac_hat: NDArray,
    lo: NDArray,
    hi: NDArray,
    draws: int,
    seed: int,
    counter: list[int],
) -> NDArray | None:
    """Refits over resampled probes: estimates per draw, shape (draws, p).

    Each distinct resample (probe counts) is refitted by Gauss-Newton steps
    from the full fit with the probes' Jacobians held at the full fit
    (``jac_hat``, shape (K, n, p)); the residuals are recomputed at every
    step, all resamples in one batched call, until the steps stop moving.
    """
    k = prob.measured.shape[0]
    if k < 2 or draws <= 0:
        return None
    rng = np.random.default_rng(seed)
    picks = rng.integers(0, k, size=(draws, k))
    counts = np.stack([np.bincount(row, minlength=k) for row in picks])
    uniq, inverse = np.unique(counts, axis=0, return_inverse=True)
    u, p = uniq.shape[0], x_hat.size
    # parameters the full fit left on a bound stay there (a projected step
    # would move the free ones off their optimum)
    span = hi - lo
    free = (x_hat - lo > 1e-6 * span) & (hi - x_hat > 1e-6 * span)
    if not free.any():
        return np.tile(x_hat, (draws, 1))
    jac = np.where(prob.used[..., None], jac_hat, 0.0) * free
    w = uniq[:, :, None] * prob.used[None]  # (u, K, n)
    jtj = np.einsum("ukn,kni,knj->uij", w, jac, jac)
    damp = 1e-10 * np.trace(jtj, axis1=1, axis2=2)[:, None, None] * np.eye(p)
    x = np.tile(x_hat, (u, 1))
    for _ in range(30):
        y = prob.run(x)  # (u, K, n)
        counter[0] += 1
        r = np.where(prob.used, y - prob.measured, 0.0)
        jtr = np.einsum("ukn,kni,ukn->ui", w, jac, r)
        step = -np.linalg.solve(jtj + damp + np.diag(~free * 1.0), jtr[..., None])[..., 0]
        x_new = np.clip(x + step, lo, hi)
        moved = float(np.abs(x_new - x).max())
        x = x_new
        if moved < 1e-8:
            break
    return x[inverse.ravel()]


_BACK = {
    "h": math.exp,
    "conductivity_factor": float,
    "probe_offset": lambda q: math.sqrt(max(q, 0.0)),
}
"""Fitted variable -> reported parameter (log h -> h, signed square -> offset)."""


def _estimate(
    name: str,
    value: float,
    half: float,
    boot: NDArray | None,
    bounds: tuple[float, float],
) -> Estimate:
    back = _BACK[name]
    v, lo, hi = back(value), back(value - half), back(value + half)
    b_lo = b_hi = None
    if boot is not None:
        q = np.percentile(boot, [2.5, 97.5])
        b_lo, b_hi = back(float(q[0])), back(float(q[1]))
    span = bounds[1] - bounds[0]
    at = min(abs(v - bounds[0]), abs(bounds[1] - v)) <= 1e-3 * span
    unit = "W/(m² K)" if name == "h" else "-"
    return Estimate(name, unit, v, lo, hi, b_lo, b_hi, bounds, bool(at))


def _lag1(r: NDArray, used: NDArray) -> float:
    vals = []
    for rk, uk in zip(r, used, strict=True):
        x = rk[uk]
        if x.size > 2:
            x = x - x.mean()
            den = float(x @ x)
            if den > 0:
                vals.append(float(x[1:] @ x[:-1]) / den)
    return float(np.mean(vals)) if vals else 0.0


def calibrate(
    log: ProbeLog,
    geometry: Any,
    properties: Any,
    *,
    probes: Sequence[str] | None = None,
    fit_conductivity: bool = False,
    fit_offset: bool = False,
    h_bounds: tuple[float, float] = H_BOUNDS,
    conductivity_bounds: tuple[float, float] = CONDUCTIVITY_BOUNDS,
    offset_bounds: tuple[float, float] = OFFSET_BOUNDS,
    window: tuple[float, float] | None = None,
    air_temperature: float | None = None,
    bootstrap: int = BOOTSTRAP_DRAWS,
    seed: int = 0,
    n_cells: int | None = None,
    steps: int = DEFAULT_STEPS,
) -> Calibration:
    """Fit h (and optionally a conductivity factor and the probe offset) to a log.

    Parameters
    ----------
    log : ProbeLog
        The trial run (:func:`optimizer.probes.logs.read_log`).
    geometry : thermal.geometry shape
        The logged piece [m] (for a scenario product, its largest piece).
    properties : property object
        Its thermal properties (``thermal.foods``).
    probes : sequence of str, optional
        Core channels to fit (default every core channel); each is a piece.
    fit_conductivity : bool
        Also fit a factor on the conductivity.
    fit_offset : bool
        Also fit the probes' offset from the centre (one for all probes).
    h_bounds : tuple of float
        Bounds of h [W/(m² K)], > 0.
    conductivity_bounds : tuple of float
        Bounds of the conductivity factor [-], > 0.
    offset_bounds : tuple of float
        Bounds of the offset as a fraction of the shortest conduction length [-], in [0, 1].
    window : tuple of float, optional
        Part of the log to fit, from its first reading [s].
    air_temperature : float, optional
        Constant air temperature when the log has no air channel [°C].
    bootstrap : int
        Resamples of the probes (0: none) [-].
    seed : int
        Seed of the resampling.
    n_cells : int, optional
        Cells per direction of the model.
    steps : int
        Time steps of the model over the run.

    Returns
    -------
    Calibration

    Raises
    ------
    CalibrationError
        A log or option that cannot give a fit.
    """
    for label, (lo_b, hi_b), low_ok in (
        ("h_bounds", h_bounds, 0.0),
        ("conductivity_bounds", conductivity_bounds, 0.0),
    ):
        if not (math.isfinite(lo_b) and math.isfinite(hi_b) and low_ok < lo_b < hi_b):
            raise CalibrationError(f"{label}: needs 0 < low < high, got {lo_b!r}, {hi_b!r}")
    if not (0.0 <= offset_bounds[0] < offset_bounds[1] <= 1.0):
        raise CalibrationError(
            f"offset_bounds: needs 0 <= low < high <= 1, got {offset_bounds[0]!r}, "
            f"{offset_bounds[1]!r}"
        )
    names = ["log_h"]
    lo = [math.log(h_bounds[0])]
    hi = [math.log(h_bounds[1])]
    if fit_conductivity:
        names.append("conductivity_factor")
        lo.append(conductivity_bounds[0])
        hi.append(conductivity_bounds[1])
    if fit_offset:
        names.append("probe_offset")
        lo.append(offset_bounds[0] ** 2)
        hi.append(offset_bounds[1] ** 2)
    lo_a, hi_a = np.array(lo), np.array(hi)
    fixed = {"conductivity_factor": 1.0, "probe_offset": 0.0}
    prob = _problem(
        log,
        geometry,
        properties,
        probes,
        window,
        air_temperature,
        tuple(names),
        fixed,
        n_cells,
        steps,
    )
    counter = [0]
    cache: dict[bytes, tuple[NDArray, NDArray, NDArray, NDArray]] = {}

    def evaluate(x: NDArray) -> tuple[NDArray, NDArray, NDArray, NDArray]:
        """Used residuals and their Jacobian; model curves (K, n) and Jacobian (K, n, p)."""
        key = np.asarray(x, dtype=float).tobytes()
        if key not in cache:
            counter[0] += 1
            y, jac = prob.curves_and_jacobian(np.asarray(x, dtype=float))
            cache.clear()
            cache[key] = ((y - prob.measured)[prob.used], jac[prob.used], y, jac)
        return cache[key]

    x0 = _start(prob, lo_a, hi_a, counter)
    sol = optimize.least_squares(
        lambda x: evaluate(x)[0],
        x0,
        jac=lambda x: evaluate(x)[1],
        bounds=(lo_a, hi_a),
        method="trf",
        x_scale="jac",
        xtol=1e-9,
        ftol=1e-10,
        gtol=1e-10,
        max_nfev=60,
    )
    x_hat = sol.x
    r, jac, y_fit, jac_probes = evaluate(x_hat)
    n, p = r.size, x_hat.size
    dof = max(n - p, 1)
    ssr = float(r @ r)
    s2 = ssr / dof
    cov = s2 * np.linalg.pinv(jac.T @ jac)
    se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    tq = float(stats.t.ppf(0.975, dof))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(se, se)
    corr = np.where(np.isfinite(corr), corr, 0.0)
    boot = _bootstrap(prob, x_hat, jac_probes, lo_a, hi_a, bootstrap, seed, counter)

    bounds_of = {
        "log_h": h_bounds,
        "conductivity_factor": conductivity_bounds,
        "probe_offset": offset_bounds,
    }
    est: dict[str, Estimate] = {}
    for j, name in enumerate(names):
        label = "h" if name == "log_h" else name
        est[label] = _estimate(
            label,
            float(x_hat[j]),
            tq * float(se[j]),
            None if boot is None else boot[:, j],
            bounds_of[name],
        )
    fits = []
    for k, c in enumerate(_channel_names(log, probes)):
        u = prob.used[k]
        res_k = (y_fit[k] - prob.measured[k])[u]
        fits.append(
            ProbeFit(
                c,
                prob.times,
                prob.measured[k],
                y_fit[k],
                u,
                float(np.sqrt(np.mean(res_k**2))) if res_k.size else math.nan,
            )
        )
    r_full = np.where(prob.used, y_fit - prob.measured, 0.0)
    lag1 = _lag1(r_full, prob.used)
    kf = est["conductivity_factor"].value if "conductivity_factor" in est else 1.0
    biot = _biot(geometry, properties, est["h"].value, kf, prob)
    warnings = _warnings(prob, est, corr, names, biot, lag1, boot is not None, fit_conductivity)
    idx = _window_index(log.times, window)
    return Calibration(
        h=est["h"],
        conductivity_factor=est.get("conductivity_factor"),
        probe_offset=est.get("probe_offset"),
        probes=tuple(fits),
        rms=float(math.sqrt(ssr / n)),
        n_points=n,
        dof=dof,
        correlation=corr,
        biot=biot,
        residual_lag1=lag1,
        warnings=tuple(warnings),
        window=(float(log.times[idx[0]]), float(log.times[idx[-1]])),
        air=prob.air,
        air_logged=None if log.air is None else log.air.values[idx],
        log_path=log.path,
        log_sha256=log.sha256,
        started=None if log.started is None else log.started.isoformat(sep=" "),
        evaluations=counter[0],
    )


def _channel_names(log: ProbeLog, probes: Sequence[str] | None) -> list[str]:
    return [c.name for c in log.cores] if probes is None else list(probes)


def _biot(geometry: Any, properties: Any, h: float, kf: float, prob: _Problem) -> float:
    length = min(length for _, length in geometry.directions)
    t_mean = float(np.nanmean(prob.measured))
    k = kf * float(np.asarray(properties.conductivity(t_mean)))
    return h * length / k


def _warnings(
    prob: _Problem,
    est: dict[str, Estimate],
    corr: NDArray,
    names: Sequence[str],
    biot: float,
    lag1: float,
    boot: bool,
    fit_conductivity: bool,
) -> list[str]:
    out: list[str] = []
    labels = ["h" if n == "log_h" else n for n in names]
    for i in range(len(labels)):
        for j in range(i + 1, len(labels)):
            if abs(corr[i, j]) > 0.95:
                out.append(
                    f"{labels[i]} and {labels[j]} are strongly correlated (r = {corr[i, j]:.2f}): "
                    f"the run cannot tell them apart; fix one of them"
                )
    h = est["h"]
    if h.high / h.low > 1.5:
        why = ""
        if biot > 20:
            why = (
                f" (Bi = {biot:.0f}: the surface follows the air, so the core hardly depends on h)"
            )
        out.append(
            f"h is poorly identified: 95 % interval {h.low:.1f} to {h.high:.1f} W/(m² K){why}"
        )
    elif biot > 20:
        out.append(
            f"Bi = {biot:.0f}: the surface follows the air; h matters little to the core "
            "and is known only roughly from this run"
        )
    for name in ("conductivity_factor", "probe_offset"):
        e = est.get(name)
        if e is not None and (e.high - e.low) > 0.4:
            out.append(f"{name} is poorly identified: 95 % interval {e.low:.2f} to {e.high:.2f}")
    if fit_conductivity and biot < 0.2:
        out.append(
            f"Bi = {biot:.2f}: the piece heats almost uniformly, so the run cannot tell the "
            "conductivity apart"
        )
    for e in est.values():
        # a probe offset of 0 (central) is the natural lower bound, not a warning
        if e.at_bound and not (e.name == "probe_offset" and e.value <= e.bounds[0] == 0.0):
            out.append(
                f"{e.name} = {e.value:.4g} is at its bound ({e.bounds[0]:g} to {e.bounds[1]:g}): "
                "the best fit may lie outside; widen the bounds or check the log"
            )
    air_mean = float(np.sum(prob.air.durations * prob.air.temperatures) / prob.air.total)
    moved = np.nanmax(np.abs(prob.measured - prob.start_core[:, None]), axis=1)
    room = np.abs(air_mean - prob.start_core)
    share = float(np.min(moved / np.maximum(room, 1e-9)))
    if share < 0.2:
        out.append(
            f"run too short: the core moved only {100 * share:.0f} % of the way from its "
            "start to the air temperature; h rests on the first part of the curve"
        )
    if lag1 > 0.8:
        out.append(
            f"residuals follow a trend (lag-1 correlation {lag1:.2f}): the model misses "
            "something in this run, and the Jacobian interval is likely too narrow"
        )
    if h.boot_low is not None and h.boot_high is not None:
        ratio = math.log(h.boot_high / h.boot_low) / max(math.log(h.high / h.low), 1e-300)
        if ratio > 3.0 and h.boot_high / h.boot_low > 1.01:
            out.append(
                f"the probes differ more than their reading noise explains: the bootstrap "
                f"interval ({h.boot_low:.4g} to {h.boot_high:.4g}) is {ratio:.0f} times as wide "
                "as the Jacobian one; quote the bootstrap interval"
            )
    if boot and prob.measured.shape[0] < 5:
        out.append(f"bootstrap over only {prob.measured.shape[0]} probes: its interval is coarse")
    return out
