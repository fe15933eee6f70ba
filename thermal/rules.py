"""Core-temperature rules for cooking, chilling and freezing, and their checks.

Rules are frozen dataclasses built from numbers in SI units (temperatures in
°C, durations in s) or from plain dicts with the same field names
(``CookRule.from_dict({...})``); unit strings are converted before this layer.
Checking a history against a rule returns a :class:`Verdict`: met or not,
which clause binds, the margin and a one-line reason.

The limits themselves belong to the plant's food-safety plan and the local
regulator. The examples named in docstrings (US FDA Food Code 3-501.14 and
3-401.11, USDA FSIS Appendix A and B) are examples to be checked against local
codes, not defaults this module applies.

References
----------
.. [1] US FDA (2022). *Food Code 2022*, sections 3-401.11 (cooking) and
   3-501.14 (cooling).
.. [2] USDA FSIS (1999). *Appendix A: Compliance Guidelines for Meeting
   Lethality Performance Standards for Certain Meat and Poultry Products*, and
   *Appendix B: Compliance Guidelines for Cooling Heat-Treated Meat and Poultry
   Products (Stabilization)*.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import MISSING, dataclass, field, fields
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal import lethality
from thermal._checks import as_float_array, nonnegative, positive, temperature_c
from thermal.errors import ThermalInputError

__all__ = [
    "TOLERANCE_K",
    "ChillRule",
    "ClauseResult",
    "CookRule",
    "CoolingStep",
    "FreezeRule",
    "LethalityRule",
    "TimeTemperatureTable",
    "Verdict",
    "format_duration",
]

TOLERANCE_K = 1e-6
"""A temperature within this of a limit counts as meeting it [K] (root-finding
round-off; margins are still reported against the exact limit)."""


def format_duration(seconds: float) -> str:
    """Short human form of a duration: ``"17 s"``, ``"45.0 min"``, ``"2.50 h"``."""
    if not math.isfinite(seconds):
        return "never"
    if abs(seconds) < 1.0:
        return "<1 s" if seconds > 0 else "0 s"
    if abs(seconds) < 120.0:
        return f"{seconds:.0f} s"
    if abs(seconds) < 7200.0:
        return f"{seconds / 60.0:.1f} min"
    return f"{seconds / 3600.0:.2f} h"


def _scalar(name: str, value: Any, check=as_float_array) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise ThermalInputError(f"{name}: must be a number, got {value!r}")
    return float(check(name, value))


def _dict_fields(cls, data: Any, where: str) -> dict[str, Any]:
    """Check a plain dict against the dataclass fields of ``cls``."""
    if not isinstance(data, Mapping):
        raise ThermalInputError(f"{where}: must be a mapping of fields, got {type(data).__name__}")
    names = [f.name for f in fields(cls)]
    unknown = [k for k in data if k not in names]
    if unknown:
        raise ThermalInputError(
            f"{where}: unknown field {unknown[0]!r}; accepted: {', '.join(names)}"
        )
    required = [
        f.name for f in fields(cls) if f.default is MISSING and f.default_factory is MISSING
    ]
    missing = [k for k in required if k not in data]
    if missing:
        raise ThermalInputError(f"{where}.{missing[0]}: is required")
    return dict(data)


# --------------------------------------------------------------------------- verdicts


@dataclass(frozen=True)
class ClauseResult:
    """Outcome of one clause of a rule on one history.

    Attributes
    ----------
    clause : str
        Clause name: ``"core_target"``, ``"hold"``, ``"lethality"``,
        ``"table"``, ``"surface_max"``, ``"step 1"``..., ``"exit_core_max"``.
    met : bool
        Whether the clause is met by the history.
    margin : float
        Slack in ``unit`` (positive when met, negative when missed).
    unit : str
        ``"K"``, ``"s"`` or ``"log10"``.
    met_at : float
        Earliest time in the history at which the clause is met [s]; NaN when
        never (and for limits such as ``surface_max``, which hold or break).
    reason : str
        One-line explanation.
    """

    clause: str
    met: bool
    margin: float
    unit: str
    met_at: float
    reason: str


@dataclass(frozen=True)
class Verdict:
    """Result of checking a history against a rule.

    Attributes
    ----------
    met : bool
        Every clause met.
    binding : str
        When met, the clause met last in time (the one that sets the dwell);
        when missed, the first clause missed, in declaration order.
    margin : float
        The binding clause's margin in ``unit``.
    unit : str
        Unit of ``margin``.
    reason : str
        One-line reason, the binding clause's.
    clauses : tuple of ClauseResult
        Every clause checked.
    """

    met: bool
    binding: str
    margin: float
    unit: str
    reason: str
    clauses: tuple[ClauseResult, ...]

    def clause(self, name: str) -> ClauseResult:
        """The result of the clause called ``name``."""
        for c in self.clauses:
            if c.clause == name:
                return c
        raise KeyError(f"no clause {name!r}; clauses: {[c.clause for c in self.clauses]}")


def _verdict(clauses: list[ClauseResult]) -> Verdict:
    missed = [c for c in clauses if not c.met]
    if missed:
        b = missed[0]
    else:
        timed = [c for c in clauses if math.isfinite(c.met_at)]
        b = max(timed, key=lambda c: c.met_at) if timed else clauses[0]
    return Verdict(not missed, b.clause, b.margin, b.unit, b.reason, tuple(clauses))


def _history(times: ArrayLike, temps: ArrayLike, name: str = "core"):
    t = as_float_array("times", times)
    y = as_float_array(name, temps)
    if t.ndim != 1 or y.shape != t.shape:
        raise ThermalInputError(
            f"{name}: rule checks take one history, shape (n,) matching times; got times "
            f"{t.shape} and {name} {y.shape}"
        )
    if t.size < 1:
        raise ThermalInputError(f"{name}: history is empty")
    if t.size > 1 and (np.diff(t) < 0).any():
        raise ThermalInputError("times: must be non-decreasing")
    return t, y


def _peak(t, y) -> tuple[float, float]:
    k = int(np.argmax(y))
    return float(y[k]), float(t[k] - t[0])


def _low(t, y) -> tuple[float, float]:
    k = int(np.argmin(y))
    return float(y[k]), float(t[k] - t[0])


# --------------------------------------------------------------------------- lethality


@dataclass(frozen=True)
class LethalityRule:
    """Required decimal log reduction of one organism (D/z model).

    Parameters
    ----------
    organism : str
        Name of the target organism (for reports).
    d_ref : float
        D-value at ``t_ref``: time for a tenfold reduction [s], > 0.
    t_ref : float
        Reference temperature of ``d_ref`` [°C].
    z : float
        z-value: temperature rise that divides D by ten [K], > 0.
    log_reduction : float
        Required reduction [log10], > 0.

    References
    ----------
    .. [1] Bigelow (1921); Stumbo (1973), see :mod:`thermal.lethality`.
    """

    organism: str
    d_ref: float
    t_ref: float
    z: float
    log_reduction: float

    def __post_init__(self) -> None:
        if not isinstance(self.organism, str) or not self.organism.strip():
            raise ThermalInputError(
                f"LethalityRule.organism: must be a non-empty name, got {self.organism!r}"
            )
        object.__setattr__(self, "d_ref", _scalar("LethalityRule.d_ref [s]", self.d_ref, positive))
        object.__setattr__(
            self, "t_ref", _scalar("LethalityRule.t_ref [°C]", self.t_ref, temperature_c)
        )
        object.__setattr__(self, "z", _scalar("LethalityRule.z [K]", self.z, positive))
        object.__setattr__(
            self,
            "log_reduction",
            _scalar("LethalityRule.log_reduction [log10]", self.log_reduction, positive),
        )

    @property
    def required_f(self) -> float:
        """F-value the rule requires at ``t_ref`` [s]: ``log_reduction × d_ref``."""
        return self.log_reduction * self.d_ref

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "lethality") -> LethalityRule:
        """Build from a dict with the field names of this class."""
        d = _dict_fields(cls, data, where)
        return cls(**d)

    @classmethod
    def from_two_points(
        cls,
        organism: str,
        point_a: tuple[float, float],
        point_b: tuple[float, float],
        log_reduction: float,
    ) -> LethalityRule:
        """Organism parameters implied by two rows of a time-temperature table.

        Each row ``(T [°C], hold [s])`` is taken to deliver ``log_reduction``
        isothermally, so ``z = (T_b - T_a) / log10(hold_a / hold_b)`` and
        ``D(T_a) = hold_a / log_reduction``; ``t_ref`` is ``T_a``.

        Parameters
        ----------
        organism : str
            Organism name.
        point_a, point_b : tuple of float
            ``(temperature [°C], hold [s])``, holds > 0 and different
            temperatures.
        log_reduction : float
            Reduction the table delivers [log10].
        """
        (ta, ha), (tb, hb) = point_a, point_b
        ha = _scalar("point_a hold [s]", ha, positive)
        hb = _scalar("point_b hold [s]", hb, positive)
        if ta == tb or ha == hb:
            raise ThermalInputError(
                "point_b: must differ from point_a in both temperature and hold time"
            )
        z = (tb - ta) / math.log10(ha / hb)
        if z <= 0:
            raise ThermalInputError(
                "point_b: the hotter row must need the shorter hold (z would be negative)"
            )
        return cls(organism, ha / log_reduction, ta, z, log_reduction)

    def check(self, times: ArrayLike, core: ArrayLike) -> Verdict:
        """Check one history (usually the core) for the required reduction."""
        return _verdict([self._clause(*_history(times, core))])

    def _clause(self, t, y) -> ClauseResult:
        logs = float(lethality.log_reduction(t, y, self.d_ref, self.t_ref, self.z))
        when = float(lethality.time_to_f_value(t, y, self.required_f, self.t_ref, self.z))
        met = logs >= self.log_reduction * (1.0 - 1e-12)
        if met:
            reason = (
                f"{self.organism}: {logs:.2f} log ≥ {self.log_reduction:g} log, reached after "
                f"{format_duration(when - t[0])}"
            )
        else:
            reason = (
                f"{self.organism}: only {logs:.2f} log of the {self.log_reduction:g} log required"
            )
        return ClauseResult("lethality", met, logs - self.log_reduction, "log10", when, reason)


@dataclass(frozen=True)
class TimeTemperatureTable:
    """A table of minimum hold times at minimum core temperatures.

    Any row may be used: the rule is met when the core stays at or above some
    temperature ``T`` for the hold the table gives at ``T``. Between rows the
    hold is interpolated linearly in log(time) (the D/z model between the
    rows). A row with zero hold ("instantaneous") gives no credit below its
    temperature: between the last positive row and an instantaneous row the
    positive row's hold applies (conservative). Below the first row the table
    gives no credit; above the last row, the last row's hold applies.

    Parameters
    ----------
    name : str
        Name of the table and its source (e.g. "USDA FSIS Appendix A (1999),
        6.5-log10 Salmonella").
    temperatures : tuple of float
        Row temperatures, strictly increasing [°C].
    holds : tuple of float
        Minimum hold at each temperature, non-increasing, >= 0 [s].

    References
    ----------
    .. [1] USDA FSIS (1999), Appendix A; US FDA Food Code 2022, 3-401.11.
    """

    name: str
    temperatures: tuple[float, ...]
    holds: tuple[float, ...]

    def __post_init__(self) -> None:
        temps = as_float_array("TimeTemperatureTable.temperatures [°C]", self.temperatures)
        holds = nonnegative("TimeTemperatureTable.holds [s]", self.holds)
        if temps.ndim != 1 or temps.size < 1 or holds.shape != temps.shape:
            raise ThermalInputError(
                "TimeTemperatureTable.holds: must have one hold per temperature (at least one row)"
            )
        if (np.diff(temps) <= 0).any():
            raise ThermalInputError(
                "TimeTemperatureTable.temperatures: must be strictly increasing"
            )
        if (np.diff(holds) > 0).any():
            raise ThermalInputError(
                "TimeTemperatureTable.holds: must not increase with temperature"
            )
        object.__setattr__(self, "temperatures", tuple(float(x) for x in temps))
        object.__setattr__(self, "holds", tuple(float(x) for x in holds))

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "table") -> TimeTemperatureTable:
        """Build from ``{"name": ..., "temperatures": [...], "holds": [...]}``."""
        d = _dict_fields(cls, data, where)
        return cls(d["name"], tuple(d["temperatures"]), tuple(d["holds"]))

    def required_hold(self, temperature: ArrayLike) -> NDArray[np.float64]:
        """Hold the table requires at ``temperature`` [s]; inf below the first row."""
        x = as_float_array("temperature", temperature)
        tt = np.asarray(self.temperatures)
        hh = np.asarray(self.holds)
        out = np.full(x.shape, np.inf)
        inside = x >= tt[0]
        if tt.size == 1:
            out[inside] = hh[0]
            return out
        k = np.clip(np.searchsorted(tt, x, side="right") - 1, 0, tt.size - 2)
        t0, t1, h0, h1 = tt[k], tt[k + 1], hh[k], hh[k + 1]
        frac = np.clip((x - t0) / (t1 - t0), 0.0, 1.0)
        lh0 = np.log(np.where(h0 > 0, h0, 1.0))
        lh1 = np.log(np.where(h1 > 0, h1, 1.0))
        val = np.where(h1 > 0, np.exp(lh0 + frac * (lh1 - lh0)), np.where(x >= t1, 0.0, h0))
        val = np.where(h0 == 0, 0.0, val)
        val = np.where(x >= tt[-1], hh[-1], val)
        out[inside] = val[inside]
        return out

    def _levels(self) -> NDArray[np.float64]:
        tt = np.asarray(self.temperatures)
        if tt.size == 1:
            return tt
        grid = [np.linspace(a, b, 25, endpoint=False) for a, b in itertools.pairwise(tt)]
        return np.concatenate([*grid, tt[-1:]])

    def check(self, times: ArrayLike, core: ArrayLike) -> Verdict:
        """Check one history against the table."""
        return _verdict([self._clause(*_history(times, core))])

    def _clause(self, t, y) -> ClauseResult:
        levels = self._levels()
        need = self.required_hold(levels)
        yy = np.broadcast_to(y, (levels.size, y.size))
        held = lethality.longest_hold_above(t, yy, levels)
        when = lethality.hold_reached_time(t, yy, levels, need)
        slack = held - need
        best = int(np.argmax(slack))
        ok = np.isfinite(when)
        if ok.any():
            k = int(np.nanargmin(np.where(ok, when, np.nan)))
            reason = (
                f"{self.name}: core held {levels[k]:.1f} °C for {format_duration(need[k])} "
                f"by {format_duration(when[k] - t[0])}"
            )
            return ClauseResult("table", True, float(slack[best]), "s", float(when[k]), reason)
        peak, at = _peak(t, y)
        if peak < self.temperatures[0]:
            reason = (
                f"{self.name}: core never reached the table's lowest {self.temperatures[0]:.1f} °C:"
                f" peaked at {peak:.1f} °C after {format_duration(at)}"
            )
        else:
            reason = (
                f"{self.name}: best row {levels[best]:.1f} °C needs "
                f"{format_duration(need[best])}, core held it {format_duration(held[best])}"
            )
        margin = float(slack[best]) if math.isfinite(slack[best]) else -math.inf
        return ClauseResult("table", False, margin, "s", math.nan, reason)


# --------------------------------------------------------------------------- cook


@dataclass(frozen=True)
class CookRule:
    """What the core must see in the oven.

    Parameters
    ----------
    core_target : float
        Core temperature to reach [°C] (e.g. 74 °C for poultry, US FDA Food
        Code 2022 3-401.11).
    hold : float
        Unbroken time the core must then stay at or above ``core_target``
        [s], >= 0.
    lethality : LethalityRule or None
        Required log reduction along the core history.
    surface_max : float or None
        Surface temperature that must not be exceeded [°C]; above
        ``core_target``.
    table : TimeTemperatureTable or None
        A time-temperature table that must also be met.
    """

    core_target: float
    hold: float = 0.0
    lethality: LethalityRule | None = None
    surface_max: float | None = None
    table: TimeTemperatureTable | None = None

    def __post_init__(self) -> None:
        object.__setattr__(
            self,
            "core_target",
            _scalar("CookRule.core_target [°C]", self.core_target, temperature_c),
        )
        object.__setattr__(self, "hold", _scalar("CookRule.hold [s]", self.hold, nonnegative))
        if self.lethality is not None and not isinstance(self.lethality, LethalityRule):
            raise ThermalInputError("CookRule.lethality: must be a LethalityRule or None")
        if self.table is not None and not isinstance(self.table, TimeTemperatureTable):
            raise ThermalInputError("CookRule.table: must be a TimeTemperatureTable or None")
        if self.surface_max is not None:
            smax = _scalar("CookRule.surface_max [°C]", self.surface_max, temperature_c)
            if smax <= self.core_target:
                raise ThermalInputError(
                    f"CookRule.surface_max: must be above core_target ({self.core_target} °C), "
                    f"got {smax} °C"
                )
            object.__setattr__(self, "surface_max", smax)

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "cook_rule") -> CookRule:
        """Build from a dict; ``lethality`` and ``table`` may be nested dicts."""
        d = _dict_fields(cls, data, where)
        if isinstance(d.get("lethality"), Mapping):
            d["lethality"] = LethalityRule.from_dict(d["lethality"], where=f"{where}.lethality")
        if isinstance(d.get("table"), Mapping):
            d["table"] = TimeTemperatureTable.from_dict(d["table"], where=f"{where}.table")
        return cls(**d)

    def describe(self) -> str:
        """One line naming every clause."""
        parts = [f"core ≥ {self.core_target:.1f} °C"]
        if self.hold > 0:
            parts[0] += f" held {format_duration(self.hold)}"
        if self.lethality is not None:
            parts.append(f"{self.lethality.log_reduction:g} log {self.lethality.organism}")
        if self.table is not None:
            parts.append(self.table.name)
        if self.surface_max is not None:
            parts.append(f"surface ≤ {self.surface_max:.1f} °C")
        return "; ".join(parts)

    def check(self, times: ArrayLike, core: ArrayLike, surface: ArrayLike | None = None) -> Verdict:
        """Check an in-oven history.

        Parameters
        ----------
        times : array_like
            Sample times, shape (n,) [s].
        core : array_like
            Core (slowest point) temperature at each time [°C].
        surface : array_like, optional
            Surface temperature at each time [°C]; required when the rule has
            ``surface_max``.
        """
        t, y = _history(times, core)
        out = self.clauses(t, y)
        if self.surface_max is not None:
            if surface is None:
                raise ThermalInputError("surface: required because the rule has surface_max")
            _, s = _history(t, surface, "surface")
            out.append(self._surface_clause(t, s))
        return _verdict(out)

    def clauses(self, t: NDArray[np.float64], y: NDArray[np.float64]) -> list[ClauseResult]:
        """Core clauses (every clause except ``surface_max``) on one history."""
        peak, at = _peak(t, y)
        reached = float(lethality.first_time_at(t, y, self.core_target - TOLERANCE_K, "rising"))
        if math.isfinite(reached):
            reason = (
                f"core reached {self.core_target:.1f} °C after {format_duration(reached - t[0])}"
            )
            out = [ClauseResult("core_target", True, peak - self.core_target, "K", reached, reason)]
        else:
            reason = (
                f"core never reached {self.core_target:.1f} °C: peaked at {peak:.1f} °C after "
                f"{format_duration(at)}"
            )
            out = [
                ClauseResult("core_target", False, peak - self.core_target, "K", math.nan, reason)
            ]
        if self.hold > 0:
            held = float(lethality.longest_hold_above(t, y, self.core_target - TOLERANCE_K))
            when = float(
                lethality.hold_reached_time(t, y, self.core_target - TOLERANCE_K, self.hold)
            )
            met = math.isfinite(when)
            if met:
                reason = (
                    f"core held ≥ {self.core_target:.1f} °C for {format_duration(self.hold)} by "
                    f"{format_duration(when - t[0])}"
                )
            elif held > 0:
                reason = (
                    f"core held ≥ {self.core_target:.1f} °C for only {format_duration(held)} of "
                    f"{format_duration(self.hold)}"
                )
            else:
                reason = out[0].reason
            out.append(ClauseResult("hold", met, held - self.hold, "s", when, reason))
        if self.lethality is not None:
            out.append(self.lethality._clause(t, y))
        if self.table is not None:
            out.append(self.table._clause(t, y))
        return out

    def _surface_clause(self, t, s) -> ClauseResult:
        assert self.surface_max is not None
        peak, _at = _peak(t, s)
        met = peak <= self.surface_max + TOLERANCE_K
        if met:
            reason = f"surface peaked at {peak:.1f} °C, limit {self.surface_max:.1f} °C"
        else:
            over = float(lethality.first_time_at(t, s, self.surface_max, "rising"))
            reason = (
                f"surface passed {self.surface_max:.1f} °C after {format_duration(over - t[0])} "
                f"(peak {peak:.1f} °C)"
            )
        return ClauseResult("surface_max", met, self.surface_max - peak, "K", math.nan, reason)


# --------------------------------------------------------------------------- chill / freeze


@dataclass(frozen=True)
class CoolingStep:
    """The core must fall from ``from_temp`` to ``to_temp`` within ``within``.

    The window opens when the core first is at or below ``from_temp`` (at the
    start of the history if it starts there) and closes when it first reaches
    ``to_temp``.

    Parameters
    ----------
    from_temp : float
        Temperature that opens the window [°C].
    to_temp : float
        Temperature to reach, below ``from_temp`` [°C].
    within : float
        Longest allowed window [s], > 0.
    """

    from_temp: float
    to_temp: float
    within: float

    def __post_init__(self) -> None:
        a = _scalar("CoolingStep.from_temp [°C]", self.from_temp, temperature_c)
        b = _scalar("CoolingStep.to_temp [°C]", self.to_temp, temperature_c)
        w = _scalar("CoolingStep.within [s]", self.within, positive)
        if b >= a:
            raise ThermalInputError(
                f"CoolingStep.to_temp: must be below from_temp ({a} °C), got {b} °C"
            )
        object.__setattr__(self, "from_temp", a)
        object.__setattr__(self, "to_temp", b)
        object.__setattr__(self, "within", w)

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "step") -> CoolingStep:
        """Build from ``{"from_temp": ..., "to_temp": ..., "within": ...}``."""
        return cls(**_dict_fields(cls, data, where))

    def describe(self) -> str:
        """``"57.0 → 21.0 °C within 2.00 h"``."""
        return f"{self.from_temp:.1f} → {self.to_temp:.1f} °C within {format_duration(self.within)}"

    def window(self, t: NDArray[np.float64], y: NDArray[np.float64]) -> tuple[float, float]:
        """Times the window opens and closes in one history [s] (NaN if never)."""
        start = float(lethality.first_time_at(t, y, self.from_temp + TOLERANCE_K, "falling"))
        end = float(lethality.first_time_at(t, y, self.to_temp + TOLERANCE_K, "falling"))
        return start, end

    def _clause(self, name: str, t, y) -> ClauseResult:
        start, end = self.window(t, y)
        label = f"{name} ({self.describe()})"
        if not math.isfinite(start):
            low, at = _low(t, y)
            reason = (
                f"{label}: core never fell to {self.from_temp:.1f} °C: lowest {low:.1f} °C after "
                f"{format_duration(at)}"
            )
            return ClauseResult(name, False, -math.inf, "s", math.nan, reason)
        if not math.isfinite(end):
            low, at = _low(t, y)
            reason = (
                f"{label}: core never fell to {self.to_temp:.1f} °C: lowest {low:.1f} °C after "
                f"{format_duration(at)}"
            )
            return ClauseResult(name, False, -math.inf, "s", math.nan, reason)
        took = end - start
        met = took <= self.within
        verb = "took" if met else "took too long:"
        reason = f"{label}: {verb} {format_duration(took)}"
        return ClauseResult(name, met, self.within - took, "s", end, reason)


@dataclass(frozen=True)
class ChillRule:
    """Staged cooling windows and a core limit at tunnel exit.

    Examples (check against local codes): US FDA Food Code 2022 3-501.14,
    ``steps = (57 → 21 °C within 2 h, 57 → 5 °C within 6 h)``; USDA FSIS
    Appendix B (1999), ``(54.4 → 26.7 °C within 1.5 h, 26.7 → 4.4 °C within
    5 h)``.

    Every step must be completed within the checked history (transfer plus
    tunnel): what happens after the tunnel is not credited.

    Parameters
    ----------
    steps : tuple of CoolingStep
        Cooling windows; may be empty.
    exit_core_max : float or None
        Highest core temperature at the end of the history [°C]. None takes
        the lowest ``to_temp`` of the steps.
    """

    steps: tuple[CoolingStep, ...] = ()
    exit_core_max: float | None = None

    def __post_init__(self) -> None:
        steps = tuple(self.steps)
        for i, s in enumerate(steps):
            if not isinstance(s, CoolingStep):
                raise ThermalInputError(f"ChillRule.steps[{i}]: must be a CoolingStep")
        object.__setattr__(self, "steps", steps)
        if self.exit_core_max is None:
            if not steps:
                raise ThermalInputError(
                    "ChillRule.exit_core_max: is required when there are no steps"
                )
            object.__setattr__(self, "exit_core_max", min(s.to_temp for s in steps))
        else:
            object.__setattr__(
                self,
                "exit_core_max",
                _scalar("ChillRule.exit_core_max [°C]", self.exit_core_max, temperature_c),
            )

    @property
    def exit_target(self) -> float:
        """Core temperature to reach by tunnel exit [°C]: the exit limit and
        every step's ``to_temp``, whichever is lowest."""
        assert self.exit_core_max is not None
        return min([self.exit_core_max, *(s.to_temp for s in self.steps)])

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "chill_rule") -> ChillRule:
        """Build from ``{"steps": [{...}, ...], "exit_core_max": ...}``."""
        d = _dict_fields(cls, data, where)
        raw = d.get("steps", ())
        if isinstance(raw, (str, bytes, Mapping)) or not hasattr(raw, "__iter__"):
            raise ThermalInputError(f"{where}.steps: must be a list of steps")
        d["steps"] = tuple(
            s
            if isinstance(s, CoolingStep)
            else CoolingStep.from_dict(s, where=f"{where}.steps[{i}]")
            for i, s in enumerate(raw)
        )
        return cls(**d)

    def describe(self) -> str:
        """One line naming every clause."""
        parts = [s.describe() for s in self.steps]
        parts.append(f"core ≤ {self.exit_core_max:.1f} °C at exit")
        return "; ".join(parts)

    def check(self, times: ArrayLike, core: ArrayLike) -> Verdict:
        """Check a chill history (from oven exit to tunnel exit)."""
        t, y = _history(times, core)
        out = [s._clause(f"step {i + 1}", t, y) for i, s in enumerate(self.steps)]
        out.append(_exit_clause("exit_core_max", self.exit_core_max, t, y))
        return _verdict(out)


