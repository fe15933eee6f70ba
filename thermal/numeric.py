"""Finite-volume transient conduction with phase change, batched over products.

The solver takes one product or a batch of products (sizes, properties and air
settings may all differ per member) through a schedule of piecewise-constant
surface conditions and returns core, surface and mean temperature histories,
the final profile and the heat added per kilogram.

Public API (stable; other modules call it)
-------------------------------------------
``Segment(duration, t_air, h, t_wall=None, emissivity=0.0)``
    One piece of the schedule; every field a scalar or an array of shape
    ``(batch,)``.
``zone_segments(zone_lengths, belt_speed, t_air, h, t_wall=None, emissivity=0.0)``
    Tunnel zones passed at a belt speed, as a list of segments.
``simulate(geometry, properties, initial, segments, *, n_cells=None, dt=None,
profile_times=None, density_temperature=None, tolerance=1e-6,
max_iterations=50, table_step=0.1, scheme="extrapolated", step_tolerance=None,
n_steps=None) -> SimulationResult``
    Run the batch; ``SimulationResult.take(members)`` is the result of some
    members only.
``SimulationResult.final_state() -> Profile`` and ``resample(profile, n_cells)``
    Carry the end profile of one run (with its mass density) into the next,
    optionally on another grid.

Method
------
*Geometry.* Each shape is a product of one-dimensional directions, read from
``geometry.directions`` (``(("slab", L),)``, ``(("cylinder", R),)``,
``(("sphere", R),)``, ``(("cylinder", R), ("slab", H/2))`` for a finite
cylinder, three slabs for a block). Each direction is covered by a uniform
cell-centred grid of ``n`` cells from the centre (symmetry, zero flux) to the
exposed surface, so only the symmetric half, quarter or octant is computed.
Radial directions carry the cylindrical (``r``) or spherical (``r^2``) face
areas and cell volumes, so the scheme conserves energy exactly in each
geometry.

*Enthalpy formulation.* The state is the specific enthalpy ``H`` [J/kg] of
each cell. Mass density is constant in time per member (the density of the
properties at ``density_temperature``, by default the member's volume-mean
initial temperature), so the volumetric enthalpy is ``rho * H`` and mass is
conserved while freezing. Temperature-dependent ``H(T)``, ``k(T)`` are
tabulated once per distinct property object on the multiples of
``table_step`` covering every temperature the run can reach (the maximum
principle bounds it by the initial, air and wall temperatures); the nodes do
not depend on the other members of a batch, so a member's result is the
same alone or batched with others (to rounding) when the members share the
step counts (``n_steps``). The hot path interpolates these tables with
computed indices, vectorised over the batch. ``T(H)`` is the exact inverse
of the piecewise-linear ``H(T)`` table.

*Implicit step.* Backward Euler on the enthalpy balance (unconditionally
stable). Each step solves the nonlinear implicit equations by the enthalpy
linearisation of Swaminathan and Voller (1992): ``H_new = H_k + C_k (T -
T_k)`` with ``C_k = dH/dT`` at the iterate, a tridiagonal solve for ``T``,
then ``T_k+1 = T(H_new)``; conductivities (arithmetic mean of the two cells at
each interface) are lagged (Picard). Iteration stops when the residual of the
energy balance, expressed as a temperature (residual divided by the diagonal
of the Jacobian), is below ``tolerance`` [K]; one solve suffices for constant
properties without radiation. A converged step conserves energy to that
tolerance, including through a latent range.

*Time accuracy.* ``scheme="extrapolated"`` (default) combines, for every step
of size ``dt``, one backward-Euler step of ``dt`` and two of ``dt/2`` as
``H = 2 H_half - H_full`` (local Richardson extrapolation): second order in
time, A-stable with a stability function that vanishes at infinity, energy
conserving (a linear combination of conservative steps), but not strictly
monotone (undershoots of order 1e-3 K can appear just after a jump of the
air temperature). ``scheme="euler"`` is plain backward Euler: first order,
monotone, a third of the work per step. Every segment starts with graded
sub-steps (from 1/64 up to 1/2 of a step) because the surface conditions jump
there. Space is second order throughout.

*Adaptive steps* (``step_tolerance``, extrapolated scheme): the difference
between the full step and the two half steps is the classic step-doubling
estimate of the local error of backward Euler [5]; its largest value over
every cell and member must stay below ``step_tolerance`` [K], else the step
is repeated shorter. The next step is ``0.9 (tol / est)^(1/2)`` times this
one (between 0.2 and 2 times). Steps stay the same fraction of each
member's segment for the whole batch, so one member with fast changes sets
the pace; after a jump of the air conditions the steps start small and grow
as the profile smooths, which is where most of the work is saved.

*Several directions.* Finite cylinders and blocks use locally one-dimensional
(LOD) splitting: each step performs one implicit enthalpy sub-step per
direction (tridiagonal solves along every grid line), with the direction
order reversed on alternate steps. Each sub-step is conservative, so energy
is conserved exactly; the splitting error is first order in ``dt`` like
backward Euler and is removed with it by the extrapolated scheme (second
order overall). Space remains second order.

*Surface.* Each exposed face receives ``q = h (T_air - T_s) +
eps sigma (T_wall^4 - T_s^4)`` (kelvin in the radiation term), with the face
temperature ``T_s`` solved from the half-cell conduction balance by Newton's
method and the flux linearised inside the implicit step. ``h = inf`` fixes
the surface at the air temperature.

*Core.* The reported core is the centre value extrapolated from the first two
cells with the even-symmetry weights ``(9, -1)/8`` in every direction
(second order). ``surface`` is the temperature at the middle of the face
nearest the centre (the exposed face of the shortest direction), similarly
extrapolated along the other directions; ``surface_min`` and
``surface_max`` are the extremes over all face cells.

References
----------
.. [1] Patankar, S. V. (1980). *Numerical Heat Transfer and Fluid Flow*.
   Hemisphere. (Cell-centred finite volumes, tridiagonal solves.)
.. [2] Swaminathan, C. R., and Voller, V. R. (1992). A general enthalpy
   method for modeling solidification processes. *Metallurgical
   Transactions B*, 23, 651-664.
.. [3] Voller, V. R. (1990). Fast implicit finite-difference method for the
   analysis of phase change problems. *Numerical Heat Transfer B*, 17,
   155-169.
.. [4] Yanenko, N. N. (1971). *The Method of Fractional Steps*. Springer.
   (Locally one-dimensional splitting.)
.. [5] Hairer, E., and Wanner, G. (1996). *Solving Ordinary Differential
   Equations II*, 2nd ed., Springer, section IV.9 (extrapolation of the
   implicit Euler method).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numba import njit
from numpy.typing import ArrayLike, NDArray

from thermal._checks import ABSOLUTE_ZERO_C, as_float_array
from thermal.errors import ThermalInputError

STEFAN_BOLTZMANN = 5.670374419e-8
"""Stefan-Boltzmann constant [W/m2 K4] (CODATA 2018, exact in SI)."""

_KELVIN = -ABSOLUTE_ZERO_C
_CENTRE_WEIGHTS = (9.0 / 8.0, -1.0 / 8.0)
_SHAPES_1D = ("slab", "cylinder", "sphere")
_DEFAULT_CELLS = {1: 32, 2: 24, 3: 20}
_START_FRACTIONS = [1 / 64, 1 / 64, 1 / 32, 1 / 16, 1 / 8, 1 / 4, 1 / 2]
_MIN_STEP_FRACTION = 1e-6
"""Adaptive steps: shortest step, as a fraction of the fixed step ``dt``, below
which a step is accepted whatever its error estimate [-]."""


class SolverConvergenceError(RuntimeError):
    """The implicit iteration did not converge within ``max_iterations``."""


@dataclass(frozen=True)
class Segment:
    """Piecewise-constant surface conditions for one part of a schedule.

    Every field is a scalar (same for the whole batch) or an array of shape
    ``(batch,)``.

    Parameters
    ----------
    duration : float or array
        Length of the segment [s], > 0.
    t_air : float or array
        Air (medium) temperature [°C].
    h : float or array
        Convective surface coefficient [W/m2 K], >= 0 (``inf`` fixes the
        surface at ``t_air``). If it already includes radiation, leave
        ``emissivity`` at 0.
    t_wall : float or array or None
        Temperature of the surrounding walls for radiation [°C]; None means
        equal to ``t_air``.
    emissivity : float or array
        Product surface emissivity in [0, 1] (grey body in large
        surroundings) [-].
    """

    duration: ArrayLike
    t_air: ArrayLike
    h: ArrayLike
    t_wall: ArrayLike | None = None
    emissivity: ArrayLike = 0.0


def zone_segments(
    zone_lengths: Sequence[float],
    belt_speed: ArrayLike,
    t_air: Sequence[ArrayLike],
    h: Sequence[ArrayLike],
    t_wall: Sequence[ArrayLike | None] | None = None,
    emissivity: ArrayLike = 0.0,
) -> list[Segment]:
    """Segments for tunnel zones passed at a belt speed.

    Parameters
    ----------
    zone_lengths : sequence of float
        Length of each zone along the belt [m], > 0.
    belt_speed : float or array
        Belt speed [m/s], > 0; an array of shape ``(batch,)`` gives each
        member its own speed (and so its own zone durations).
    t_air : sequence
        Air temperature per zone [°C] (each scalar or ``(batch,)``).
    h : sequence
        Surface coefficient per zone [W/m2 K].
    t_wall : sequence or None
        Wall temperature per zone [°C]; None means equal to the air.
    emissivity : float or array
        Product emissivity [-], the same in every zone.

    Returns
    -------
    list of Segment
        One segment per zone with ``duration = length / belt_speed`` [s].
    """
    lengths = as_float_array("zone_lengths", zone_lengths, accepted="> 0 m")
    if lengths.ndim != 1 or lengths.size == 0:
        raise ThermalInputError("zone_lengths: must be a non-empty 1-D sequence of lengths [m]")
    if (lengths <= 0).any():
        raise ThermalInputError("zone_lengths: every zone length must be > 0 m")
    speed = as_float_array("belt_speed", belt_speed, accepted="> 0 m/s")
    if (speed <= 0).any():
        raise ThermalInputError("belt_speed: must be > 0 m/s")
    n = lengths.size
    for name, seq in (("t_air", t_air), ("h", h)):
        if len(seq) != n:
            raise ThermalInputError(f"{name}: needs one value per zone ({n}), got {len(seq)}")
    walls = [None] * n if t_wall is None else list(t_wall)
    if len(walls) != n:
        raise ThermalInputError(f"t_wall: needs one value per zone ({n}), got {len(walls)}")
    return [
        Segment(float(lengths[i]) / speed, t_air[i], h[i], walls[i], emissivity) for i in range(n)
    ]


@dataclass(frozen=True)
class Grid:
    """The cell-centred grid of a batch.

    Attributes
    ----------
    kind : str
        Geometry kind of the batch (from ``geometry.kind``, or built from the
        directions).
    axes : tuple of str
        One-dimensional shape of each direction ("slab", "cylinder", "sphere").
    lengths : ndarray, shape (batch, n_directions)
        Conduction length of each direction (centre to surface) [m].
    n_cells : tuple of int
        Cells per direction.
    """

    kind: str
    axes: tuple[str, ...]
    lengths: NDArray[np.float64]
    n_cells: tuple[int, ...]

    def centres(self, direction: int = 0) -> NDArray[np.float64]:
        """Cell-centre coordinates from the centre along ``direction`` [m].

        Returns
        -------
        ndarray, shape (batch, n_cells[direction])
        """
        n = self.n_cells[direction]
        frac = (np.arange(n) + 0.5) / n
        return self.lengths[:, direction, None] * frac

    def cell_volumes(self) -> NDArray[np.float64]:
        """Relative cell volumes (per radian / steradian) [m^d], shape (batch, *cells)."""
        vol = np.ones((self.lengths.shape[0],) + (1,) * len(self.axes))
        for d, axis in enumerate(self.axes):
            _, v = _line_factors(axis, self.lengths[:, d], self.n_cells[d])
            shape = [v.shape[0]] + [1] * len(self.axes)
            shape[d + 1] = self.n_cells[d]
            vol = vol * v.reshape(shape)
        return vol


@dataclass(frozen=True)
class Profile:
    """A temperature field on a solver grid, to start the next simulation.

    Attributes
    ----------
    temperature : ndarray, shape (batch, *cells)
        Cell temperatures [°C].
    density : ndarray or None, shape (batch,)
        Constant mass density carried from the run that made the profile
        [kg/m3]; None lets the next run choose.
    """

    temperature: NDArray[np.float64]
    density: NDArray[np.float64] | None = None


@dataclass(frozen=True)
class SimulationResult:
    """Histories and end state of a batched simulation.

    All histories have shape ``(batch, n_times)``; ``n_times`` is the number
    of time steps plus one (the start). Each member has its own time axis
    because segment durations may differ per member.

    Attributes
    ----------
    times : ndarray
        Time since the start of the run [s].
    core : ndarray
        Centre temperature (the slowest point) [°C].
    surface : ndarray
        Temperature at the middle of the face nearest the centre [°C].
    surface_min, surface_max : ndarray
        Lowest and highest face-cell temperature over all exposed faces [°C].
    mean : ndarray
        Mass-weighted mean temperature [°C].
    final : ndarray, shape (batch, *cells)
        Cell temperatures at the end [°C].
    heat_in_segments : ndarray, shape (batch, n_segments)
        Heat added per kg of product in each segment [J/kg] (positive in).
    heat_in : ndarray, shape (batch,)
        Total heat added per kg [J/kg] (positive in).
    segment_end : ndarray of int, shape (n_segments,)
        Index into the time axis at which each segment ends.
    grid : Grid
        The grid used.
    density : ndarray, shape (batch,)
        Constant mass density used [kg/m3].
    profile_times : ndarray or None, shape (batch, n_requested)
        Times at which full profiles were recorded [s].
    profiles : ndarray or None, shape (batch, n_requested, *cells)
        Profiles at ``profile_times`` [°C] (linear in time between steps).
    iterations : int
        Largest number of implicit iterations taken in any step.
    """

    times: NDArray[np.float64]
    core: NDArray[np.float64]
    surface: NDArray[np.float64]
    surface_min: NDArray[np.float64]
    surface_max: NDArray[np.float64]
    mean: NDArray[np.float64]
    final: NDArray[np.float64]
    heat_in_segments: NDArray[np.float64]
    heat_in: NDArray[np.float64]
    segment_end: NDArray[np.int_]
    grid: Grid
    density: NDArray[np.float64]
    profile_times: NDArray[np.float64] | None = None
    profiles: NDArray[np.float64] | None = field(default=None, repr=False)
    iterations: int = 0

    def final_state(self) -> Profile:
        """The end profile and density, to start a following simulation."""
        return Profile(self.final.copy(), self.density.copy())

    def take(self, members: slice) -> SimulationResult:
        """The result of the batch members ``members`` only (a slice of the batch).

        The time axis, segment ends and iteration count are the batch's.
        """
        grid = Grid(self.grid.kind, self.grid.axes, self.grid.lengths[members], self.grid.n_cells)
        return SimulationResult(
            times=self.times[members],
            core=self.core[members],
            surface=self.surface[members],
            surface_min=self.surface_min[members],
            surface_max=self.surface_max[members],
            mean=self.mean[members],
            final=self.final[members],
            heat_in_segments=self.heat_in_segments[members],
            heat_in=self.heat_in[members],
            segment_end=self.segment_end,
            grid=grid,
            density=self.density[members],
            profile_times=None if self.profile_times is None else self.profile_times[members],
            profiles=None if self.profiles is None else self.profiles[members],
            iterations=self.iterations,
        )


# ---------------------------------------------------------------------------
# geometry helpers


def _line_factors(axis: str, length: NDArray[np.float64], n: int):
    """Face areas (n+1) and cell volumes (n) per unit angle for one direction.

    Returns arrays of shape (batch, n+1) and (batch, n).
    """
    faces = length[:, None] * (np.arange(n + 1) / n)
    if axis == "slab":
        area = np.ones_like(faces)
        vol = np.diff(faces, axis=1)
    elif axis == "cylinder":
        area = faces
        vol = np.diff(faces**2, axis=1) / 2.0
    else:
        area = faces**2
        vol = np.diff(faces**3, axis=1) / 3.0
    return area, vol


def _read_geometry(geometry: Any) -> tuple[str, tuple[str, ...], NDArray[np.float64]]:
    members = list(geometry) if isinstance(geometry, (list, tuple)) else [geometry]
    if not members:
        raise ThermalInputError("geometry: needs at least one shape")
    axes_ref: tuple[str, ...] | None = None
    kind_ref = ""
    lengths = []
    for i, g in enumerate(members):
        dirs = getattr(g, "directions", None)
        if dirs is None:
            raise ThermalInputError(
                f"geometry[{i}]: must be a thermal.geometry shape (with .directions), got {g!r}"
            )
        axes = tuple(str(a) for a, _ in dirs)
        lens = [float(x) for _, x in dirs]
        if not axes or any(a not in _SHAPES_1D for a in axes):
            raise ThermalInputError(
                f"geometry[{i}]: directions must be 'slab', 'cylinder' or 'sphere', got {axes}"
            )
        if ("sphere" in axes and len(axes) > 1) or axes.count("cylinder") > 1 or len(axes) > 3:
            raise ThermalInputError(f"geometry[{i}]: unsupported combination of directions {axes}")
        if not all(np.isfinite(x) and x > 0 for x in lens):
            raise ThermalInputError(f"geometry[{i}]: conduction lengths must be > 0 m, got {lens}")
        kind = str(getattr(g, "kind", "+".join(axes)))
        if axes_ref is None:
            axes_ref, kind_ref = axes, kind
        elif axes != axes_ref:
            raise ThermalInputError(
                f"geometry[{i}]: every batch member must have the same kind of shape "
                f"({kind_ref}), got {kind}"
            )
        lengths.append(lens)
    assert axes_ref is not None
    return kind_ref, axes_ref, np.asarray(lengths, dtype=float)


# ---------------------------------------------------------------------------
# property tables


class _Tables:
    """Per distinct property object: H(T), k(T), rho(T) on a uniform T grid."""

    def __init__(self, props: list[Any], t_low: float, t_high: float, step: float):
        unique: list[Any] = []
        member = np.empty(len(props), dtype=np.intp)
        for i, p in enumerate(props):
            for j, q in enumerate(unique):
                if q is p:
                    member[i] = j
                    break
            else:
                member[i] = len(unique)
                unique.append(p)
        # nodes on the fixed lattice of multiples of ``step``: a member's table
        # values do not depend on the other members of its batch
        k0 = int(np.floor(t_low / step))
        n = max(int(np.ceil(t_high / step)) - k0 + 1, 8)
        self.k0 = float(k0)
        self.t0 = k0 * step
        self.dt = float(step)
        self.n = n
        tgrid = self.dt * (self.k0 + np.arange(n))
        h_tab = np.empty((len(unique), n))
        k_tab = np.empty((len(unique), n))
        rho_tab = np.empty((len(unique), n))
        for j, p in enumerate(unique):
            for name, tab, fn in (
                ("enthalpy", h_tab, "enthalpy"),
                ("conductivity", k_tab, "conductivity"),
                ("density", rho_tab, "density"),
            ):
                func = getattr(p, fn, None)
                if func is None:
                    raise ThermalInputError(f"properties: object {p!r} has no {name}(T) method")
                vals = np.broadcast_to(np.asarray(func(tgrid), dtype=float), tgrid.shape)
                if not np.isfinite(vals).all():
                    raise ThermalInputError(
                        f"properties: {name}(T) is not finite on [{t_low:.1f}, {t_high:.1f}] °C"
                    )
                tab[j] = vals
        if (k_tab <= 0).any():
            raise ThermalInputError("properties: conductivity(T) must be > 0")
        if (rho_tab <= 0).any():
            raise ThermalInputError("properties: density(T) must be > 0")
        if (np.diff(h_tab, axis=1) <= 0).any():
            raise ThermalInputError(
                "properties: enthalpy(T) must increase strictly with temperature"
            )
        self.member = member
        self.h = h_tab
        self.k = k_tab
        self.rho = rho_tab
        self.slope = np.diff(h_tab, axis=1) / self.dt  # (U, n-1)
        # inverse index table on a uniform enthalpy grid per table
        nq = 2 * n
        self.h0 = h_tab[:, 0].copy()
        self.dh = (h_tab[:, -1] - h_tab[:, 0]) / (nq - 1)
        self.nq = nq
        idx = np.empty((len(unique), nq), dtype=np.intp)
        for j in range(len(unique)):
            hq = self.h0[j] + self.dh[j] * np.arange(nq)
            idx[j] = np.clip(np.searchsorted(h_tab[j], hq, side="right") - 1, 0, n - 2)
        self.idx = idx
        self.single = len(unique) == 1
        # constant cp and k: the implicit step is linear and one solve is exact
        self.linear = bool(
            np.ptp(self.slope, axis=1).max() <= 1e-9 * np.abs(self.slope).max()
            and np.ptp(k_tab, axis=1).max() <= 1e-12 * k_tab.max()
        )
        self.h_flat = h_tab.ravel()
        self.k_flat = k_tab.ravel()
        self.slope_flat = np.concatenate([self.slope, self.slope[:, -1:]], axis=1).ravel()
        self.idx_flat = idx.ravel()

    def ids(self, tid: NDArray[np.intp]) -> _Members | None:
        """Per-member table offsets for the hot path (None when one table serves all)."""
        if self.single:
            return None
        return _Members(
            base=tid * self.n,
            base_q=tid * self.nq,
            h0=self.h0[tid],
            inv_dh=1.0 / self.dh[tid],
        )

    def _index(self, t, ids):
        x = t * (1.0 / self.dt) - self.k0
        j = np.minimum(np.maximum(x, 0.0), self.n - 2).astype(np.intp)
        w = x - j
        return w, (j if ids is None else ids.base + j)

    def enthalpy(self, t, ids):
        w, flat = self._index(t, ids)
        return self.h_flat[flat] + self.slope_flat[flat] * (w * self.dt)

    def conductivity(self, t, ids):
        w, flat = self._index(t, ids)
        k_lo = self.k_flat[flat]
        return k_lo + (self.k_flat[flat + 1] - k_lo) * w

    def temperature(self, h, ids):
        """Exact inverse of the piecewise-linear H(T) table."""
        if ids is None:
            x = (h - self.h0[0]) * (1.0 / self.dh[0])
            base = 0
        else:
            x = (h - ids.h0) * ids.inv_dh
            base = ids.base
        q = np.minimum(np.maximum(x, 0.0), self.nq - 1).astype(np.intp)
        flat = self.idx_flat[q if ids is None else ids.base_q + q] + base
        last = base + (self.n - 2)
        while True:
            move = (flat < last) & (h >= self.h_flat[flat + 1])
            if not move.any():
                break
            flat = flat + move
        t_node = self.dt * (self.k0 + (flat - base))
        return t_node + (h - self.h_flat[flat]) / self.slope_flat[flat]


@dataclass(frozen=True)
class _Members:
    """Offsets of each member's table rows, shaped to broadcast with the state."""

    base: NDArray[np.intp]
    base_q: NDArray[np.intp]
    h0: NDArray[np.float64]
    inv_dh: NDArray[np.float64]


