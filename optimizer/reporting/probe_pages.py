"""Pages and figures for probe logs: a calibration, and a run record.

:func:`calibration_report` shows a fitted h with its intervals, the measured
and fitted curves and the residuals; :func:`run_record_report` is the record
of a run checked against its rule, per probe, with the model's trace beside
each measured one, laid out to print on one or two pages. Both carry the
food-safety caution; the run record also says that it supports, and does not
replace, the plant's HACCP verification.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from optimizer.probes.calibrate import Calibration
from optimizer.probes.verify import RunRecord
from optimizer.reporting.html import (
    AIR_COLOUR,
    BAR_COLOURS,
    INK,
    MUTED,
    RULE_COLOUR,
    SAFETY_CAUTION,
    HtmlReport,
    _style_axes,
)

__all__ = [
    "PageInfo",
    "calibration_figure",
    "calibration_report",
    "calibration_table",
    "record_figure",
    "run_record_report",
]


@dataclass(frozen=True)
class PageInfo:
    """Where a page came from.

    Attributes
    ----------
    scenario_path : str
        Scenario file.
    product : str
        Product of the run.
    air_setting : str
        The air setting (``oven / setting``).
    tool_version : str
        corepace version.
    generated : str
        Time the page was made (UTC, ISO 8601).
    command : str
        Command line.
    """

    scenario_path: str
    product: str
    air_setting: str
    tool_version: str
    generated: str
    command: str = ""


def _minutes(t: np.ndarray) -> np.ndarray:
    return np.asarray(t, dtype=float) / 60.0


def calibration_figure(fit: Calibration) -> Figure:
    """Measured readings and fitted curves of every probe, the air, and the residuals."""
    fig = Figure(figsize=(8.0, 5.6))
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1.2]})
    t_air = np.concatenate([[0.0], np.cumsum(fit.air.durations)])
    air_steps = np.concatenate([fit.air.temperatures, fit.air.temperatures[-1:]])
    if fit.air_logged is not None and fit.probes:
        ok = np.isfinite(fit.air_logged)
        top.plot(
            _minutes(fit.probes[0].times)[ok],
            fit.air_logged[ok],
            color=AIR_COLOUR,
            lw=0.7,
            alpha=0.6,
            label="air (logged)",
        )
    top.step(
        _minutes(t_air), air_steps, where="post", color=AIR_COLOUR, lw=1.4, label="air (model)"
    )
    for k, p in enumerate(fit.probes):
        colour = BAR_COLOURS[k % len(BAR_COLOURS)]
        m = _minutes(p.times)
        top.plot(m[p.used], p.measured[p.used], ".", ms=3.5, color=colour, label=f"{p.channel}")
        top.plot(m, p.fitted, "-", lw=1.3, color=colour)
        bottom.plot(m[p.used], p.residuals[p.used], ".", ms=3, color=colour)
    bottom.axhline(0.0, color=MUTED, lw=0.8)
    top.set_ylabel("temperature [°C]", color=INK)
    bottom.set_ylabel("fit − measured [K]", color=INK)
    bottom.set_xlabel("time from the start of the run [min]", color=INK)
    top.set_title(
        f"h = {fit.h.value:.1f} W/(m² K): measured (dots) and fitted (lines)", fontsize=10
    )
    top.legend(fontsize=8, frameon=False, ncol=2)
    for ax in (top, bottom):
        _style_axes(ax)
    fig.tight_layout()
    return fig


def calibration_table(fit: Calibration) -> pd.DataFrame:
    """The fitted parameters with their intervals, one row each."""
    rows = []
    for e in fit.estimates:
        rows.append(
            {
                "parameter": e.name,
                "value": e.value,
                "unit": e.unit,
                "low_95": e.low,
                "high_95": e.high,
                "bootstrap_low_95": e.boot_low,
                "bootstrap_high_95": e.boot_high,
                "bound_low": e.bounds[0],
                "bound_high": e.bounds[1],
            }
        )
    return pd.DataFrame(rows)


def _probe_table(fit: Calibration) -> pd.DataFrame:
    return pd.DataFrame(
        [{"probe": p.channel, "readings": int(p.used.sum()), "rms_K": p.rms} for p in fit.probes]
    )


def calibration_report(
    fit: Calibration, info: PageInfo, overlay_name: str, notes: Sequence[str] = ()
) -> str:
    """The calibration page (HTML, self-contained).

    Parameters
    ----------
    fit : Calibration
        The fit.
    info : PageInfo
        Scenario, product, air setting, version, time.
    overlay_name : str
        File name of the overlay written beside the page.
    notes : sequence of str
        The log's notes.
    """
    rep = HtmlReport(
        f"Calibrated h: {info.product} in {info.air_setting}",
        f"{info.scenario_path} · log {fit.log_path} · made {info.generated}",
    )
    rep.caution("Read this first", SAFETY_CAUTION)
    rep.section("Result")
    h = fit.h
    pairs = [
        ("h (radiation included)", f"{h.value:.2f} W/(m² K)"),
        ("95 % interval (Jacobian)", f"{h.low:.2f} to {h.high:.2f} W/(m² K)"),
    ]
    if h.boot_low is not None:
        pairs.append(
            ("95 % interval (bootstrap over probes)", f"{h.boot_low:.2f} to {h.boot_high:.2f}")
        )
    pairs += [
        ("Biot number h L / k", f"{fit.biot:.2f}"),
        ("readings fitted", fit.n_points),
        ("rms residual", f"{fit.rms:.3f} K"),
        ("run", fit.started or "undated"),
        ("fitted window", f"{fit.window[0] / 60:.1f} to {fit.window[1] / 60:.1f} min"),
        ("scenario overlay", overlay_name),
    ]
    rep.key_values(pairs)
    if fit.warnings:
        rep.heading("Warnings")
        rep.bullets(fit.warnings)
    rep.table("calibration", calibration_table(fit), caption="Fitted parameters")
    rep.table("calibration_probes", _probe_table(fit), caption="Probes")
    rep.figure(
        calibration_figure(fit),
        caption=(
            "Each probe's readings (dots) and the model at the fitted parameters (lines), "
            "driven by the logged air; below, the residuals."
        ),
        alt="measured and fitted probe temperatures against time",
        name="calibration",
    )
    rep.section("Method")
    rep.paragraph(
        "The run is simulated by the finite-volume conduction solver (enthalpy form) with the "
        "product's largest-piece geometry and properties, the logged air temperature as "
        "piecewise-constant segments and the first readings as the start; h is fitted by "
        "nonlinear least squares (scipy.optimize.least_squares, trust-region reflective). The "
        "Jacobian interval assumes independent reading errors; the bootstrap resamples the "
        "probes (pieces)."
    )
    if notes:
        rep.section("Log notes")
        rep.bullets(notes)
    rep.footer("log sha256", fit.log_sha256)
    rep.footer("corepace", info.tool_version)
    rep.footer("command", info.command)
    return rep.render()


def record_figure(record: RunRecord) -> Figure:
    """Measured core traces, the model's traces, the air, and the rule's levels."""
    fig = Figure(figsize=(8.0, 4.2))
    ax = fig.subplots()
    m = _minutes(record.times)
    if record.air is not None:
        ok = np.isfinite(record.air)
        ax.plot(m[ok], record.air[ok], color=AIR_COLOUR, lw=1.0, label="air")
    for k, p in enumerate(record.probes):
        colour = BAR_COLOURS[k % len(BAR_COLOURS)]
        lw = 2.0 if p.channel == record.governing else 1.2
        ok = np.isfinite(p.measured)
        ax.plot(m[ok], p.measured[ok], "-", lw=lw, color=colour, label=f"{p.channel} (measured)")
        if p.predicted is not None:
            ax.plot(m, p.predicted, "--", lw=1.0, color=colour, label=f"{p.channel} (model)")
    for level, label in record.levels:
        ax.axhline(level, color=RULE_COLOUR, lw=0.8, ls=":")
        ax.annotate(label, (m[0], level), fontsize=7.5, color=RULE_COLOUR, ha="left", va="bottom")
    ax.set_xlabel("time from the first reading [min]", color=INK)
    ax.set_ylabel("temperature [°C]", color=INK)
    ax.legend(fontsize=7.5, frameon=False, ncol=2)
    _style_axes(ax)
    fig.tight_layout()
    return fig


def _record_table(record: RunRecord) -> pd.DataFrame:
    rows = []
    for p in record.probes:
        v = p.verdict
        rows.append(
            {
                "probe": p.channel,
                "result": "pass" if p.met else "FAIL",
                "binding": v.binding,
                "margin": v.margin if math.isfinite(v.margin) else None,
                "unit": v.unit,
                "finished_min": p.finished_at / 60 if math.isfinite(p.finished_at) else None,
                "log_reduction": p.log_reduction,
                "peak_C": p.peak,
                "lowest_C": p.lowest,
                "model_result": None
                if p.predicted_verdict is None
                else ("pass" if p.predicted_verdict.met else "FAIL"),
                "max_difference_K": p.difference,
                "missing": p.missing,
            }
        )
    return pd.DataFrame(rows)


def run_record_report(record: RunRecord, info: PageInfo) -> str:
    """The run record page (HTML, self-contained, prints on one or two pages)."""
    verdict = "PASS" if record.met else "FAIL"
    rep = HtmlReport(
        f"Run record: {info.product}, {record.stage}: {verdict}",
        f"{info.air_setting} · log {record.log_path} · run {record.started or 'undated'}",
    )
    rep.note(record.caution)
    rep.key_values(
        [
            ("rule", record.rule),
            ("result", f"{verdict} (worst probe {record.governing})"),
            ("probes", len(record.probes)),
            (
                "model h",
                f"{record.h:.1f} W/(m² K) ({record.h_source})" if record.h is not None else "-",
            ),
        ]
    )
    rep.table("record", _record_table(record), caption="Per probe (the worst governs)")
    rep.table("record_clauses", pd.DataFrame(record.rows()), caption="Every clause")
    rep.figure(
        record_figure(record),
        caption=(
            "Measured core traces (solid; the worst probe thicker), the model's prediction for "
            "the same run (dashed) and the rule's temperatures (dotted)."
        ),
        alt="measured and predicted core temperatures against time",
        name="record",
    )
    if record.notes:
        rep.heading("Log notes")
        rep.bullets(record.notes)
    rep.caution("Food safety", SAFETY_CAUTION)
    rep.footer("log sha256", record.log_sha256)
    rep.footer("scenario", info.scenario_path)
    rep.footer("corepace", info.tool_version)
    rep.footer("made", info.generated)
    rep.footer("command", info.command)
    return rep.render()
