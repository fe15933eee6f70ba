"""A product through oven, transfer and tunnel zones: histories and required dwells.

Stages
------
:class:`OvenStage` (a batch oven at an air setting, optionally ramping up),
:class:`TransferStage` (room air between oven and tunnel, a fixed time) and
:class:`TunnelZone` (one zone of a continuous tunnel, a share of its length).
Zones are passed at a belt speed: for a total tunnel residence ``τ`` zone
``i`` takes ``τ · share_i``.

Searches
--------
:func:`required_cook` finds the shortest oven dwell that meets a
:class:`thermal.rules.CookRule`; :func:`required_chill` (and
:func:`required_freeze`) the shortest tunnel residence that meets a
:class:`thermal.rules.ChillRule` (or :class:`thermal.rules.FreezeRule`) from
the oven exit profile. Each returns the dwell, the clause that binds, the
histories, the heat per kg and the method used. A rule that cannot be met at
any dwell raises :class:`InfeasibleRuleError` (an
:class:`thermal.errors.UnreachableTargetError`) with the physical reason.

Choices made here (all conservative or neutral)
-----------------------------------------------
* Cook: only the in-oven history counts. The core keeps heating for a while
  after the product leaves the oven; that carry-over is not credited to the
  hold, the lethality or the core target.
* Cook, exact path: the series (product) solution gives the dwell when it is
  exact: properties constant over the temperatures involved, a uniform start,
  constant air with no ramp, no radiation term (emissivity 0 or a measured
  h), and a rule that is a core target only (no hold, lethality or table; a
  surface limit only if the air cannot reach it). Otherwise the finite-volume
  solver (:mod:`thermal.numeric`) is used, which treats radiation to the oven
  walls exactly (non-linear) and the convective h at a representative surface
  temperature (mean of the start and the air temperature).
* Cook, numerical path: for a constant (or ramped, then constant) oven the
  in-oven history up to any dwell is the same, so one long run gives the
  earliest time every clause is met (crossings interpolated); a final run
  that ends exactly at that dwell is checked and reported.
* Chill: the core at tunnel exit falls as the residence grows, so the
  shortest residence meeting the exit limit is bracketed by one coarse
  batched scan (many residences in one solver call) and refined by regula
  falsi (Illinois) on full-accuracy runs; the transfer, the same for every
  residence, is run once. Cooling windows are measured from the oven exit (transfer
  included), from when the core first is at or below the step's
  ``from_temp``. With zone air temperatures that do not rise along the
  tunnel, a longer residence only keeps the product in warmer zones longer,
  so a window missed at that residence is missed at every residence: the rule
  is then infeasible.
* Surface limits use the hottest face cell (edges and corners of blocks and
  finite cylinders), not only the face centre.
* The safety margin is applied to the dwell after the search; histories,
  heat and exit profiles are those of the dwell with the margin.

The limits come from the plant's food-safety plan and local codes; the
results are model estimates for the piece entered and must be validated with
calibrated probes in the largest pieces.

References
----------
.. [1] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S.
   *Fundamentals of Heat and Mass Transfer*, ch. 5 (series and product
   solutions).
.. [2] US FDA (2022). *Food Code 2022*, 3-401.11 and 3-501.14.
.. [3] USDA FSIS (1999). Appendix A and Appendix B compliance guidelines.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal import lethality, numeric, series
from thermal._checks import nonnegative, positive, temperature_c
from thermal.errors import ThermalInputError, UnreachableTargetError
from thermal.jobs import Job, RunRequest, run_job
from thermal.rules import (
    TOLERANCE_K,
    ChillRule,
    CookRule,
    FreezeRule,
    LethalityRule,
    Verdict,
    format_duration,
)

__all__ = [
    "ChillResult",
    "CookResult",
    "History",
    "InfeasibleRuleError",
    "LineResult",
    "Margin",
    "OvenStage",
    "StageSpan",
    "TransferStage",
    "TunnelZone",
    "check_stages",
    "cook_and_chill",
    "required_chill",
    "required_chill_job",
    "required_cook",
    "required_cook_job",
    "required_freeze",
    "run_stages",
    "run_stages_job",
]

DEFAULT_CELLS = {1: 24, 2: 14, 3: 10}
"""Cells per direction, centre to surface, by number of directions."""

DEFAULT_STEPS = 40
"""Time steps over a whole run (split over segments by duration, at least 3 each)."""

MIN_DWELL = 1.0
"""Shortest dwell or residence reported [s] (a rule met at loading still gets 1 s)."""

_SEARCH_STEPS = 30
_COARSE_POINTS = 16
_SERIES_SAMPLES = 241
_FINAL_BUMPS = (0.0, 1e-3, 5e-3)


class InfeasibleRuleError(UnreachableTargetError):
    """A rule cannot be met at any dwell or residence.

    Attributes
    ----------
    clause : str
        The clause that cannot be met (``"core_target"``, ``"lethality"``,
        ``"surface_max"``, ``"step 1"``, ``"exit_core_max"``, ...).
    reason : str
        The physical reason, one line (also the message).
    """

    def __init__(self, clause: str, reason: str) -> None:
        super().__init__(reason)
        self.clause = clause
        self.reason = reason


# --------------------------------------------------------------------------- stages


def _air_temperature(air: Any, name: str) -> float:
    if not hasattr(air, "temperature"):
        raise ThermalInputError(f"{name}: must be an AirSetting, got {type(air).__name__}")
    return float(temperature_c(f"{name}.temperature", air.temperature))


def _wall(air: Any) -> float:
    wall = getattr(air, "wall_temperature", None)
    return float(air.temperature) if wall is None else float(wall)


@dataclass(frozen=True)
class OvenStage:
    """A batch oven at one air setting.

    Parameters
    ----------
    air : AirSetting
        Set point: air temperature [°C], speed [m/s], humidity, walls.
    ramp_from : float or None
        Air temperature at loading [°C] when the oven ramps up; None for an
        oven already at the set point.
    ramp_duration : float
        Time for the air to rise linearly from ``ramp_from`` to the set point
        [s], counted in the dwell; > 0 when ``ramp_from`` is given.
    loading_factor : float
        Tray or rack loading factor for the surface coefficient [-].
    ramp_pieces : int
        Piecewise-constant pieces the ramp is cut into (air temperature at
        each piece's middle).
    """

    air: Any
    ramp_from: float | None = None
    ramp_duration: float = 0.0
    loading_factor: float = 1.0
    ramp_pieces: int = 8

    def __post_init__(self) -> None:
        _air_temperature(self.air, "OvenStage.air")
        positive("OvenStage.loading_factor", self.loading_factor)
        if self.ramp_from is None:
            if self.ramp_duration != 0.0:
                raise ThermalInputError(
                    "OvenStage.ramp_duration: needs ramp_from (air temperature at loading, °C)"
                )
        else:
            temperature_c("OvenStage.ramp_from", self.ramp_from)
            positive("OvenStage.ramp_duration [s]", self.ramp_duration)
            if int(self.ramp_pieces) < 1:
                raise ThermalInputError("OvenStage.ramp_pieces: must be >= 1")

    @property
    def has_ramp(self) -> bool:
        """True when the air ramps up after loading."""
        return self.ramp_from is not None


@dataclass(frozen=True)
class TransferStage:
    """Room air between oven exit and tunnel entry.

    Parameters
    ----------
    air : AirSetting
        Room air (temperature [°C], speed [m/s]).
    duration : float
        Transfer time [s], > 0.
    loading_factor : float
        Loading factor for the surface coefficient [-].
    """

    air: Any
    duration: float
    loading_factor: float = 1.0

    def __post_init__(self) -> None:
        _air_temperature(self.air, "TransferStage.air")
        positive("TransferStage.duration [s]", self.duration)
        positive("TransferStage.loading_factor", self.loading_factor)


@dataclass(frozen=True)
class TunnelZone:
    """One zone of a continuous tunnel.

    Parameters
    ----------
    air : AirSetting
        Zone air (temperature [°C], speed [m/s], ...).
    share : float
        Share of the tunnel length (and so of the residence) [-], in (0, 1];
        the shares of a tunnel sum to 1.
    loading_factor : float
        Belt loading factor for the surface coefficient [-].
    """

    air: Any
    share: float
    loading_factor: float = 1.0

    def __post_init__(self) -> None:
        _air_temperature(self.air, "TunnelZone.air")
        s = float(positive("TunnelZone.share", self.share))
        if s > 1.0:
            raise ThermalInputError(f"TunnelZone.share: must be in (0, 1], got {s}")
        positive("TunnelZone.loading_factor", self.loading_factor)


@dataclass(frozen=True)
class Margin:
    """Safety margin added to a required dwell or residence.

    ``with_margin = required · (1 + relative) + absolute``.

    Parameters
    ----------
    relative : float
        Fraction of the required time [-], >= 0 (0.1 = 10 %).
    absolute : float
        Fixed extra time [s], >= 0.
    """

    relative: float = 0.0
    absolute: float = 0.0

    def __post_init__(self) -> None:
        nonnegative("Margin.relative", self.relative)
        nonnegative("Margin.absolute [s]", self.absolute)

    def apply(self, seconds: float) -> float:
        """The time with the margin [s]."""
        return seconds * (1.0 + self.relative) + self.absolute


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class StageSpan:
    """Where one stage sits in a :class:`History`.

    Attributes
    ----------
    name : str
        ``"oven"``, ``"transfer"``, ``"zone 1"``...
    start, end : float
        Times the stage starts and ends [s].
    air_temperature : float
        Air temperature (the set point for a ramped oven) [°C].
    h : float
        Convective surface coefficient used (total if measured) [W/m2K].
    heat_in : float
        Heat added per kg during the stage [J/kg] (negative when removed).
    """

    name: str
    start: float
    end: float
    air_temperature: float
    h: float
    heat_in: float


@dataclass(frozen=True)
class History:
    """Temperature histories of one product through stages.

    Attributes
    ----------
    times : ndarray
        Time from the start [s].
    core : ndarray
        Core (slowest point) temperature [°C].
    surface : ndarray
        Temperature at the centre of the largest face [°C].
    surface_max : ndarray
        Hottest point on the surface (edges, corners) [°C].
    mean : ndarray
        Mass-mean temperature [°C].
    stages : tuple of StageSpan
        The stages in order.
    """

    times: NDArray[np.float64]
    core: NDArray[np.float64]
    surface: NDArray[np.float64]
    surface_max: NDArray[np.float64]
    mean: NDArray[np.float64]
    stages: tuple[StageSpan, ...]

    @property
    def heat_in(self) -> float:
        """Net heat added per kg over all stages [J/kg]."""
        return float(sum(s.heat_in for s in self.stages))

    def then(self, other: History) -> History:
        """This history followed by ``other`` (its times shifted to follow)."""
        shift = float(self.times[-1])
        spans = tuple(
            dataclasses.replace(s, start=s.start + shift, end=s.end + shift) for s in other.stages
        )
        return History(
            np.concatenate([self.times, other.times[1:] + shift]),
            np.concatenate([self.core, other.core[1:]]),
            np.concatenate([self.surface, other.surface[1:]]),
            np.concatenate([self.surface_max, other.surface_max[1:]]),
            np.concatenate([self.mean, other.mean[1:]]),
            self.stages + spans,
        )

    def log_reduction(self, rule: LethalityRule) -> float:
        """Log reduction of ``rule``'s organism along the core history [log10]."""
        return float(lethality.log_reduction(self.times, self.core, rule.d_ref, rule.t_ref, rule.z))


@dataclass(frozen=True)
class CookResult:
    """Shortest oven dwell meeting a cook rule.

    Attributes
    ----------
    dwell : float
        Dwell to use, margin included [s].
    required_dwell : float
        Shortest dwell meeting every clause, before the margin [s].
    binding : str
        Clause that sets the dwell (``"core_target"``, ``"hold"``,
        ``"lethality"``, ``"table"``).
    verdict : Verdict
        The rule checked on the in-oven history at ``dwell``.
    history : History
        In-oven histories up to ``dwell``.
    heat_in : float
        Heat added per kg in the oven [J/kg].
    exit_profile : numeric.Profile
        Temperature field at oven exit, to start the next stage.
    method : str
        ``"series"`` (exact series) or ``"numeric"`` (finite volumes).
    h : float
        Convective surface coefficient used (total if measured) [W/m2K].
    """

    dwell: float
    required_dwell: float
    binding: str
    verdict: Verdict
    history: History
    heat_in: float
    exit_profile: numeric.Profile = field(repr=False)
    method: Literal["series", "numeric"]
    h: float

    @property
    def minutes(self) -> float:
        """``dwell`` in minutes [min]."""
        return self.dwell / 60.0


@dataclass(frozen=True)
class ChillResult:
    """Shortest tunnel residence meeting a chill or freeze rule.

    Attributes
    ----------
    residence : float
        Tunnel residence to use, margin included [s].
    required_residence : float
        Shortest residence meeting the rule, before the margin [s].
    binding : str
        Clause that sets the residence (``"exit_core_max"`` or the step
        whose ``to_temp`` is the exit target for a chill rule;
        ``"core_target"`` for a freeze rule).
    verdict : Verdict
        The rule checked on the history from oven exit to tunnel exit.
    history : History
        Transfer and zone histories, time 0 at oven exit.
    heat_out : float
        Heat removed per kg in the tunnel [J/kg] (positive out).
    transfer_heat_out : float
        Heat lost per kg during the transfer [J/kg] (positive out).
    exit_profile : numeric.Profile
        Temperature field at tunnel exit.
    zone_times : tuple of float
        Time in each zone [s].
    method : str
        ``"numeric"``.
    """

    residence: float
    required_residence: float
    binding: str
    verdict: Verdict
    history: History
    heat_out: float
    transfer_heat_out: float
    exit_profile: numeric.Profile = field(repr=False)
    zone_times: tuple[float, ...]
    method: Literal["numeric"] = "numeric"

    @property
    def minutes(self) -> float:
        """``residence`` in minutes [min]."""
        return self.residence / 60.0


@dataclass(frozen=True)
class LineResult:
    """A product cooked, transferred and chilled.

    Attributes
    ----------
    cook : CookResult
    chill : ChillResult
    history : History
        Oven, transfer and zones in one history.
    """

    cook: CookResult
    chill: ChillResult
    history: History

    @property
    def binding(self) -> tuple[str, str]:
        """(cook binding clause, chill binding clause)."""
        return self.cook.binding, self.chill.binding


# --------------------------------------------------------------------------- helpers


def _scaled(product: Any, scale: float) -> Any:
    s = float(positive("scale", scale))
    if s == 1.0:
        return product
    scaled = getattr(product.geometry, "scaled", None)
    if scaled is None:
        raise ThermalInputError("scale: the product's geometry has no scaled(); pass scale=1")
    twin = type(product).__new__(type(product))
    twin.__dict__.update(product.__dict__)
    twin.geometry = scaled(s)
    return twin


def _cells(product: Any, n_cells: int | Sequence[int] | None) -> tuple[int, ...]:
    ndim = len(product.geometry.directions)
    if n_cells is None:
        return (DEFAULT_CELLS.get(ndim, 14),) * ndim
    cells = (int(n_cells),) * ndim if np.isscalar(n_cells) else tuple(int(c) for c in n_cells)
    if len(cells) != ndim or min(cells) < 2:
        raise ThermalInputError(f"n_cells: needs {ndim} cell count(s) >= 2, got {n_cells!r}")
    return cells


@dataclass(frozen=True)
class _Surface:
    """Surface conditions of one stage for the numerical solver."""

    h: float
    t_air: float
    t_wall: float
    emissivity: float

    def segment(self, duration: ArrayLike) -> numeric.Segment:
        return numeric.Segment(duration, self.t_air, self.h, self.t_wall, self.emissivity)


def _surface(product: Any, air: Any, loading_factor: float, t_surface: float) -> _Surface:
    """h (convective part) and radiation settings for ``air``.

    A measured h is taken as including radiation (emissivity 0 in the
    solver); otherwise the convective part goes to the solver and radiation
    to the walls is computed there from the product's emissivity.
    """
    conv = product.surface_coefficient(
        air, loading_factor=loading_factor, surface_temperature=t_surface
    )
    t_air = float(air.temperature)
    if getattr(conv, "regime", None) == "measured":
        return _Surface(float(conv.h), t_air, t_air, 0.0)
    h_conv = float(getattr(conv, "h_convective", conv.h))
    return _Surface(h_conv, t_air, _wall(air), float(product.emissivity))


def _oven_surfaces(product: Any, stage: OvenStage, t_start: float) -> list[tuple[float, _Surface]]:
    """(duration, surface) for the ramp pieces; the set point follows (duration inf)."""
    set_t = float(stage.air.temperature)
    pieces: list[tuple[float, _Surface]] = []
    if stage.has_ramp:
        n = int(stage.ramp_pieces)
        d = float(stage.ramp_duration) / n
        for i in range(n):
            t_air = float(stage.ramp_from) + (set_t - float(stage.ramp_from)) * (i + 0.5) / n
            air_i = dataclasses.replace(stage.air, temperature=t_air)
            if getattr(stage.air, "wall_temperature", None) is not None:
                air_i = dataclasses.replace(air_i, wall_temperature=t_air)
            pieces.append(
                (d, _surface(product, air_i, stage.loading_factor, 0.5 * (t_start + t_air)))
            )
    main = _surface(product, stage.air, stage.loading_factor, 0.5 * (t_start + set_t))
    pieces.append((math.inf, main))
    return pieces


def _oven_segments(pieces: list[tuple[float, _Surface]], duration: ArrayLike):
    """Segments for a dwell ``duration`` (scalar or per member) from oven pieces."""
    dur = np.atleast_1d(np.asarray(duration, dtype=float))
    segs = []
    elapsed = 0.0
    for d, surf in pieces:
        if math.isinf(d):
            rest = dur - elapsed
            if (rest > 0).all():
                segs.append(surf.segment(rest if rest.size > 1 else float(rest[0])))
            break
        if (dur <= elapsed + d).any():
            if (dur <= elapsed).any() or not np.allclose(dur, dur[0]):
                raise ThermalInputError(
                    "dwell: shorter than the oven ramp for some members; give one dwell"
                )
            segs.append(surf.segment(float(dur[0]) - elapsed))
            break
        segs.append(surf.segment(d))
        elapsed += d
    return segs


def _dt(segments: Sequence[numeric.Segment], total: float, steps: int) -> float:
    """Largest time step: ``total / steps``, and at least 3 steps per segment [s]."""
    shortest = min(float(np.max(s.duration)) for s in segments)
    return max(min(total / steps, shortest / 3.0), 1e-3)


def _run(product, initial, segments, cells, *, batch: int, steps: int, total: float) -> RunRequest:
    """The simulation of ``batch`` members with the largest step :func:`_dt` (a request)."""
    dt = _dt(segments, total, steps)
    n_steps = tuple(max(int(np.ceil(float(np.max(s.duration)) / dt - 1e-9)), 1) for s in segments)
    return RunRequest(product, initial, tuple(segments), tuple(cells), n_steps, int(batch))


def _member_history(res, k: int, names: Sequence[str], surfaces: Sequence[_Surface]) -> History:
    times = res.times[k]
    spans = []
    start_col = 0
    for i, name in enumerate(names):
        end_col = int(res.segment_end[i])
        spans.append(
            StageSpan(
                name,
                float(times[start_col]),
                float(times[end_col]),
                surfaces[i].t_air,
                surfaces[i].h,
                float(res.heat_in_segments[k, i]),
            )
        )
        start_col = end_col
    return History(
        times.copy(),
        res.core[k].copy(),
        res.surface[k].copy(),
        res.surface_max[k].copy(),
        res.mean[k].copy(),
        tuple(spans),
    )


def _merge_spans(h: History, name: str, first: int, last: int, t_air: float, hc: float) -> History:
    """Merge stages ``first..last`` (inclusive) into one span called ``name``."""
    part = h.stages[first : last + 1]
    merged = StageSpan(
        name, part[0].start, part[-1].end, t_air, hc, float(sum(s.heat_in for s in part))
    )
    return dataclasses.replace(h, stages=(*h.stages[:first], merged, *h.stages[last + 1 :]))


def _mean_start(initial: Any) -> float:
    if isinstance(initial, numeric.Profile):
        return float(np.mean(initial.temperature))
    return float(np.mean(np.asarray(initial, dtype=float)))


def _check_initial(initial: Any, name: str) -> Any:
    if isinstance(initial, numeric.Profile):
        return initial
    arr = temperature_c(name, initial)
    return float(arr) if arr.ndim == 0 else arr


def _constant_properties(props: Any, t_lo: float, t_hi: float) -> bool:
    """True when k, ρ, cp do not change over [t_lo, t_hi] (and no latent heat)."""
    if props.latent_heat > 0 and props.freezing_point is not None:
        if t_lo <= props.freezing_point:
            return False
    grid = np.linspace(t_lo, t_hi, 9)
    for fn in (props.conductivity, props.density, props.specific_heat):
        v = np.asarray(fn(grid), dtype=float)
        if np.ptp(v) > 1e-9 * np.abs(v).max():
            return False
    return True


# --------------------------------------------------------------------------- cook


def _cook_reachability(rule: CookRule, stage: OvenStage, t_start: float, max_dwell: float):
    t_air = float(stage.air.temperature)
    drive = max(t_air, _wall(stage.air))
    if rule.core_target >= drive:
        raise InfeasibleRuleError(
            "core_target",
            f"oven air at {t_air:.1f} °C cannot bring the core to {rule.core_target:.1f} °C",
        )
    if rule.table is not None and drive <= rule.table.temperatures[0]:
        raise InfeasibleRuleError(
            "table",
            f"oven air at {t_air:.1f} °C cannot bring the core to the lowest table "
            f"temperature {rule.table.temperatures[0]:.1f} °C",
        )
    if rule.lethality is not None:
        leth = rule.lethality
        fastest = leth.required_f / 10 ** ((drive - leth.t_ref) / leth.z)
        if fastest > max_dwell:
            raise InfeasibleRuleError(
                "lethality",
                f"{leth.log_reduction:g} log of {leth.organism} would take more than "
                f"{format_duration(fastest)} even with the core at the oven air temperature "
                f"{t_air:.1f} °C (longest dwell {format_duration(max_dwell)})",
            )
        return fastest
    return 0.0


def _series_applicable(product, stage, rule, initial, surf: _Surface) -> str:
    """Empty string when the exact series applies, else why not."""
    if stage.has_ramp:
        return "oven ramp"
    if not isinstance(initial, float):
        return "non-uniform start"
    if surf.emissivity > 0:
        return "radiation to the walls"
    if rule.hold > 0 or rule.lethality is not None or rule.table is not None:
        return "rule has a hold, lethality or table"
    if rule.surface_max is not None and rule.surface_max < max(surf.t_air, surf.t_wall):
        return "surface limit can bind"
    lo, hi = min(initial, surf.t_air), max(initial, surf.t_air)
    if not _constant_properties(product.properties, lo, hi):
        return "temperature-dependent properties"
    return ""


def _series_ratios(product, k, alpha, h, seconds, positions):
    """Product-solution θ at ``seconds`` for each direction's positions.

    ``positions`` is one array of x/L per direction; returns a list of arrays
    of shape (n_times, n_positions_d).
    """
    t = np.atleast_1d(np.asarray(seconds, dtype=float))
    out = []
    for (shape, length), pos in zip(product.geometry.directions, positions, strict=True):
        bi = h * length / k
        fo = alpha * t[:, None] / length**2
        out.append(series.temperature_ratio(shape, bi, fo, np.asarray(pos)[None, :]))
    return out


def _series_mean(product, k, alpha, h, seconds):
    t = np.atleast_1d(np.asarray(seconds, dtype=float))
    theta = np.ones_like(t)
    for shape, length in product.geometry.directions:
        theta = theta * series.mean_temperature_ratio(shape, h * length / k, alpha * t / length**2)
    return theta


def _cook_series(product, stage, rule, t0, surf, cells, margin) -> CookResult:
    from thermal import geometry  # the exact series inversion for any shape

    props = product.properties
    k = float(props.conductivity(t0))
    rho = float(props.density(t0))
    cp = float(props.specific_heat(t0))
    alpha = k / (rho * cp)
    required = (
        0.0
        if t0 >= rule.core_target
        else float(
            geometry.time_to_temperature(
                product.geometry,
                k=k,
                h=surf.h,
                t_initial=t0,
                t_air=surf.t_air,
                t_target=rule.core_target,
                alpha=alpha,
            )
        )
    )
    required = max(required, 0.0)
    dwell = max(margin.apply(required), MIN_DWELL)
    times = np.linspace(0.0, dwell, _SERIES_SAMPLES)
    lengths = [length for _, length in product.geometry.directions]
    shortest = int(np.argmin(lengths))
    n_dir = len(lengths)
    centre = _series_ratios(product, k, alpha, surf.h, times, [[0.0, 1.0]] * n_dir)
    core_theta = np.prod([c[:, 0] for c in centre], axis=0)
    face_theta = np.prod(
        [c[:, 1] if i == shortest else c[:, 0] for i, c in enumerate(centre)], axis=0
    )
    corner_theta = np.prod([c[:, 1] for c in centre], axis=0)
    mean_theta = _series_mean(product, k, alpha, surf.h, times)

    def temp(theta):
        return surf.t_air + (t0 - surf.t_air) * theta

    core = temp(core_theta)
    # core at the required dwell is the target by construction (root tolerance)
    surf_hot = np.maximum(temp(face_theta), temp(corner_theta))
    heat_in = cp * (temp(mean_theta[-1]) - t0)
    hist = History(
        times,
        core,
        temp(face_theta),
        surf_hot,
        temp(mean_theta),
        (StageSpan("oven", 0.0, dwell, surf.t_air, surf.h, heat_in),),
    )
    pos = [(np.arange(n) + 0.5) / n for n in cells]
    theta = _series_ratios(product, k, alpha, surf.h, dwell, pos)
    field_theta = np.ones(cells)
    for d, th in enumerate(theta):
        shape = [1] * n_dir
        shape[d] = cells[d]
        field_theta = field_theta * th[0].reshape(shape)
    profile = numeric.Profile(temp(field_theta)[None, ...], np.array([rho]))
    verdict = rule.check(times, core, surf_hot)
    return CookResult(
        dwell, required, "core_target", verdict, hist, heat_in, profile, "series", surf.h
    )


def required_cook_job(
    product: Any,
    air: Any,
    rule: CookRule,
    t_initial: ArrayLike | numeric.Profile,
    *,
    margin: Margin | None = None,
    scale: float = 1.0,
    method: Literal["auto", "series", "numeric"] = "auto",
    max_dwell: float = 24 * 3600.0,
    n_cells: int | Sequence[int] | None = None,
    steps: int = DEFAULT_STEPS,
) -> Job:
    """Shortest oven dwell at which the core meets every clause of ``rule``, as a job.

    The search of :func:`required_cook` as a :data:`thermal.jobs.Job` (it
    yields its simulations; :func:`thermal.jobs.run_jobs` runs many searches
    with their simulations batched); the job's value is the
    :class:`CookResult`.

    Parameters
    ----------
    product : Product
        The product (a :class:`thermal.product.Product`); plan for the
        largest piece by passing its geometry, or use ``scale``.
    air : AirSetting or OvenStage
        The oven air setting, or a stage with ramp and loading factor.
    rule : CookRule
        Core target, hold, lethality, table, surface limit.
    t_initial : float, array or numeric.Profile
        Product temperature at loading [°C]: uniform, or a profile on the
        solver grid.
    margin : Margin, optional
        Safety margin added to the dwell (relative and/or absolute [s]).
    scale : float
        Factor on every dimension of the geometry (e.g. 1.2 for pieces 20 %
        larger than the nominal one) [-].
    method : {"auto", "series", "numeric"}
        ``"auto"`` uses the exact series where it is exact (see module
        notes), else the numerical solver; ``"series"`` insists (error if it
        does not apply); ``"numeric"`` always solves numerically.
    max_dwell : float
        Longest dwell considered [s]; beyond it the rule is infeasible.
    n_cells : int or sequence of int, optional
        Solver cells per direction (default :data:`DEFAULT_CELLS`).
    steps : int
        Solver time steps over a run.

    Returns
    -------
    Job
        A generator of :class:`thermal.jobs.RunRequest` whose value is the
        :class:`CookResult`.

    Raises
    ------
    InfeasibleRuleError
        The rule cannot be met at any dwell up to ``max_dwell``, with the
        physical reason (air not hot enough, surface limit reached first,
        lethality too slow).
    ThermalInputError
        Bad input.

    References
    ----------
    .. [1] Incropera et al., ch. 5 (series); see :mod:`thermal.numeric` for
       the finite-volume method.
    """
    if not isinstance(rule, CookRule):
        raise ThermalInputError(f"rule: must be a CookRule, got {type(rule).__name__}")
    stage = air if isinstance(air, OvenStage) else OvenStage(air)
    margin = margin or Margin()
    if method not in ("auto", "series", "numeric"):
        raise ThermalInputError(f"method: must be 'auto', 'series' or 'numeric', got {method!r}")
    max_dwell = float(positive("max_dwell [s]", max_dwell))
    if int(steps) < 10:
        raise ThermalInputError(f"steps: must be >= 10, got {steps!r}")
    product = _scaled(product, scale)
    initial = _check_initial(t_initial, "t_initial")
    if isinstance(initial, numeric.Profile) and n_cells is None:
        cells = tuple(initial.temperature.shape[1:])
    else:
        cells = _cells(product, n_cells)
    t_start = _mean_start(initial)
    fastest_lethality = _cook_reachability(rule, stage, t_start, max_dwell)
    pieces = _oven_surfaces(product, stage, t_start)
    main = pieces[-1][1]

    why_not = _series_applicable(product, stage, rule, initial, main)
    if method == "series" and why_not:
        raise ThermalInputError(f"method: the exact series does not apply here ({why_not})")
    if method != "numeric" and not why_not:
        return _cook_series(product, stage, rule, float(initial), main, cells, margin)

    # ---- one long run: the in-oven history does not depend on the dwell
    horizon = _cook_horizon(product, stage, rule, t_start, fastest_lethality, max_dwell)
    while True:
        segs = _oven_segments(pieces, horizon)
        res = yield _run(product, initial, segs, cells, batch=1, steps=steps, total=horizon)
        t, core = res.times[0], res.core[0]
        found = _earliest_cook(rule, t, core)
        if found is not None or horizon >= max_dwell:
            break
        horizon = min(2.0 * horizon, max_dwell)
    if found is None:
        clauses = rule.clauses(t, core)
        missed = next(c for c in clauses if not math.isfinite(c.met_at))
        raise InfeasibleRuleError(
            missed.clause,
            f"{missed.reason} (within the longest dwell {format_duration(max_dwell)})",
        )
    required, binding = found
    required = max(required, 0.0)
    if rule.surface_max is not None:
        over = float(lethality.first_time_at(t, res.surface_max[0], rule.surface_max))
        if math.isfinite(over) and over < margin.apply(required):
            raise InfeasibleRuleError(
                "surface_max",
                f"surface reaches {rule.surface_max:.1f} °C after {format_duration(over)}, "
                f"before the core rule is met at {format_duration(margin.apply(required))}",
            )

    # ---- final run ending exactly at the dwell (a small bump, if needed,
    # absorbs the difference between the long run's interpolation and a run
    # that ends there)
    dwell0 = max(margin.apply(required), MIN_DWELL)
    for bump in _FINAL_BUMPS:
        dwell = dwell0 * (1.0 + bump)
        segs = _oven_segments(pieces, dwell)
        res = yield _run(product, initial, segs, cells, batch=1, steps=steps, total=dwell)
        names = [f"oven {i + 1}" for i in range(len(segs))]
        surfaces = [p[1] for p in pieces[: len(segs)]]  # segment i comes from piece i
        hist = _member_history(res, 0, names, surfaces)
        verdict = rule.check(hist.times, hist.core, hist.surface_max)
        if verdict.met:
            break
    else:
        raise InfeasibleRuleError(verdict.binding, verdict.reason)
    hist = _merge_spans(hist, "oven", 0, len(hist.stages) - 1, main.t_air, main.h)
    return CookResult(
        dwell,
        required,
        binding,
        verdict,
        hist,
        float(res.heat_in[0]),
        res.final_state(),
        "numeric",
        main.h,
    )


def _earliest_cook(rule: CookRule, t, core) -> tuple[float, str] | None:
    clauses = rule.clauses(t, core)
    times = [c.met_at for c in clauses]
    if not all(math.isfinite(x) for x in times):
        return None
    k = int(np.argmax(times))
    return float(times[k]), clauses[k].clause


def _cook_horizon(product, stage, rule, t_start, fastest_lethality, max_dwell) -> float:
    """First guess of a run long enough to meet the rule [s]."""
    guess = None
    try:
        guess = float(
            product.time_to_core(stage.air, t_start, rule.core_target, stage.loading_factor).seconds
        )
    except (ValueError, AttributeError):
        guess = None
    if guess is None or not math.isfinite(guess) or guess <= 0:
        props = product.properties
        length = min(length for _, length in product.geometry.directions)
        alpha = float(props.diffusivity(0.5 * (t_start + float(stage.air.temperature))))
        guess = 2.0 * length**2 / alpha
    horizon = 1.5 * guess + rule.hold + 2.0 * fastest_lethality + float(stage.ramp_duration)
    return float(min(max(horizon, 60.0), max_dwell))


# --------------------------------------------------------------------------- chill


def _check_zones(zones: Sequence[TunnelZone]) -> tuple[TunnelZone, ...]:
    if isinstance(zones, TunnelZone):
        zones = [zones]
    zones = tuple(zones)
    if not zones:
        raise ThermalInputError("zones: needs at least one TunnelZone")
    for i, z in enumerate(zones):
        if not isinstance(z, TunnelZone):
            raise ThermalInputError(f"zones[{i}]: must be a TunnelZone, got {type(z).__name__}")
    total = sum(float(z.share) for z in zones)
    if abs(total - 1.0) > 1e-6:
        raise ThermalInputError(
            f"zones: length shares must sum to 1, got {total:.6g} "
            f"({', '.join(f'{z.share:g}' for z in zones)})"
        )
    for i in range(1, len(zones)):
        a, b = float(zones[i - 1].air.temperature), float(zones[i].air.temperature)
        if b > a:
            raise ThermalInputError(
                f"zones[{i}].air.temperature: {b:.1f} °C is warmer than zones[{i - 1}] "
                f"({a:.1f} °C); zone air must not get warmer along the tunnel"
            )
    return zones


def _stage_surface(product: Any, stage: TransferStage | TunnelZone, t_start: float) -> _Surface:
    """Surface of a transfer or tunnel zone for a product entering at ``t_start`` [°C]."""
    return _surface(
        product, stage.air, stage.loading_factor, 0.5 * (t_start + float(stage.air.temperature))
    )


def _zone_segments(zsurfs, zones, tau):
    """Zone segments for residences ``tau`` (one per batch member) [s]."""
    segs = []
    tau = np.asarray(tau, dtype=float)
    for z, s in zip(zones, zsurfs, strict=True):
        d = tau * float(z.share)
        segs.append(s.segment(d if d.ndim and d.size > 1 else float(d.reshape(-1)[0])))
    return segs


def required_chill_job(
    product: Any,
    initial: CookResult | numeric.Profile | ArrayLike,
    transfer: TransferStage | None,
    zones: Sequence[TunnelZone],
    rule: ChillRule | FreezeRule,
    *,
    margin: Margin | None = None,
    scale: float = 1.0,
    max_residence: float = 24 * 3600.0,
    n_cells: int | Sequence[int] | None = None,
    steps: int = DEFAULT_STEPS,
    tolerance: float = 5e-3,
) -> Job:
    """Shortest tunnel residence meeting a chill (or freeze) rule, as a job.

    The search of :func:`required_chill` as a :data:`thermal.jobs.Job`; its
    value is the :class:`ChillResult`.

    Parameters
    ----------
    product : Product
        The product (largest piece).
    initial : CookResult, numeric.Profile, float or array
        State at oven exit: a cook result (its exit profile), a profile on
        the solver grid, or a uniform temperature [°C].
    transfer : TransferStage or None
        Room air between oven and tunnel; None for direct loading.
    zones : sequence of TunnelZone
        Tunnel zones in belt order; shares sum to 1; zone air must not get
        warmer along the tunnel.
    rule : ChillRule or FreezeRule
        Cooling windows and exit limit, or the freezing core target.
    margin : Margin, optional
        Safety margin on the residence.
    scale : float
        Factor on every dimension of the geometry [-]. When ``initial`` is a
        cook result, use the same scale as for the cook.
    max_residence : float
        Longest residence considered [s].
    n_cells : int or sequence of int, optional
        Solver cells per direction (default: the profile's, else
        :data:`DEFAULT_CELLS`).
    steps : int
        Solver time steps over a run at the final accuracy.
    tolerance : float
        Relative bracket width at which the search stops [-]; it also stops
        when the core at exit is within 0.01 K of the target.

    Returns
    -------
    Job
        A generator of :class:`thermal.jobs.RunRequest` whose value is the
        :class:`ChillResult`.

    Raises
    ------
    InfeasibleRuleError
        The exit target is at or below the coldest zone air, the core does
        not get there within ``max_residence``, or a cooling window is missed
        even at the shortest residence that meets the exit limit.
    ThermalInputError
        Bad input (shares not summing to 1, zones getting warmer, ...).
    """
    if not isinstance(rule, (ChillRule, FreezeRule)):
        raise ThermalInputError(
            f"rule: must be a ChillRule or FreezeRule, got {type(rule).__name__}"
        )
    if transfer is not None and not isinstance(transfer, TransferStage):
        raise ThermalInputError(
            f"transfer: must be a TransferStage or None, got {type(transfer).__name__}"
        )
    zones = _check_zones(zones)
    margin = margin or Margin()
    max_residence = float(positive("max_residence [s]", max_residence))
    tolerance = float(positive("tolerance", tolerance))
    if int(steps) < 10:
        raise ThermalInputError(f"steps: must be >= 10, got {steps!r}")
    product = _scaled(product, scale)
    if isinstance(initial, CookResult):
        start = initial.exit_profile
        t_start = float(initial.history.mean[-1])
    else:
        start = _check_initial(initial, "initial")
        t_start = _mean_start(start)
    if isinstance(start, numeric.Profile) and n_cells is None:
        cells = tuple(start.temperature.shape[1:])
    else:
        cells = _cells(product, n_cells)

    target = rule.exit_target
    coldest = min(min(float(z.air.temperature), _wall(z.air)) for z in zones)
    if target <= coldest:
        clause = "core_target" if isinstance(rule, FreezeRule) else _exit_clause_name(rule)
        raise InfeasibleRuleError(
            clause,
            f"tunnel air at {coldest:.1f} °C cannot bring the core to {target:.1f} °C",
        )

    tsurf = _stage_surface(product, transfer, t_start) if transfer is not None else None
    zsurfs = [_stage_surface(product, z, t_start) for z in zones]
    # The transfer is the same for every residence: run it once.
    if transfer is not None:
        assert tsurf is not None
        tres = yield _run(
            product,
            start,
            [tsurf.segment(float(transfer.duration))],
            cells,
            batch=1,
            steps=steps,
            total=float(transfer.duration),
        )
        transfer_hist = _member_history(tres, 0, ["transfer"], [tsurf])
        zone_start: Any = tres.final_state()
        transfer_heat = -float(tres.heat_in[0])
    else:
        transfer_hist, zone_start, transfer_heat = None, start, 0.0

    def exit_run(taus: NDArray[np.float64], n_steps: int) -> RunRequest:
        segs = _zone_segments(zsurfs, zones, taus)
        return _run(
            product, zone_start, segs, cells, batch=taus.size, steps=n_steps, total=taus.max()
        )

    # ---- bracket the exit target: one coarse batched scan, then regula falsi
    # (Illinois) on single runs at full accuracy inside the bracket
    def unreachable(core_exit: float) -> InfeasibleRuleError:
        clause = "core_target" if isinstance(rule, FreezeRule) else _exit_clause_name(rule)
        return InfeasibleRuleError(
            clause,
            f"core still {core_exit:.1f} °C at tunnel exit after the longest residence "
            f"{format_duration(max_residence)} (target {target:.1f} °C)",
        )

    grid = np.geomspace(min(MIN_DWELL, max_residence / 1e3), max_residence, _COARSE_POINTS)
    g = (yield exit_run(grid, _SEARCH_STEPS)).core[:, -1] - target
    k = int(np.argmax(g <= 0)) if (g <= 0).any() else grid.size - 1
    # full-accuracy values at the bracket ends; widen where the coarse scan misjudged
    for _ in range(2 * grid.size):
        a = float(grid[k - 1]) if k > 0 else 0.0
        b = float(grid[k])
        ends = np.array([a, b]) if a > 0 else np.array([b])
        vals = (yield exit_run(ends, steps)).core[:, -1] - target
        fb = float(vals[-1])
        fa = float(vals[0]) if a > 0 else math.inf
        if fb > 0:
            if k == grid.size - 1:
                raise unreachable(fb + target)
            k += 1
            continue
        if fa <= 0 and k > 0:
            k -= 1
            continue
        break
    side = 0
    for _ in range(40):
        if a <= 0 or (b - a) <= tolerance * b or b < MIN_DWELL:
            break
        c = b - fb * (b - a) / (fb - fa)
        c = min(max(c, a + 0.01 * (b - a)), b - 0.01 * (b - a))
        fc = float((yield exit_run(np.array([c]), steps)).core[0, -1] - target)
        if abs(fc) < 1e-2:  # within 0.01 K: the final run's bump covers the rest
            b, fb = c, fc
            break
        if fc <= 0:
            b, fb = c, fc
            if side == -1:
                fa *= 0.5
            side = -1
        else:
            a, fa = c, fc
            if side == 1:
                fb *= 0.5
            side = 1
    required = b

    # ---- final run at the residence with margin (a small bump, as for cook)
    tau0 = max(margin.apply(required), MIN_DWELL)
    names = [f"zone {i + 1}" for i in range(len(zones))]
    for bump in _FINAL_BUMPS:
        tau = tau0 * (1.0 + bump)
        segs = _zone_segments(zsurfs, zones, tau)
        res = yield _run(product, zone_start, segs, cells, batch=1, steps=steps, total=tau)
        hist = _member_history(res, 0, names, zsurfs)
        if transfer_hist is not None:
            hist = transfer_hist.then(hist)
        verdict = rule.check(hist.times, hist.core)
        if float(hist.core[-1]) <= target + TOLERANCE_K:
            break
    else:
        raise InfeasibleRuleError(verdict.binding, verdict.reason)
    if not verdict.met:
        raise InfeasibleRuleError(
            verdict.binding,
            f"{verdict.reason}, at the shortest residence that meets the exit limit "
            f"({format_duration(tau)}); zones that do not get warmer along the tunnel only "
            "cool more slowly at longer residences",
        )
    zone_heat = -float(res.heat_in[0])
    binding = "core_target" if isinstance(rule, FreezeRule) else _exit_clause_name(rule)
    profile = res.final_state()
    return ChillResult(
        tau,
        required,
        binding,
        verdict,
        hist,
        zone_heat,
        transfer_heat,
        profile,
        tuple(tau * float(z.share) for z in zones),
    )


def _exit_clause_name(rule: ChillRule) -> str:
    """Clause whose temperature is the exit target of a chill rule."""
    assert rule.exit_core_max is not None
    target = rule.exit_target
    if rule.exit_core_max <= target:
        return "exit_core_max"
    for i, s in enumerate(rule.steps):
        if s.to_temp == target:
            return f"step {i + 1}"
    return "exit_core_max"


def required_freeze(
    product: Any,
    initial: CookResult | numeric.Profile | ArrayLike,
    transfer: TransferStage | None,
    zones: Sequence[TunnelZone],
    rule: FreezeRule,
    **options: Any,
) -> ChillResult:
    """Shortest freezing-tunnel residence to bring the core to ``rule.core_target``.

    Same as :func:`required_chill` with a :class:`thermal.rules.FreezeRule`
    (latent heat handled by the enthalpy solver); options as there.
    """
    if not isinstance(rule, FreezeRule):
        raise ThermalInputError(f"rule: must be a FreezeRule, got {type(rule).__name__}")
    return required_chill(product, initial, transfer, zones, rule, **options)


def required_cook(
    product: Any, air: Any, rule: CookRule, t_initial: ArrayLike | numeric.Profile, **options: Any
) -> CookResult:
    """Shortest oven dwell at which the core meets every clause of ``rule``.

    Parameters, raised errors and method as for :func:`required_cook_job`
    (``margin``, ``scale``, ``method``, ``max_dwell``, ``n_cells``,
    ``steps``), whose search this runs on its own.

    Returns
    -------
    CookResult
    """
    return run_job(required_cook_job(product, air, rule, t_initial, **options))


def required_chill(
    product: Any,
    initial: CookResult | numeric.Profile | ArrayLike,
    transfer: TransferStage | None,
    zones: Sequence[TunnelZone],
    rule: ChillRule | FreezeRule,
    **options: Any,
) -> ChillResult:
    """Shortest tunnel residence meeting a chill (or freeze) rule.

    Parameters, raised errors and method as for :func:`required_chill_job`
    (``margin``, ``scale``, ``max_residence``, ``n_cells``, ``steps``,
    ``tolerance``), whose search this runs on its own.

    Returns
    -------
    ChillResult
    """
    return run_job(required_chill_job(product, initial, transfer, zones, rule, **options))


def check_stages(
    product: Any,
    t_start: float,
    *,
    oven: Any = None,
    transfer: TransferStage | None = None,
    zones: Sequence[TunnelZone] | None = None,
) -> None:
    """Make every input check the solvers make for these stages, without solving.

    Builds what :func:`required_cook`, :func:`required_chill` and
    :func:`run_stages` build before their first step: the surface conditions
    of every stage (h from the correlation registry, so a Reynolds or
    Rayleigh number out of reach or a loading factor out of range shows up)
    and the zone checks (shares, air getting warmer). Cheap: no heat
    conduction is solved.

    Parameters
    ----------
    product : Product
        The product (largest piece).
    t_start : float
        Product temperature entering the first stage given [°C]; it sets the
        film temperature of the surface conditions, as in the solvers.
    oven : AirSetting or OvenStage, optional
        Oven stage.
    transfer : TransferStage, optional
        Transfer in room air.
    zones : sequence of TunnelZone, optional
        Tunnel zones in belt order.

    Raises
    ------
    ThermalInputError
        The first input the solvers would refuse, named as they name it.
    """
    t0 = float(temperature_c("t_start", t_start))
    if oven is not None:
        _oven_surfaces(product, oven if isinstance(oven, OvenStage) else OvenStage(oven), t0)
    if transfer is not None:
        _stage_surface(product, transfer, t0)
    if zones is not None:
        for zone in _check_zones(zones):
            _stage_surface(product, zone, t0)


# --------------------------------------------------------------------------- forward runs


def run_stages(*args: Any, **options: Any) -> tuple[History, numeric.Profile]:
    """Simulate a product through given stages and times (no search).

    Parameters as for :func:`run_stages_job`, which this runs on its own.

    Returns
    -------
    (History, numeric.Profile)
        Histories of every stage in one run and the final profile.
    """
    return run_job(run_stages_job(*args, **options))


def run_stages_job(
    product: Any,
    t_initial: ArrayLike | numeric.Profile,
    oven: OvenStage | None,
    dwell: float,
    transfer: TransferStage | None = None,
    zones: Sequence[TunnelZone] = (),
    residence: float = 0.0,
    *,
    scale: float = 1.0,
    n_cells: int | Sequence[int] | None = None,
    steps: int = DEFAULT_STEPS,
) -> Job:
    """Simulate a product through given stages and times (no search), as a job.

    Parameters
    ----------
    product : Product
        The product.
    t_initial : float, array or numeric.Profile
        Temperature at the start [°C].
    oven : OvenStage or None
        Oven stage (None to start at the transfer or the tunnel).
    dwell : float
        Time in the oven [s] (> 0 with an oven, ignored without).
    transfer : TransferStage, optional
        Room-air transfer.
    zones : sequence of TunnelZone
        Tunnel zones (shares sum to 1); may be empty.
    residence : float
        Total tunnel residence [s] (> 0 with zones).
    scale, n_cells, steps
        As for :func:`required_cook`.

    Returns
    -------
    Job
        A generator of :class:`thermal.jobs.RunRequest` whose value is
        (History, numeric.Profile): histories of every stage in one run and
        the final profile.
    """
    product = _scaled(product, scale)
    initial = _check_initial(t_initial, "t_initial")
    if isinstance(initial, numeric.Profile) and n_cells is None:
        cells = tuple(initial.temperature.shape[1:])
    else:
        cells = _cells(product, n_cells)
    t_start = _mean_start(initial)
    segs, names, surfaces = [], [], []
    total = 0.0
    if oven is not None:
        if not isinstance(oven, OvenStage):
            oven = OvenStage(oven)
        dwell = float(positive("dwell [s]", dwell))
        pieces = _oven_surfaces(product, oven, t_start)
        oven_segs = _oven_segments(pieces, dwell)
        segs += oven_segs
        names += ["oven"] * len(oven_segs)
        surfaces += [p[1] for p in pieces[: len(oven_segs)]]  # segment i from piece i
        total += dwell
        t_start = float(oven.air.temperature)
    if transfer is not None:
        s = _stage_surface(product, transfer, t_start)
        segs.append(s.segment(float(transfer.duration)))
        names.append("transfer")
        surfaces.append(s)
        total += float(transfer.duration)
    if zones:
        zones = _check_zones(zones)
        residence = float(positive("residence [s]", residence))
        for i, z in enumerate(zones):
            s = _stage_surface(product, z, t_start)
            segs.append(s.segment(residence * float(z.share)))
            names.append(f"zone {i + 1}")
            surfaces.append(s)
        total += residence
    if not segs:
        raise ThermalInputError("oven: give at least one stage (oven, transfer or zones)")
    res = yield _run(product, initial, segs, cells, batch=1, steps=steps, total=total)
    hist = _member_history(res, 0, names, surfaces)
    n_oven = names.count("oven")
    if n_oven > 1:
        main = surfaces[n_oven - 1]
        hist = _merge_spans(hist, "oven", 0, n_oven - 1, main.t_air, main.h)
    return hist, res.final_state()


def cook_and_chill(
    product: Any,
    t_initial: ArrayLike,
    oven: OvenStage | Any,
    cook_rule: CookRule,
    transfer: TransferStage | None,
    zones: Sequence[TunnelZone],
    chill_rule: ChillRule | FreezeRule,
    *,
    cook_margin: Margin | None = None,
    chill_margin: Margin | None = None,
    scale: float = 1.0,
    **options: Any,
) -> LineResult:
    """Cook to the cook rule, then transfer and chill to the chill rule.

    The oven exit profile of :func:`required_cook` starts
    :func:`required_chill`; the result holds both and the whole history.
    ``options`` (``n_cells``, ``steps``) go to both searches.

    Returns
    -------
    LineResult
    """
    cook = required_cook(
        product, oven, cook_rule, t_initial, margin=cook_margin, scale=scale, **options
    )
    chill = required_chill(
        product, cook, transfer, zones, chill_rule, margin=chill_margin, scale=scale, **options
    )
    return LineResult(cook, chill, cook.history.then(chill.history))