# ---------------------------------------------------------------------------
# surface


def _surface_temperature(t_cell, g, h, t_air, rad, t_wall_k4, ts):
    """Face temperature from G (Ts - Tcell) = h (Tair - Ts) + rad (Twall^4 - Ts^4).

    ``rad`` = emissivity * sigma. A few Newton steps from the guess ``ts``;
    the implicit iteration around it repeats them until converged.
    """
    inf_h = np.isinf(h)
    hf = np.where(inf_h, 0.0, h)
    linear = (g * t_cell + hf * t_air) / (g + hf)
    if not np.any(rad):
        return np.where(inf_h, t_air, linear)
    for _ in range(3):
        tk = ts + _KELVIN
        f = g * (ts - t_cell) - hf * (t_air - ts) - rad * (t_wall_k4 - tk**4)
        df = g + hf + 4.0 * rad * tk**3
        ts = ts - f / df
    # members without radiation: the closed form, as in a batch without radiation
    return np.where(inf_h, t_air, np.where(rad == 0, linear, ts))


# ---------------------------------------------------------------------------
# one implicit enthalpy step along one direction


class _Line:
    """Static data for sweeps along one direction (arrays laid out cells-first)."""

    def __init__(self, axis: str, lengths, n: int, ndim: int, batch: int):
        area, vol = _line_factors(axis, lengths, n)  # (B, n+1), (B, n)
        dx = lengths / n  # (B,)
        self.n = n
        # broadcast shape for per-member values on the moved layout
        # moved layout: (n, B, other dims...)
        self.other = ndim - 1
        pad = (1,) * self.other
        self.vol = vol.T.reshape((n, batch, *pad))
        self.g_area = (area[:, 1:-1] / dx[:, None]).T.reshape((n - 1, batch, *pad))
        self.s_area = area[:, -1].reshape((batch, *pad))  # surface face area factor
        self.g_half = (2.0 / dx).reshape((batch, *pad))  # 1/(dx/2)
        self.kernel_static: dict = {}  # the same, laid out for the line kernel


