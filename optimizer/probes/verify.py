"""Check a logged run against its rule, probe by probe, with the model's trace beside it.

Each measured core trace is checked against the product's cook rule (core
target and hold, lethality as F-value and log reduction, a time-temperature
table) or its chill or freeze rule (staged cooling windows, the exit limit),
by the rule checks of :mod:`thermal.rules`; the readings are taken as
linear between samples (missing readings leave the line between the
neighbours, as a logger's chart does; the record counts them). Each probe
gets a record: pass or fail, the binding clause and its margin (K, s or
log10), the moment every clause was met, F and log reduction. The worst
probe governs the run.

Beside each measured trace stands the model's prediction for the same run:
the piece from the scenario, the logged air history, the scenario's h for the
air setting (a correlation, or its measured h), the probe's first reading as
the start.

The rule is checked as written, without the scenario's planning margin. The
record supports, and does not replace, the plant's HACCP verification.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from optimizer.probes.logs import ProbeLog
from optimizer.probes.model import air_segments, probe_temperatures
from thermal import lethality
from thermal.rules import ChillRule, ClauseResult, CookRule, FreezeRule, Verdict

__all__ = ["ProbeRecord", "RunRecord", "VerifyError", "verify_run"]

HACCP_CAUTION = (
    "This record supports, and does not replace, the plant's HACCP verification: the "
    "limits come from the plant's food-safety plan and local codes, the probes must be "
    "calibrated and placed in the thickest pieces at the coldest spot, and the model "
    "trace is an estimate."
)


class VerifyError(ValueError):
    """A log that cannot be verified (names the channel)."""


@dataclass(frozen=True)
class ProbeRecord:
    """The rule on one measured core trace.

    Attributes
    ----------
    channel : str
        Log column.
    measured : ndarray
        The readings at the log's times [°C] (NaN where missing or pulled).
    verdict : thermal.rules.Verdict
        Every clause: met, margin, the moment met.
    missing : int
        Readings missing in the checked part of the trace [-].
    pulled_at : float or None
        Time the probe was pulled out [s], when it was (the trace ends there).
    f_value : float or None
        F-value at the rule's reference temperature over the trace [s] (cook
        rules with lethality).
    log_reduction : float or None
        Log reduction delivered [log10].
    peak, lowest : float
        Highest and lowest reading [°C].
    predicted : ndarray or None
        Model trace at the log's times [°C].
    difference : float or None
        Largest |measured - predicted| over the readings [K].
    predicted_verdict : Verdict or None
        The rule on the model trace.
    missed_at : tuple of (str, float)
        For each missed clause, when it was missed [s]: a cooling step at the
        end of its window (opened plus the time allowed), any other clause at
        the end of the trace.
    """

    channel: str
    measured: NDArray[np.float64]
    verdict: Verdict
    missing: int
    pulled_at: float | None
    f_value: float | None
    log_reduction: float | None
    peak: float
    lowest: float
    predicted: NDArray[np.float64] | None
    difference: float | None
    predicted_verdict: Verdict | None
    missed_at: tuple[tuple[str, float], ...] = ()

    @property
    def met(self) -> bool:
        """The rule is met on this probe."""
        return self.verdict.met

    @property
    def finished_at(self) -> float:
        """When the last clause was met [s] (inf when a clause was missed)."""
        times = [c.met_at for c in self.verdict.clauses if math.isfinite(c.met_at)]
        if not self.verdict.met:
            return math.inf
        return max(times) if times else 0.0


@dataclass(frozen=True)
class RunRecord:
    """A logged run checked against its rule.

    Attributes
    ----------
    stage : str
        ``"cook"``, ``"chill"`` or ``"freeze"``.
    rule : str
        The rule in one line.
    probes : tuple of ProbeRecord
        One per core probe.
    governing : str
        The worst probe: the first to fail by the largest shortfall, else the
        last to meet the rule.
    met : bool
        Every probe meets the rule.
    times : ndarray
        The log's times [s].
    air : ndarray or None
        Air readings [°C].
    h : float or None
        h used for the model traces [W/(m² K)].
    h_source : str
        Where that h comes from.
    log_path, log_sha256 : str
        The log and the SHA-256 of its bytes.
    started : str or None
        Date and time of the first reading (ISO).
    notes : tuple of str
        The log's notes (missing readings, pulled probes ...).
    levels : tuple of (float, str)
        The rule's temperatures with a label, for plots [°C].
    caution : str
        The HACCP caution every record carries.
    """

    stage: str
    rule: str
    probes: tuple[ProbeRecord, ...]
    governing: str
    met: bool
    times: NDArray[np.float64]
    air: NDArray[np.float64] | None
    h: float | None
    h_source: str
    log_path: str
    log_sha256: str
    started: str | None
    notes: tuple[str, ...]
    levels: tuple[tuple[float, str], ...] = ()
    caution: str = HACCP_CAUTION

    def probe(self, channel: str) -> ProbeRecord:
        """The record of probe ``channel``."""
        for p in self.probes:
            if p.channel == channel:
                return p
        raise KeyError(channel)

    def rows(self) -> list[dict[str, Any]]:
        """One row per probe and clause, for CSV."""
        out = []
        for p in self.probes:
            pred = {c.clause: c for c in p.predicted_verdict.clauses} if p.predicted_verdict else {}
            for c in p.verdict.clauses:
                m = pred.get(c.clause)
                out.append(
                    {
                        "probe": p.channel,
                        "clause": c.clause,
                        "met": c.met,
                        "margin": _finite(c.margin),
                        "unit": c.unit,
                        "met_at_min": _minutes(c.met_at),
                        "missed_at_min": _minutes(dict(p.missed_at).get(c.clause, math.nan)),
                        "reason": c.reason,
                        "model_met": None if m is None else m.met,
                        "model_margin": None if m is None else _finite(m.margin),
                        "model_met_at_min": None if m is None else _minutes(m.met_at),
                        "governing": p.channel == self.governing,
                    }
                )
        return out


def _finite(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _minutes(seconds: float) -> float | None:
    return seconds / 60.0 if math.isfinite(seconds) else None


def _check(rule: CookRule | ChillRule | FreezeRule, t, y, surface) -> Verdict:
    if isinstance(rule, CookRule):
        if rule.surface_max is not None and surface is None:
            # no surface probe: the core clauses only, the surface limit unchecked
            return CookRule(rule.core_target, rule.hold, rule.lethality, None, rule.table).check(
                t, y
            )
        return rule.check(t, y, surface)
    return rule.check(t, y)


def _rank(p: ProbeRecord) -> tuple[int, float, float]:
    """Sort key, worst first: failing probes by shortfall, then the latest to finish."""
    if not p.met:
        first = next(c for c in p.verdict.clauses if not c.met)
        order = [c.clause for c in p.verdict.clauses].index(first.clause)
        return (0, order, first.margin)
    return (1, -p.finished_at, 0.0)


def verify_run(
    log: ProbeLog,
    rule: CookRule | ChillRule | FreezeRule,
    *,
    geometry: Any | None = None,
    properties: Any | None = None,
    h: float | None = None,
    h_source: str = "",
    probes: list[str] | None = None,
    air_temperature: float | None = None,
) -> RunRecord:
    """Check every core probe of a logged run against ``rule``.

    Parameters
    ----------
    log : ProbeLog
        The run.
    rule : CookRule or ChillRule or FreezeRule
        The product's rule (SI: °C, s).
    geometry, properties : optional
        The piece and its properties, for the model traces (with ``h``).
    h : float, optional
        Surface coefficient of the air setting, radiation included [W/(m² K)].
    h_source : str
        Where ``h`` comes from (for the record).
    probes : list of str, optional
        Core channels to check (default all).
    air_temperature : float, optional
        Constant air temperature for the model trace when the log has no air
        channel [°C].

    Returns
    -------
    RunRecord
    """
    chans = list(log.cores) if probes is None else [log.channel(n) for n in probes]
    for c in chans:
        if c.role != "core":
            raise VerifyError(f"probe {c.name!r}: is a {c.role} channel, not a core probe")
    if not chans:
        raise VerifyError(f"{log.path}: no core probe to verify")
    stage = (
        "cook"
        if isinstance(rule, CookRule)
        else "freeze"
        if isinstance(rule, FreezeRule)
        else "chill"
    )
    surfaces = log.surfaces
    model = None
    air = log.air.values if log.air is not None else None
    model_air = air
    if model_air is None and air_temperature is not None:
        model_air = np.full(log.times.size, float(air_temperature))
    if geometry is not None and h is not None and model_air is not None:
        starts = []
        for c in chans:
            ok = np.flatnonzero(np.isfinite(c.values))
            starts.append(c.values[ok[0]])
        segs = air_segments(log.times, model_air)
        model = probe_temperatures(
            geometry,
            properties,
            segs,
            log.times,
            np.full(len(chans), float(h)),
            start_core=np.array(starts),
        )
    records = []
    for k, c in enumerate(chans):
        ok = np.isfinite(c.values)
        t, y = log.times[ok], c.values[ok]
        if t.size < 2:
            raise VerifyError(f"probe {c.name!r}: fewer than 2 readings to check")
        surf = None
        if surfaces:
            s = surfaces[0].values[ok]
            surf = s if np.isfinite(s).all() else None
        verdict = _check(rule, t, y, surf)
        f = logs = None
        if isinstance(rule, CookRule) and rule.lethality is not None:
            L = rule.lethality
            f = float(lethality.f_value(t, y, L.t_ref, L.z))
            logs = f / L.d_ref
        pred = pv = diff = None
        if model is not None:
            pred = model[k]
            diff = float(np.max(np.abs(pred[ok] - y)))
            pv = _check(rule, log.times, pred, None)
        in_trace = log.times <= t[-1] if c.pulled_at is None else log.times < c.pulled_at
        missing = int((~ok & in_trace).sum())
        records.append(
            ProbeRecord(
                c.name,
                c.values,
                verdict,
                missing,
                c.pulled_at,
                f,
                logs,
                float(y.max()),
                float(y.min()),
                pred,
                diff,
                pv,
                _missed(rule, verdict, t, y),
            )
        )
    worst = sorted(records, key=_rank)[0]
    return RunRecord(
        stage=stage,
        rule=rule.describe(),
        probes=tuple(records),
        governing=worst.channel,
        met=all(r.met for r in records),
        times=log.times,
        air=air,
        h=h if model is not None else None,
        h_source=h_source,
        log_path=log.path,
        log_sha256=log.sha256,
        started=None if log.started is None else log.started.isoformat(sep=" "),
        notes=tuple(n.message for n in log.notes),
        levels=_levels(rule),
    )


def _missed(rule, verdict: Verdict, t, y) -> tuple[tuple[str, float], ...]:
    """When each missed clause was missed [s] (see :class:`ProbeRecord`)."""
    steps = {f"step {i + 1}": s for i, s in enumerate(getattr(rule, "steps", ()))}
    out = []
    for c in verdict.clauses:
        if c.met:
            continue
        when = float(t[-1])
        step = steps.get(c.clause)
        if step is not None:
            opened, _ = step.window(t, y)
            if math.isfinite(opened):
                when = min(opened + step.within, when)
        out.append((c.clause, when))
    return tuple(out)


def _levels(rule: CookRule | ChillRule | FreezeRule) -> tuple[tuple[float, str], ...]:
    """The rule's temperatures to draw, with labels."""
    if isinstance(rule, CookRule):
        out = [(rule.core_target, f"core target {rule.core_target:.1f} °C")]
        if rule.surface_max is not None:
            out.append((rule.surface_max, f"surface limit {rule.surface_max:.1f} °C"))
        return tuple(out)
    if isinstance(rule, FreezeRule):
        return ((rule.core_target, f"exit limit {rule.core_target:.1f} °C"),)
    seen: dict[float, str] = {}
    for i, step in enumerate(rule.steps):
        seen.setdefault(step.from_temp, f"step {i + 1} opens {step.from_temp:.1f} °C")
        seen.setdefault(step.to_temp, f"step {i + 1} target {step.to_temp:.1f} °C")
    assert rule.exit_core_max is not None
    seen.setdefault(rule.exit_core_max, f"exit limit {rule.exit_core_max:.1f} °C")
    return tuple(seen.items())


def clause_text(c: ClauseResult) -> str:
    """``"lethality: +1.23 log10, met at 42.0 min"`` for reports."""
    margin = f"{c.margin:+.2f} {c.unit}" if math.isfinite(c.margin) else "never"
    when = f", met at {c.met_at / 60:.1f} min" if math.isfinite(c.met_at) else ""
    return f"{c.clause}: {margin}{when}"
