"""The physics of a logged run: probe temperatures from the logged air history.

A logged run is simulated with :func:`thermal.numeric.simulate`: the piece
(largest-piece geometry and properties from the scenario), the logged air
temperature as piecewise-constant segments, one surface coefficient ``h``
(radiation included, as a measured h is in the scenario), and the start
profile from the first readings. The temperature at a probe is read from the
solver's profiles at the logged times, at the probe's distance from the
centre along the shortest conduction direction (the direction of the nearest
face), at the centre of the other directions.

Every quantity that a fit varies (``h``, a factor on the conductivity, the
probe's offset from the centre) may differ per batch member, so a whole
Jacobian is one batched solver call.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal import numeric

__all__ = [
    "DEFAULT_STEPS",
    "AirSegments",
    "ScaledConductivity",
    "air_segments",
    "probe_temperatures",
]

DEFAULT_STEPS = 60
"""Time steps over a whole run, shared among the air segments by duration [-]
(second-order steps; with 60 the core is within about 0.01 K of a fine run for
the demo products)."""

DEFAULT_CELLS = {1: 16, 2: 12, 3: 8}
"""Cells per direction, centre to surface, by number of directions [-]."""

MAX_SEGMENTS = 16
"""Most air segments a run is cut into [-]."""

MERGE_K = 0.25
"""Neighbouring air segments whose mean air temperatures differ by less than
this are joined [K] (below a logger's usual resolution of 0.1-0.5 K)."""


@dataclass(frozen=True)
class AirSegments:
    """The logged air temperature as piecewise-constant segments.

    Attributes
    ----------
    durations : ndarray
        Length of each segment [s].
    temperatures : ndarray
        Time-mean air temperature over each segment [°C].
    """

    durations: NDArray[np.float64]
    temperatures: NDArray[np.float64]

    @property
    def total(self) -> float:
        """Length of the run [s]."""
        return float(self.durations.sum())


def air_segments(
    times: ArrayLike,
    air: ArrayLike,
    *,
    max_segments: int = MAX_SEGMENTS,
    merge_k: float = MERGE_K,
) -> AirSegments:
    """Cut a logged air history into piecewise-constant segments.

    The air between readings is taken as linear in time (missing readings
    bridged linearly, ends held); the run is cut into at most
    ``max_segments`` pieces of about equal length, each carrying the time
    mean of the air over it, and neighbours closer than ``merge_k`` are
    joined.

    Parameters
    ----------
    times : array_like
        Sample times from the start of the run [s], increasing.
    air : array_like
        Air readings [°C]; NaN for missing ones.
    max_segments : int
        Most segments [-].
    merge_k : float
        Joining threshold [K].

    Returns
    -------
    AirSegments
    """
    t = np.asarray(times, dtype=float)
    a = np.asarray(air, dtype=float)
    ok = np.isfinite(a)
    if not ok.any():
        raise ValueError("air: no usable air reading")
    a = np.interp(t, t[ok], a[ok])
    total = float(t[-1] - t[0])
    n = int(max(1, min(max_segments, t.size - 1)))
    edges = t[0] + total * np.arange(n + 1) / n
    # time integral of the piecewise-linear air up to each edge
    cum = np.concatenate([[0.0], np.cumsum(np.diff(t) * 0.5 * (a[1:] + a[:-1]))])
    a_edges = np.interp(edges, t, a)
    # exact integral of the linear interpolant between sample times and edges
    k = np.clip(np.searchsorted(t, edges, side="right") - 1, 0, t.size - 2)
    at_edges = cum[k] + (edges - t[k]) * 0.5 * (a[k] + a_edges)
    durations = np.diff(edges)
    means = np.diff(at_edges) / durations
    out_d, out_t = [float(durations[0])], [float(means[0])]
    for d, m in zip(durations[1:], means[1:], strict=True):
        if abs(m - out_t[-1]) < merge_k:
            total_d = out_d[-1] + d
            out_t[-1] = (out_t[-1] * out_d[-1] + m * d) / total_d
            out_d[-1] = total_d
        else:
            out_d.append(float(d))
            out_t.append(float(m))
    return AirSegments(np.array(out_d), np.array(out_t))


class ScaledConductivity:
    """Food properties with the conductivity multiplied by a factor.

    Parameters
    ----------
    properties : property object
        Any object with ``enthalpy(T)`` [J/kg], ``conductivity(T)`` [W/(m K)]
        and ``density(T)`` [kg/m³] (T in °C).
    factor : float
        Factor on the conductivity [-], > 0.
    """

    def __init__(self, properties: Any, factor: float) -> None:
        self.base = properties
        self.factor = float(factor)

    def enthalpy(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Specific enthalpy [J/kg]."""
        return self.base.enthalpy(temperature)

    def density(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Density [kg/m³]."""
        return self.base.density(temperature)

    def conductivity(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Conductivity times the factor [W/(m K)]."""
        return self.factor * np.asarray(self.base.conductivity(temperature), dtype=float)


def _start_profile(
    grid_lengths: NDArray[np.float64], cells: Sequence[int], core0: NDArray, surface0: NDArray
) -> NDArray[np.float64]:
    """Start profile per member: ``Tc + (Ts - Tc) rho^2``, rho the largest of the
    cell centres' distances from the centre as fractions of each direction."""
    batch = core0.size
    rho2 = np.zeros((batch, *cells))
    for d, n in enumerate(cells):
        frac = (np.arange(n) + 0.5) / n
        shape = [1] * (len(cells) + 1)
        shape[d + 1] = n
        rho2 = np.maximum(rho2, np.broadcast_to((frac**2).reshape(shape), rho2.shape))
    c = core0.reshape((batch,) + (1,) * len(cells))
    s = surface0.reshape((batch,) + (1,) * len(cells))
    return c + (s - c) * rho2


def _along(profiles: NDArray[np.float64], direction: int, frac: NDArray[np.float64]):
    """Profile values at fraction ``frac`` of the conduction length along
    ``direction``, at the centre of the others.

    ``profiles`` has shape (batch, n_times, *cells); returns (batch, n_times).
    Inside the first cell centre the profile is the even quadratic
    ``T = a + c x²`` through the first two cells (the solver's core
    extrapolation); a negative ``frac = -f`` continues it to ``x² = -f²``, so
    that the model is smooth in ``frac |frac|`` through the centre (fits take
    differences there).
    """
    ndim = profiles.ndim - 2
    x = profiles
    # centre of the other directions (even-symmetry extrapolation, as the solver's core)
    for ax in sorted((a + 2 for a in range(ndim) if a != direction), reverse=True):
        x = 1.125 * np.take(x, 0, axis=ax) - 0.125 * np.take(x, 1, axis=ax)
    line = x  # (batch, n_times, n)
    n = line.shape[-1]
    out = np.empty(line.shape[:2])
    for b in range(line.shape[0]):
        f = float(frac[b])
        x2 = np.sign(f) * (f * n) ** 2  # squared position in cell widths, signed
        row = line[b]
        if x2 <= 0.25:
            # even quadratic through the first two cell centres (0.5 and 1.5 cells)
            c = (row[:, 1] - row[:, 0]) / (1.5**2 - 0.5**2)
            out[b] = row[:, 0] + c * (x2 - 0.25)
            continue
        p = min(math.sqrt(x2), n) - 0.5  # in cell-centre index units
        if p >= n - 1:
            out[b] = row[:, -1] + (p - (n - 1)) * (row[:, -1] - row[:, -2])
        else:
            j = int(np.floor(p))
            w = p - j
            out[b] = row[:, j] * (1 - w) + row[:, j + 1] * w
    return out


def probe_temperatures(
    geometry: Any,
    properties: Any,
    air: AirSegments,
    times: ArrayLike,
    h: ArrayLike,
    *,
    start_core: ArrayLike,
    start_surface: ArrayLike | None = None,
    conductivity_factor: ArrayLike = 1.0,
    offset: ArrayLike = 0.0,
    n_cells: int | None = None,
    steps: int = DEFAULT_STEPS,
) -> NDArray[np.float64]:
    """Model temperatures at probe positions through a logged run, batched.

    Parameters
    ----------
    geometry : thermal.geometry shape
        The piece (largest-piece dimensions) [m].
    properties : property object
        Its thermal properties (``thermal.foods``).
    air : AirSegments
        The logged air history.
    times : array_like
        Times at which to report [s], within the run.
    h : array_like
        Surface coefficient per member, radiation included [W/(m² K)], > 0;
        shape (batch,).
    start_core : array_like
        Core temperature at the start per member [°C].
    start_surface : array_like, optional
        Surface temperature at the start per member [°C] (default: the core's,
        a uniform start).
    conductivity_factor : array_like
        Factor on the conductivity per member [-].
    offset : array_like
        Distance of the probe from the centre along the shortest conduction
        direction, as a fraction of that direction's conduction length [-]
        (0 the centre, 1 the surface).
    n_cells : int, optional
        Cells per direction (default :data:`DEFAULT_CELLS`).
    steps : int
        Time steps over the run [-].

    Returns
    -------
    ndarray, shape (batch, n_times)
        Temperature at each member's probe position [°C].
    """
    hh = np.atleast_1d(np.asarray(h, dtype=float))
    batch = hh.size
    kf = np.broadcast_to(np.asarray(conductivity_factor, dtype=float), (batch,))
    off = np.broadcast_to(np.asarray(offset, dtype=float), (batch,))
    core0 = np.broadcast_to(np.asarray(start_core, dtype=float), (batch,)).copy()
    surf0 = (
        core0
        if start_surface is None
        else np.broadcast_to(np.asarray(start_surface, dtype=float), (batch,)).copy()
    )
    directions = geometry.directions
    ndim = len(directions)
    cells = (int(n_cells) if n_cells is not None else DEFAULT_CELLS.get(ndim, 8),) * ndim
    lengths = np.array([length for _, length in directions])
    shortest = int(np.argmin(lengths))
    scaled: dict[float, Any] = {}
    props = []
    for f in kf:
        key = float(f)
        if key not in scaled:
            scaled[key] = properties if key == 1.0 else ScaledConductivity(properties, key)
        props.append(scaled[key])
    share = air.durations / air.total
    n_steps = [max(1, round(steps * s)) for s in share]
    segments = [
        numeric.Segment(float(d), float(ta), hh)
        for d, ta in zip(air.durations, air.temperatures, strict=True)
    ]
    initial = _start_profile(np.broadcast_to(lengths, (batch, ndim)), cells, core0, surf0)
    t = np.clip(np.asarray(times, dtype=float), 0.0, air.total)
    res = numeric.simulate(
        [geometry] * batch,
        props,
        initial,
        segments,
        n_cells=cells,
        n_steps=n_steps,
        profile_times=t,
    )
    assert res.profiles is not None
    return _along(res.profiles, shortest, off)