def _to_line(x, d):
    """Move grid axis d (0-based among grid axes) to front: (n_d, B, ...)."""
    return np.moveaxis(x, d + 1, 0)


def _from_line(x, d):
    return np.moveaxis(x, 0, d + 1)


def _implicit_sweep(
    tables: _Tables,
    line: _Line,
    h_now,  # (n, B, ...) specific enthalpy at start of sub-step
    t_now,  # (n, B, ...) temperature consistent with h_now
    tid,  # _Members with per-line offsets (B, 1, ...), or None (one table)
    rho_over_dt,  # (B, ...) rho/dt
    bc,  # tuple(h, t_air, rad, t_wall_k4) each (B, ...)
    ts_guess,  # (B, ...)
    tolerance: float,
    max_iterations: int,
):
    """One implicit enthalpy sub-step along every grid line of one direction.

    Lays the lines side by side (``(n, L)``) with their per-line constants
    (line-major) and runs the compiled line kernel :func:`_sweep_lines`; every line
    iterates until its own residual is below ``tolerance``.
    """
    n = h_now.shape[0]
    shape = h_now.shape
    n_lines = int(np.prod(shape[1:]))
    per_line = shape[1:]

    def flat(x):
        return np.ascontiguousarray(np.broadcast_to(x, per_line), dtype=float).ravel()

    def cells(x, m):
        # line-major (L, m): each line's cells contiguous for the kernel
        return np.ascontiguousarray(
            np.broadcast_to(x, (m, *per_line)).reshape(m, n_lines).T, dtype=float
        )

    h_coef, t_air, rad, t_wall_k4 = bc
    key = (per_line, None if tid is None else id(tid))
    static = line.kernel_static.get(key)
    if static is None:
        # per-line constants of this direction, laid out once per layout
        if tid is None:
            offsets = (
                np.zeros(n_lines, dtype=np.intp),
                np.zeros(n_lines, dtype=np.intp),
                np.full(n_lines, tables.h0[0]),
                np.full(n_lines, 1.0 / tables.dh[0]),
            )
        else:
            offsets = (
                np.ascontiguousarray(np.broadcast_to(tid.base, per_line)).ravel().astype(np.intp),
                np.ascontiguousarray(np.broadcast_to(tid.base_q, per_line)).ravel().astype(np.intp),
                flat(tid.h0),
                flat(tid.inv_dh),
            )
        static = (
            cells(line.vol, n),
            cells(line.g_area, n - 1),
            flat(line.s_area),
            flat(line.g_half),
            *offsets,
        )
        line.kernel_static = {key: static}
    vol, g_area, s_area, g_half, base, base_q, h0, inv_dh = static
    h_out = np.empty((n_lines, n))
    t_out = np.empty((n_lines, n))
    ts_out = np.empty(n_lines)
    it = _sweep_lines(
        cells(h_now, n),
        cells(t_now, n),
        vol * flat(rho_over_dt)[:, None],
        g_area,
        s_area,
        g_half,
        flat(h_coef),
        flat(t_air),
        flat(rad),
        flat(t_wall_k4),
        flat(ts_guess),
        base,
        base_q,
        h0,
        inv_dh,
        tables.h_flat,
        tables.k_flat,
        tables.slope_flat,
        tables.idx_flat,
        float(tables.k0),
        float(tables.dt),
        int(tables.n),
        int(tables.nq),
        bool(tables.linear and not np.any(rad)),
        float(tolerance),
        int(max_iterations),
        h_out,
        t_out,
        ts_out,
    )
    if it < 0:
        raise SolverConvergenceError(
            f"implicit iteration did not converge in {max_iterations} iterations; reduce dt"
        )
    return (
        np.ascontiguousarray(h_out.T).reshape(shape),
        np.ascontiguousarray(t_out.T).reshape(shape),
        ts_out.reshape(per_line),
        it,
    )