def _exit_clause(name: str, limit: float | None, t, y) -> ClauseResult:
    assert limit is not None
    final = float(y[-1])
    met = final <= limit + TOLERANCE_K
    when = float(lethality.first_time_at(t, y, limit + TOLERANCE_K, "falling")) if met else math.nan
    if met:
        reason = f"core {final:.1f} °C at exit, limit {limit:.1f} °C"
    else:
        low, at = _low(t, y)
        reason = f"core {final:.1f} °C at exit is above {limit:.1f} °C"
        if low > limit:
            reason = (
                f"core never fell to {limit:.1f} °C: lowest {low:.1f} °C after "
                f"{format_duration(at)}"
            )
    return ClauseResult(name, met, limit - final, "K", when, reason)


@dataclass(frozen=True)
class FreezeRule:
    """Core at or below ``core_target`` at tunnel exit.

    Parameters
    ----------
    core_target : float
        Highest core temperature at exit [°C] (e.g. -18 °C, common practice
        for frozen storage).
    """

    core_target: float = field(default=-18.0)

    def __post_init__(self) -> None:
        object.__setattr__(
            self,
            "core_target",
            _scalar("FreezeRule.core_target [°C]", self.core_target, temperature_c),
        )

    @property
    def exit_target(self) -> float:
        """Core temperature to reach by tunnel exit [°C]."""
        return self.core_target

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, where: str = "freeze_rule") -> FreezeRule:
        """Build from ``{"core_target": ...}``."""
        return cls(**_dict_fields(cls, data, where))

    def describe(self) -> str:
        """One line."""
        return f"core ≤ {self.core_target:.1f} °C at exit"

    def check(self, times: ArrayLike, core: ArrayLike) -> Verdict:
        """Check a freezing history."""
        t, y = _history(times, core)
        return _verdict([_exit_clause("core_target", self.core_target, t, y)])