@njit(cache=True, error_model="numpy")
def _sweep_lines(
    h_now,
    t_now,
    m,
    g_area,
    s_area,
    g_half,
    h_coef,
    t_air,
    rad,
    t_wall_k4,
    ts_guess,
    base,
    base_q,
    h0,
    inv_dh,
    h_tab,
    k_tab,
    slope_tab,
    idx_tab,
    k0,
    dt,
    n_tab,
    nq,
    linear,
    tolerance,
    max_iterations,
    h_out,
    t_out,
    ts_out,
):  # pragma: no cover - compiled; covered through simulate()
    """Compiled implicit enthalpy iteration on independent lines ``(L, n)``.

    The same steps as the method notes of this module: enthalpy
    linearisation with lagged face conductivities, the face temperature by
    Newton's method, a tridiagonal solve (Thomas algorithm; the matrix is
    diagonally dominant) and the exact inverse of the H(T) table. Returns
    the most iterations any line took, or -1 when a line did not converge.
    """
    n_lines, n = h_now.shape
    inv_dt = 1.0 / dt
    slope = np.empty(n)
    k = np.empty(n)
    g = np.empty(n - 1)
    diag = np.empty(n)
    rhs = np.empty(n)
    cp = np.empty(n)
    h = np.empty(n)
    t = np.empty(n)
    worst = 0
    for ln in range(n_lines):
        for i in range(n):
            h[i] = h_now[ln, i]
            t[i] = t_now[ln, i]
        hc = h_coef[ln]
        inf_h = np.isinf(hc)
        hf = 0.0 if inf_h else hc
        ta = t_air[ln]
        rd = rad[ln]
        tw4 = t_wall_k4[ln]
        ts = ts_guess[ln]
        sa = s_area[ln]
        b = base[ln]
        done = False
        it = 0
        while not done:
            # properties at the iterate
            for i in range(n):
                x = t[i] * inv_dt - k0
                xc = min(max(x, 0.0), n_tab - 2.0)
                j = int(xc)
                w = x - j
                f = b + j
                slope[i] = slope_tab[f]
                k[i] = k_tab[f] + (k_tab[f + 1] - k_tab[f]) * w
            for i in range(n - 1):
                g[i] = g_area[ln, i] * 0.5 * (k[i + 1] + k[i])
            g_s = g_half[ln] * k[n - 1]
            # face temperature from the half-cell balance
            if inf_h:
                ts = ta
            elif rd == 0.0:
                ts = (g_s * t[n - 1] + hf * ta) / (g_s + hf)
            else:
                for _ in range(3):
                    tk = ts + _KELVIN
                    fs = g_s * (ts - t[n - 1]) - hf * (ta - ts) - rd * (tw4 - tk * tk * tk * tk)
                    ts = ts - fs / (g_s + hf + 4.0 * rd * tk * tk * tk)
            for i in range(n):
                diag[i] = m[ln, i] * slope[i]
            for i in range(n - 1):
                diag[i] += g[i]
                diag[i + 1] += g[i]
            if it > 0:
                err = 0.0
                for i in range(n):
                    flux = 0.0
                    if i < n - 1:
                        flux += g[i] * (t[i + 1] - t[i])
                    if i > 0:
                        flux -= g[i - 1] * (t[i] - t[i - 1])
                    d = diag[i]
                    if i == n - 1:
                        flux += sa * g_s * (ts - t[i])
                        d = d + sa * g_s
                    r = abs(m[ln, i] * (h[i] - h_now[ln, i]) - flux) / d
                    if r > err:
                        err = r
                if err < tolerance:
                    break
                if it == max_iterations:
                    return -1
            # linearised surface: flux into the last cell = frac (q0 + ht ts) - u T_N
            tk = ts + _KELVIN
            ht = hf + 4.0 * rd * tk * tk * tk
            if inf_h:
                u = g_s
                rhs_s = g_s * ta
            else:
                q0 = hf * (ta - ts) + rd * (tw4 - tk * tk * tk * tk)
                u = g_s * ht / (g_s + ht)
                rhs_s = g_s / (g_s + ht) * (q0 + ht * ts)
            diag[n - 1] += sa * u
            for i in range(n):
                rhs[i] = m[ln, i] * (slope[i] * t[i] - h[i] + h_now[ln, i])
            rhs[n - 1] += sa * rhs_s
            # Thomas algorithm: sub- and super-diagonals are -g
            cp[0] = -g[0] / diag[0]
            rhs[0] = rhs[0] / diag[0]
            for i in range(1, n):
                den = diag[i] + g[i - 1] * cp[i - 1]
                if i < n - 1:
                    cp[i] = -g[i] / den
                rhs[i] = (rhs[i] + g[i - 1] * rhs[i - 1]) / den
            for i in range(n - 2, -1, -1):
                rhs[i] = rhs[i] - cp[i] * rhs[i + 1]
            # enthalpy update and the exact inverse of the H(T) table
            for i in range(n):
                h[i] = h[i] + slope[i] * (rhs[i] - t[i])
                x = (h[i] - h0[ln]) * inv_dh[ln]
                q = int(min(max(x, 0.0), nq - 1.0))
                f = idx_tab[base_q[ln] + q] + b
                last = b + n_tab - 2
                while f < last and h[i] >= h_tab[f + 1]:
                    f += 1
                t[i] = dt * (k0 + (f - b)) + (h[i] - h_tab[f]) / slope_tab[f]
            it += 1
            if linear:
                # constant cp and k, no radiation: the linear solve is the exact step
                k_last = k[n - 1]
                g_s = g_half[ln] * k_last
                ts = ta if inf_h else (g_s * t[n - 1] + hf * ta) / (g_s + hf)
                done = True
        if it > worst:
            worst = it
        for i in range(n):
            h_out[ln, i] = h[i]
            t_out[ln, i] = t[i]
        ts_out[ln] = ts
    return worst


# ---------------------------------------------------------------------------
# inputs


def _batch_array(name: str, value: ArrayLike, batch: int, *, allow_inf: bool = False):
    arr = as_float_array(name, value, allow_inf=allow_inf)
    if arr.ndim == 0:
        return np.full(batch, float(arr))
    if arr.shape == (batch,):
        return arr.copy()
    if arr.shape == (1,):
        return np.full(batch, float(arr[0]))
    raise ThermalInputError(
        f"{name}: must be a scalar or an array of shape ({batch},) (one per batch member), "
        f"got shape {arr.shape}"
    )


def _read_segments(segments: Sequence[Segment], batch: int):
    if isinstance(segments, Segment):
        segments = [segments]
    if len(segments) == 0:
        raise ThermalInputError("segments: needs at least one Segment")
    out = []
    for i, s in enumerate(segments):
        if not isinstance(s, Segment):
            raise ThermalInputError(f"segments[{i}]: must be a Segment, got {type(s).__name__}")
        dur = _batch_array(f"segments[{i}].duration", s.duration, batch)
        if (dur <= 0).any():
            raise ThermalInputError(f"segments[{i}].duration: must be > 0 s, got {dur.min()!r}")
        t_air = _batch_array(f"segments[{i}].t_air", s.t_air, batch)
        if (t_air <= ABSOLUTE_ZERO_C).any():
            raise ThermalInputError(f"segments[{i}].t_air: must be above -273.15 °C")
        h = _batch_array(f"segments[{i}].h", s.h, batch, allow_inf=True)
        if (h < 0).any():
            raise ThermalInputError(f"segments[{i}].h: must be >= 0 W/m2K, got {h.min()!r}")
        wall = t_air if s.t_wall is None else _batch_array(f"segments[{i}].t_wall", s.t_wall, batch)
        if (wall <= ABSOLUTE_ZERO_C).any():
            raise ThermalInputError(f"segments[{i}].t_wall: must be above -273.15 °C")
        eps = _batch_array(f"segments[{i}].emissivity", s.emissivity, batch)
        if ((eps < 0) | (eps > 1)).any():
            raise ThermalInputError(f"segments[{i}].emissivity: must be in [0, 1]")
        out.append((dur, t_air, h, wall, eps))
    return out


def _extrapolate_centre(x, axes: Sequence[int]):
    """Even-symmetry extrapolation to the centre along the given array axes."""
    for ax in sorted(axes, reverse=True):
        x0 = np.take(x, 0, axis=ax)
        x1 = np.take(x, 1, axis=ax)
        x = _CENTRE_WEIGHTS[0] * x0 + _CENTRE_WEIGHTS[1] * x1
    return x


def resample(profile: Profile | ArrayLike, n_cells: int | Sequence[int]) -> Profile:
    """Resample a profile onto a grid with other cell counts.

    Linear interpolation in each direction in the fractional coordinate
    (cell centre / conduction length), flat (symmetric) at the centre and
    linearly extrapolated to the last half cell at the surface. Second
    order; not exactly conservative (the mean changes by the interpolation
    error only).

    Parameters
    ----------
    profile : Profile or array, shape (batch, *cells)
        Cell temperatures [°C].
    n_cells : int or sequence of int
        New cell counts per direction.

    Returns
    -------
    Profile
        The resampled temperatures (density carried over).
    """
    prof = profile if isinstance(profile, Profile) else Profile(np.asarray(profile, float))
    t = np.asarray(prof.temperature, dtype=float)
    ndim = t.ndim - 1
    cells = (int(n_cells),) * ndim if np.isscalar(n_cells) else tuple(int(c) for c in n_cells)
    if len(cells) != ndim or any(c < 2 for c in cells):
        raise ThermalInputError(
            f"n_cells: needs {ndim} cell counts >= 2 for this profile, got {n_cells!r}"
        )
    for d, n_new in enumerate(cells):
        n_old = t.shape[d + 1]
        if n_old == n_new:
            continue
        x_old = (np.arange(n_old) + 0.5) / n_old
        x_new = (np.arange(n_new) + 0.5) / n_new
        j = np.clip(np.searchsorted(x_old, x_new) - 1, 0, n_old - 2)
        w = (x_new - x_old[j]) / (x_old[j + 1] - x_old[j])
        w = np.where(x_new < x_old[0], 0.0, w)
        t_moved = np.moveaxis(t, d + 1, 0)
        shape = (-1,) + (1,) * (t_moved.ndim - 1)
        new = t_moved[j] * (1 - w.reshape(shape)) + t_moved[j + 1] * w.reshape(shape)
        t = np.moveaxis(new, 0, d + 1)
    return Profile(np.ascontiguousarray(t), prof.density)


# ---------------------------------------------------------------------------
# main entry


def simulate(
    geometry: Any,
    properties: Any,
    initial: ArrayLike | Profile,
    segments: Sequence[Segment] | Segment,
    *,
    n_cells: int | Sequence[int] | None = None,
    dt: float | None = None,
    profile_times: ArrayLike | None = None,
    density_temperature: ArrayLike | None = None,
    tolerance: float = 1e-6,
    max_iterations: int = 50,
    table_step: float = 0.1,
    scheme: str = "extrapolated",
    step_tolerance: float | None = None,
    n_steps: Sequence[int] | None = None,
) -> SimulationResult:
    """Simulate a batch of products through a schedule of surface conditions.

    Parameters
    ----------
    geometry : shape or sequence of shapes
        ``thermal.geometry`` shapes (any object with ``directions`` =
        ((series shape, conduction length [m]), ...) and optionally
        ``kind``). A sequence makes a batch; all members must be the same
        kind of shape, sizes may differ.
    properties : property object or sequence of them
        Objects with vectorised ``enthalpy(T)`` [J/kg], ``conductivity(T)``
        [W/m K] and ``density(T)`` [kg/m3] (T in °C), for example
        ``thermal.foods.FoodProperties``; one for all or one per member.
        Objects that are the same instance are tabulated once.
    initial : float, array or Profile
        Start temperature [°C]: a scalar (uniform), an array of shape
        ``(batch,)`` (uniform per member), an array of shape
        ``(batch, *cells)`` or ``(1, *cells)`` (a profile on the grid), or a
        :class:`Profile` (e.g. ``previous.final_state()``; resampled if its
        cell counts differ from ``n_cells``).
    segments : sequence of Segment
        The schedule, applied in order.
    n_cells : int or sequence of int, optional
        Cells per direction from centre to surface. Default: taken from a
        profile start, else 32 (1-D), 20 (2-D), 14 (3-D).
    dt : float, optional
        Largest time step [s]. Each segment is cut into the same number of
        equal steps for every member (the member with the longest segment
        sets the count), so segment ends are hit exactly. Default: a step
        with cell Fourier number about 2 for the most diffusive member and
        at least 50 steps per segment.
    profile_times : array, optional
        Times at which to record full profiles [s], shape ``(n,)`` (all
        members) or ``(batch, n)``; each must lie within the member's run.
    density_temperature : float or array, optional
        Temperature at which each member's constant mass density is taken
        [°C]. Default: the member's volume-mean initial temperature (or the
        density carried by a Profile start).
    tolerance : float
        Convergence tolerance of the implicit iteration, as a temperature
        residual [K].
    max_iterations : int
        Iterations allowed per step before SolverConvergenceError.
    table_step : float
        Temperature step of the property tables [K].
    step_tolerance : float, optional
        Adaptive time steps (extrapolated scheme only): the largest change
        any cell of any member may show between one step and two half steps
        (the step-doubling estimate of the first-order local error) [K].
        Steps, the same fraction of each member's segment for every member,
        grow or shrink to meet it; a step that misses it is repeated
        shorter. ``dt`` then sets the first step of each segment (cut into
        the graded start). Default None: fixed steps.
    n_steps : sequence of int, optional
        Steps per segment, one count >= 1 per segment, the same for every
        member (instead of the count ``dt`` gives; ``dt`` is then not
        used). Members that would run alone with the same counts get the
        same result in one batch.

    Returns
    -------
    SimulationResult

    Raises
    ------
    ThermalInputError
        Bad shapes, NaN, non-positive durations or sizes, negative h,
        emissivity outside [0, 1], or properties with enthalpy not
        increasing in temperature.
    SolverConvergenceError
        The implicit iteration failed to converge (reduce ``dt``).

    References
    ----------
    .. [1] Swaminathan, C. R., and Voller, V. R. (1992). A general enthalpy
       method for modeling solidification processes. *Metall. Trans. B*, 23,
       651-664.
    .. [2] Patankar, S. V. (1980). *Numerical Heat Transfer and Fluid Flow*.
    """
    kind, axes, lengths = _read_geometry(geometry)
    batch = lengths.shape[0]
    ndim = len(axes)
    props = list(properties) if isinstance(properties, (list, tuple)) else [properties] * batch
    if len(props) == 1 and batch > 1:
        props = props * batch
    if len(props) != batch:
        raise ThermalInputError(
            f"properties: needs one object or {batch} (one per member), got {len(props)}"
        )
    segs = _read_segments(segments, batch)
    if not (np.isfinite(tolerance) and tolerance > 0):
        raise ThermalInputError(f"tolerance: must be > 0 K, got {tolerance!r}")
    if int(max_iterations) < 1:
        raise ThermalInputError(f"max_iterations: must be >= 1, got {max_iterations!r}")
    if scheme not in ("extrapolated", "euler"):
        raise ThermalInputError(f"scheme: must be 'extrapolated' or 'euler', got {scheme!r}")
    if not (np.isfinite(table_step) and table_step > 0):
        raise ThermalInputError(f"table_step: must be > 0 K, got {table_step!r}")
    if step_tolerance is not None:
        if not (np.isfinite(step_tolerance) and step_tolerance > 0):
            raise ThermalInputError(f"step_tolerance: must be > 0 K, got {step_tolerance!r}")
        if scheme != "extrapolated":
            raise ThermalInputError(
                "step_tolerance: adaptive steps need scheme='extrapolated' "
                "(the step-doubling estimate), got scheme='euler'"
            )

    # ---- initial state and grid
    carried_density = None
    if isinstance(initial, Profile):
        prof_t = as_float_array("initial", initial.temperature)
        if prof_t.ndim != ndim + 1:
            raise ThermalInputError(
                f"initial: profile must have shape (batch, *cells) with {ndim} grid axes, "
                f"got shape {prof_t.shape}"
            )
        carried_density = initial.density
        init_kind = "profile"
        init = prof_t
    else:
        init = as_float_array("initial", initial)
        if init.ndim == 0:
            init_kind = "uniform"
        elif init.ndim == 1:
            init_kind = "member"
        elif init.ndim == ndim + 1:
            init_kind = "profile"
        else:
            raise ThermalInputError(
                f"initial: must be a scalar, shape ({batch},) or (batch, *cells) with {ndim} "
                f"grid axes, got shape {init.shape}"
            )
    if n_cells is None:
        cells = tuple(init.shape[1:]) if init_kind == "profile" else (_DEFAULT_CELLS[ndim],) * ndim
    else:
        cells = (int(n_cells),) * ndim if np.isscalar(n_cells) else tuple(int(c) for c in n_cells)
    if len(cells) != ndim or any(c < 2 for c in cells):
        raise ThermalInputError(
            f"n_cells: needs {ndim} cell count(s) >= 2 for {kind}, got {n_cells!r}"
        )
    if init_kind == "uniform":
        t0 = np.full((batch, *cells), float(init))
    elif init_kind == "member":
        if init.shape[0] not in (1, batch):
            raise ThermalInputError(
                f"initial: a 1-D start needs shape ({batch},) (one per member), got {init.shape}"
            )
        t0 = np.broadcast_to(init.reshape((-1,) + (1,) * ndim), (batch, *cells)).copy()
    else:
        if init.shape[0] not in (1, batch):
            raise ThermalInputError(
                f"initial: profile batch size must be 1 or {batch}, got {init.shape[0]}"
            )
        if tuple(init.shape[1:]) != cells:
            init = resample(init, cells).temperature
        t0 = np.broadcast_to(init, (batch, *cells)).copy()
    if (t0 <= ABSOLUTE_ZERO_C).any():
        raise ThermalInputError("initial: temperatures must be above -273.15 °C")

    grid = Grid(kind, axes, lengths, cells)
    vol = grid.cell_volumes()  # (B, *cells)
    vol_sum = vol.reshape(batch, -1).sum(axis=1)

    # ---- property tables over the reachable range
    temps = [t0.min(), t0.max()]
    for _, t_air, _, wall, _ in segs:
        temps += [t_air.min(), t_air.max(), wall.min(), wall.max()]
    pad = max(1.0, 5 * table_step)
    t_low, t_high = float(min(temps)) - pad, float(max(temps)) + pad
    if density_temperature is not None:
        dens_t = _batch_array("density_temperature", density_temperature, batch)
        t_low = min(t_low, float(dens_t.min()) - pad)
        t_high = max(t_high, float(dens_t.max()) + pad)
    tables = _Tables(props, t_low, t_high, table_step)
    tid_b = tables.member  # (B,)
    tid_grid = tid_b.reshape((batch,) + (1,) * ndim)

    if carried_density is not None and density_temperature is None:
        rho = _batch_array("initial.density", carried_density, batch)
        if (rho <= 0).any():
            raise ThermalInputError("initial.density: must be > 0 kg/m3")
    else:
        if density_temperature is None:
            dens_t = (t0 * vol).reshape(batch, -1).sum(axis=1) / vol_sum
        x = dens_t * (1.0 / tables.dt) - tables.k0
        j = np.clip(np.floor(x).astype(np.intp), 0, tables.n - 2)
        w = x - j
        rho = tables.rho[tid_b, j] * (1 - w) + tables.rho[tid_b, j + 1] * w

    # ---- time steps
    durations = np.stack([s[0] for s in segs], axis=1)  # (B, S)
    if dt is None:
        k_max = tables.k[tid_b].max(axis=1)
        cp_min = tables.slope[tid_b].min(axis=1)
        alpha = k_max / (rho * cp_min)
        dx_min = (lengths / np.asarray(cells)).min(axis=1)
        dt_max = float(np.min(2.0 * dx_min**2 / alpha))
    else:
        if not (np.isfinite(dt) and dt > 0):
            raise ThermalInputError(f"dt: must be > 0 s, got {dt!r}")
        dt_max = float(dt)
    if n_steps is None:
        steps = [
            max(int(np.ceil(durations[:, i].max() / dt_max - 1e-9)), 50 if dt is None else 1)
            for i in range(len(segs))
        ]
    else:
        steps = [int(c) for c in n_steps]
        if len(steps) != len(segs) or min(steps) < 1:
            raise ThermalInputError(
                f"n_steps: needs one step count >= 1 per segment ({len(segs)}), got {n_steps!r}"
            )
    # each segment starts with graded sub-steps (1/8, 1/8, 1/4, 1/2 of a step)
    # because the surface conditions jump there and the solution is least smooth
    fractions = [np.array(_START_FRACTIONS + [1.0] * (n - 1)) for n in steps]

    # ---- profile recording
    req = None
    if profile_times is not None:
        req = as_float_array("profile_times", profile_times)
        if req.ndim == 1:
            req = np.broadcast_to(req, (batch, req.size)).copy()
        if req.ndim != 2 or req.shape[0] != batch:
            raise ThermalInputError(
                f"profile_times: must have shape (n,) or ({batch}, n), got {req.shape}"
            )
        total = durations.sum(axis=1)
        if (req < 0).any() or (req > total[:, None] * (1 + 1e-12)).any():
            raise ThermalInputError("profile_times: every time must lie within the run [0, total]")
        profiles = np.empty((batch, req.shape[1], *cells))
        done = req <= 0
        profiles[done] = np.broadcast_to(t0[:, None], profiles.shape)[done]

    # ---- state
    h_state = tables.enthalpy(t0, tables.ids(tid_grid))
    t_state = t0.copy()

    def mass_h(hh: NDArray[np.float64]) -> NDArray[np.float64]:
        # constant density per member: mass-weighted = volume-weighted
        return (hh * vol).reshape(batch, -1).sum(axis=1) / vol_sum

    lines = [_Line(axes[d], lengths[:, d], cells[d], ndim, batch) for d in range(ndim)]
    pad_other = (1,) * (ndim - 1)
    # surface temperature guesses per direction in line layout without n: (B, other...)
    ts_guess = [np.moveaxis(t0, d + 1, 1)[:, -1] for d in range(ndim)]
    face_t = [g.copy() for g in ts_guess]

    shortest = np.argmin(lengths, axis=1)  # per member: the face nearest the centre
    times: list[NDArray[np.float64]] = []
    core: list[NDArray[np.float64]] = []
    surf: list[NDArray[np.float64]] = []
    smin: list[NDArray[np.float64]] = []
    smax: list[NDArray[np.float64]] = []
    mean: list[NDArray[np.float64]] = []

    def record(t_now: NDArray[np.float64]) -> None:
        times.append(t_now.copy())
        core.append(_extrapolate_centre(t_state, range(1, ndim + 1)))
        mean.append((t_state * vol).reshape(batch, -1).sum(axis=1) / vol_sum)
        if ndim == 1:
            surf.append(face_t[0].copy())
        else:
            mids = np.stack([_extrapolate_centre(f, range(1, ndim)) for f in face_t])
            surf.append(np.take_along_axis(mids, shortest[None, :], axis=0)[0])
        smin.append(np.min([x.reshape(batch, -1).min(axis=1) for x in face_t], axis=0))
        smax.append(np.max([x.reshape(batch, -1).max(axis=1) for x in face_t], axis=0))

    tid_line = tables.ids(tid_b.reshape((batch, *pad_other)))
    tid_full = tables.ids(tid_grid)

    def advance(h_in, t_in, rho_dt, bc, order):
        """One LOD backward-Euler step (one implicit sweep per direction)."""
        rho_over_dt = rho_dt.reshape((batch, *pad_other))
        it_max = 0
        for d in order:
            h_new, t_new, ts, it = _implicit_sweep(
                tables,
                lines[d],
                np.ascontiguousarray(_to_line(h_in, d)),
                np.ascontiguousarray(_to_line(t_in, d)),
                tid_line,
                rho_over_dt,
                bc,
                ts_guess[d],
                tolerance,
                int(max_iterations),
            )
            it_max = max(it_max, it)
            ts_guess[d] = ts
            h_in = np.ascontiguousarray(_from_line(h_new, d))
            t_in = np.ascontiguousarray(_from_line(t_new, d))
        return h_in, t_in, it_max

    t_elapsed = np.zeros(batch)
    record(t_elapsed)
    heat_seg = np.empty((batch, len(segs)))
    seg_end = np.empty(len(segs), dtype=np.intp)
    max_it = 0
    n_taken = 0  # accepted steps; alternates the LOD direction order
    rad_const = STEFAN_BOLTZMANN
    for i, (dur, t_air, h_coef, wall, eps) in enumerate(segs):
        h_start = mass_h(h_state)
        unit = 1.0 / steps[i]  # one full step as a fraction of the segment
        bc = tuple(
            x.reshape((batch, *pad_other))
            for x in (h_coef, t_air, eps * rad_const, (wall + _KELVIN) ** 4)
        )
        fixed = iter(fractions[i] * unit) if step_tolerance is None else None
        done_frac = 0.0
        next_frac = _START_FRACTIONS[0] * unit
        while True:
            if fixed is not None:
                frac = next(fixed, None)
                if frac is None:
                    break
            else:
                left = 1.0 - done_frac
                if left <= 1e-12:
                    break
                # no sliver of a step at the segment end
                frac = left if next_frac > 0.9 * left else next_frac
            step = dur * frac
            order = list(range(ndim)) if n_taken % 2 == 0 else list(range(ndim - 1, -1, -1))
            t_prev = t_state
            if scheme == "euler":
                h_state, t_state, it = advance(h_state, t_state, rho / step, bc, order)
            else:
                h_c, t_c, it_c = advance(h_state, t_state, rho / step, bc, order)
                h_f, t_f, it_f1 = advance(h_state, t_state, 2.0 * rho / step, bc, order)
                h_f, t_f, it_f2 = advance(h_f, t_f, 2.0 * rho / step, bc, order)
                if step_tolerance is not None:
                    # step doubling: one step against two half steps [K]
                    est = float(np.abs(t_f - t_c).max())
                    grow = 0.9 * np.sqrt(step_tolerance / est) if est > 0 else 2.0
                    if est > step_tolerance and frac > _MIN_STEP_FRACTION * unit:
                        next_frac = frac * max(0.2, grow)
                        continue
                    next_frac = frac * min(2.0, max(0.2, grow))
                h_state = 2.0 * h_f - h_c
                t_state = tables.temperature(h_state, tid_full)
                it = max(it_c, it_f1, it_f2)
            max_it = max(max_it, it)
            # face temperatures at the end of the step (all directions)
            for d in range(ndim):
                tl = _to_line(t_state, d)
                k_last = tables.conductivity(tl[-1], tid_line)
                face_t[d] = _surface_temperature(
                    tl[-1], lines[d].g_half * k_last, *bc[:2], bc[2], bc[3], ts_guess[d]
                )
                ts_guess[d] = face_t[d]
            n_taken += 1
            done_frac += frac
            t_elapsed = t_elapsed + step
            record(t_elapsed)
            if req is not None:
                t_lo = t_elapsed - step
                hit = (req > t_lo[:, None]) & (req <= t_elapsed[:, None] * (1 + 1e-12)) & ~done
                if hit.any():
                    w = np.clip((req - t_lo[:, None]) / step[:, None], 0.0, 1.0)
                    b_idx, r_idx = np.nonzero(hit)
                    wv = w[b_idx, r_idx].reshape((-1,) + (1,) * ndim)
                    profiles[b_idx, r_idx] = t_prev[b_idx] * (1 - wv) + t_state[b_idx] * wv
                    done |= hit
        # exact segment end time (avoid roundoff drift)
        t_elapsed = durations[:, : i + 1].sum(axis=1)
        times[-1] = t_elapsed.copy()
        heat_seg[:, i] = mass_h(h_state) - h_start
        seg_end[i] = len(times) - 1

    return SimulationResult(
        times=np.stack(times, axis=1),
        core=np.stack(core, axis=1),
        surface=np.stack(surf, axis=1),
        surface_min=np.stack(smin, axis=1),
        surface_max=np.stack(smax, axis=1),
        mean=np.stack(mean, axis=1),
        final=t_state,
        heat_in_segments=heat_seg,
        heat_in=heat_seg.sum(axis=1),
        segment_end=seg_end,
        grid=grid,
        density=np.asarray(rho, dtype=float),
        profile_times=req,
        profiles=profiles if req is not None else None,
        iterations=max_it,
    )
