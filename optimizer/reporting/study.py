"""The documents of a what-if study: its plots, sweep.html and sweep.json."""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from optimizer.reporting import export
from optimizer.reporting.html import BAR_COLOURS, INK, MUTED, SAFETY_CAUTION, HtmlReport
from optimizer.studies.study import SweepResult, axis_numbers, axis_unit, value_text

__all__ = ["MONEY_CAUTION", "study_figures", "sweep_json", "sweep_report"]


_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")


_LINE_STYLES = ("-", "--", ":", "-.", (0, (5, 1)), (0, (1, 3)), (0, (3, 1, 1, 1)), (0, (8, 3)))


def _bottleneck_styles(table: pd.DataFrame) -> dict[str, tuple[str, str]]:
    names = [b for b in dict.fromkeys(table["bottleneck"].fillna("")) if b]
    return {
        b: (BAR_COLOURS[i % len(BAR_COLOURS)], _MARKERS[i % len(_MARKERS)])
        for i, b in enumerate(names)
    }


def study_figures(result: SweepResult) -> list[tuple[str, Figure, str]]:
    """The plots of a study: (name, matplotlib Figure, caption).

    For a grid, one plot per axis of kg per week against the axis value (one
    line per combination of the other axes, at most eight), each point
    marked by its bottleneck machine, so a change of marker shows where the
    bottleneck moves; for two axes or more, also a map of the bottleneck over
    the first two axes. For named points, a bar per point coloured by its
    bottleneck.
    """
    study, table = result.study, result.table
    styles = _bottleneck_styles(table)
    planned = table["status"].isin(["optimal", "feasible_with_gap"])
    figures: list[tuple[str, Figure, str]] = []

    def legend(ax: Axes, lines: Sequence[tuple[str, str]] = ()) -> None:
        handles = [
            Line2D([], [], color=c, marker=m, linestyle="", label=f"bottleneck: {b}")
            for b, (c, m) in styles.items()
        ]
        if (~planned).any():
            handles.append(Line2D([], [], color=MUTED, marker="x", linestyle="", label="no plan"))
        handles += [Line2D([], [], color=MUTED, linestyle=ls, label=text) for text, ls in lines]
        ax.legend(handles=handles, fontsize=7.5, frameon=False, loc="best")

    def tidy(ax: Axes) -> None:
        ax.spines["top"].set_visible(False)
        ax.spines["right"].set_visible(False)
        ax.tick_params(labelsize=8)
        ax.grid(True, color="#e3e6e8", linewidth=0.6)

    if not study.axes:
        fig = Figure(figsize=(7.4, 0.9 + 0.42 * max(len(table), 1)))
        ax = fig.add_subplot(1, 1, 1)
        labels = list(table["point"])
        values = [v if math.isfinite(v) else 0.0 for v in table["kg_per_week"]]
        colours = [styles.get(b, (MUTED, "o"))[0] for b in table["bottleneck"]]
        ax.barh(labels, values, color=colours)
        for y, (v, ok) in enumerate(zip(values, planned, strict=True)):
            ax.text(v, y, f" {v:,.0f}" if ok else " no plan", va="center", fontsize=7.5)
        ax.invert_yaxis()
        ax.set_xlabel("kg per week", fontsize=9, color=INK)
        ax.set_title("Throughput per point (colour: bottleneck)", fontsize=10, loc="left")
        ax.legend(
            handles=[Patch(color=c, label=f"bottleneck: {b}") for b, (c, _) in styles.items()],
            fontsize=7.5,
            frameon=False,
            loc="lower right",
        )
        tidy(ax)
        fig.tight_layout()
        figures.append(
            (
                "throughput-points",
                fig,
                "kg per week at each point; the colour names the machine that limits it.",
            )
        )
        return figures

    nums = {a.column(): dict(zip(a.values, axis_numbers(a), strict=True)) for a in study.axes}
    for a, axis in enumerate(study.axes):
        col = axis.column()
        numeric = all(n is not None for n in nums[col].values())
        order = {value_text(v): i for i, v in enumerate(axis.values)}
        by_text = {value_text(v): nums[col][v] for v in axis.values}
        others = [c for c in study.columns if c != col]
        fig = Figure(figsize=(7.4, 4.2))
        ax = fig.add_subplot(1, 1, 1)
        groups = list(table.groupby(others, sort=False)) if others else [((), table)]
        lines: list[tuple[str, Any]] = []
        for key, sub in groups[:8]:
            sub = sub.sort_values(col, key=lambda s: s.map(order))
            xs = [by_text[v] if numeric else order[v] for v in sub[col]]
            ys = list(sub["kg_per_week"])
            ok = list(sub["status"].isin(["optimal", "feasible_with_gap"]))
            label = ", ".join(
                f"{c}={v}"
                for c, v in zip(others, key if isinstance(key, tuple) else (key,), strict=True)
            )
            line_x = [x for x, good in zip(xs, ok, strict=True) if good]
            line_y = [y for y, good in zip(ys, ok, strict=True) if good]
            style = _LINE_STYLES[len(lines) % len(_LINE_STYLES)]
            ax.plot(line_x, line_y, color=MUTED, linestyle=style, linewidth=1.0, zorder=1)
            if label and len(groups) > 1:
                lines.append((label, style))
            for x, y, good, b in zip(xs, ys, ok, sub["bottleneck"], strict=True):
                if good:
                    c, m = styles.get(b, (MUTED, "o"))
                    ax.scatter([x], [y], color=c, marker=m, s=36, zorder=3)
                else:
                    ax.scatter([x], [0.0], color=MUTED, marker="x", s=36, zorder=3)
        unit = axis_unit(axis)
        ax.set_xlabel(f"{col}" + (f" [{unit}]" if unit and numeric else ""), fontsize=9)
        ax.set_ylabel("kg per week", fontsize=9)
        if not numeric:
            ax.set_xticks(range(len(axis.values)))
            ax.set_xticklabels([value_text(v) for v in axis.values], fontsize=8)
        shown = "" if len(groups) <= 8 else f" (first 8 of {len(groups)} lines)"
        ax.set_title(f"Throughput against {col}{shown}", fontsize=10, loc="left")
        legend(ax, lines)
        tidy(ax)
        fig.tight_layout()
        figures.append(
            (
                f"throughput-{a}",
                fig,
                f"kg per week against {col}; marker colour and shape name the bottleneck, "
                "so a change of marker is where the bottleneck moves.",
            )
        )
    if len(study.axes) >= 2:
        ca, cb = study.columns[:2]
        fig = Figure(figsize=(7.4, 4.4))
        ax = fig.add_subplot(1, 1, 1)
        xa = {value_text(v): i for i, v in enumerate(study.axes[0].values)}
        xb = {value_text(v): i for i, v in enumerate(study.axes[1].values)}
        first = table.drop_duplicates([ca, cb])
        for _, r in first.iterrows():
            ok = r["status"] in ("optimal", "feasible_with_gap")
            c, m = styles.get(r["bottleneck"], (MUTED, "x")) if ok else (MUTED, "x")
            ax.scatter([xa[r[ca]]], [xb[r[cb]]], color=c, marker=m, s=140, zorder=3)
            if ok:
                ax.annotate(
                    f"{r['kg_per_week']:,.0f}",
                    (xa[r[ca]], xb[r[cb]]),
                    fontsize=7.5,
                    xytext=(0, 9),
                    textcoords="offset points",
                    ha="center",
                )
        ax.set_xticks(range(len(xa)))
        ax.set_xticklabels(list(xa), fontsize=8)
        ax.set_yticks(range(len(xb)))
        ax.set_yticklabels(list(xb), fontsize=8)
        ax.set_xlabel(ca, fontsize=9)
        ax.set_ylabel(cb, fontsize=9)
        extra = " (other axes at their first value)" if len(study.axes) > 2 else ""
        ax.set_title(f"Bottleneck over {ca} and {cb}{extra}", fontsize=10, loc="left")
        ax.margins(0.15)
        legend(ax)
        tidy(ax)
        fig.tight_layout()
        figures.append(
            (
                "bottleneck-map",
                fig,
                f"The bottleneck at each combination of {ca} and {cb}, labelled with kg per week.",
            )
        )
    return figures


MONEY_CAUTION = (
    "Payback and NPV rest on the modelled throughput, the margin per kg and the costs "
    "entered; they are estimates for comparing options, not a quotation.",
    "A changed plant (a longer tunnel, colder air, another oven) needs its own validation "
    "with calibrated probes before any plan made for it is used.",
)


def sweep_report(
    result: SweepResult,
    *,
    command: str = "",
    generated: str = "",
    tool_version: str = "",
    study_sha256: str = "",
) -> str:
    """The comparison report of a study: one self-contained HTML page.

    Sections: the food-safety caution, a summary (base point and best
    point), the purchase options side by side with payback and NPV, the
    plots, the results table, and the points without a plan.
    """
    study, table = result.study, result.table
    plant = str(study.base_raw.get("plant", study.base_path.stem))
    currency = str(study.base_raw.get("currency", ""))
    report = HtmlReport(
        f"What-if study: {study.title}",
        f"{plant} · base {study.spec.base} · {len(table)} points"
        + (f" · made {generated}" if generated else ""),
    )
    report.caution("Food safety", [*SAFETY_CAUTION, *MONEY_CAUTION])
    if study.spec.description:
        report.paragraph(study.spec.description)

    report.section("Summary")
    planned = table[table["status"].isin(["optimal", "feasible_with_gap"])]
    base = table.iloc[study.base_index]
    pairs: list[tuple[str, Any]] = [
        ("points", len(table)),
        ("points with a plan", len(planned)),
        ("base point", base["point"]),
        ("base kg per week", base["kg_per_week"]),
        ("base bottleneck", base["bottleneck"] or "-"),
    ]
    if not planned.empty:
        best = planned.loc[planned["kg_per_week"].idxmax()]
        pairs += [
            ("most kg per week at", best["point"]),
            ("its kg per week", best["kg_per_week"]),
            ("its bottleneck", best["bottleneck"] or "-"),
        ]
    report.key_values(pairs)
    report.paragraph(
        "kg per week is the planned kg per shift times the shifts a week; the marginal "
        "value is the bottleneck's shadow price (objective units per extra machine hour); "
        "energy is the heat put into the product in the ovens plus the heat taken out in "
        "the tunnels (product heat, not metered machine energy)."
    )

    if study.spec.purchases:
        report.section("Purchase options")
        fin = study.spec.finance
        assert fin is not None
        report.paragraph(
            f"Against the base point {base['point']!r}; {fin.years} years at "
            f"{100 * fin.discount_rate:g} % a year, {fin.weeks_per_year:g} production weeks a "
            f"year; money in {currency or 'the scenario currency'}."
        )
        report.table(
            "purchases",
            result.purchases,
            caption="Extra margin, simple payback and NPV per option",
            empty_text="no purchase options",
        )
        notes = [f"{r.option}: {r.note}" for r in result.purchases.itertuples() if r.note]
        if notes:
            report.bullets(notes)

    report.section("Throughput and bottleneck")
    for name, fig, caption in study_figures(result):
        report.figure(fig, caption=caption, alt=caption, name=name)

    report.section("All points")
    report.table(
        "sweep",
        table,
        caption="One plan per point",
        percent=[c for c in table.columns if c.startswith("util:")],
    )
    failed = table[~table["status"].isin(["optimal", "feasible_with_gap"])]
    if not failed.empty:
        report.heading("Points without a plan")
        report.bullets(f"{r.point}: {r.status}: {r.message}" for r in failed.itertuples())
    report.footer("study", str(study.path))
    if study_sha256:
        report.footer("study sha256", study_sha256)
    report.footer("base scenario", str(study.base_path))
    if tool_version:
        report.footer("corepace version", tool_version)
    if command:
        report.footer("command", command)
    return report.render()


def sweep_json(result: SweepResult, files: Sequence[Path]) -> dict[str, Any]:
    study = result.study
    return {
        "study": str(study.path),
        "title": study.title,
        "base": str(study.base_path),
        "base_point": study.points[study.base_index].name,
        "points": len(study.points),
        "planned": int(result.table["status"].isin(["optimal", "feasible_with_gap"]).sum()),
        "files": [str(f) for f in files],
        "tables": {
            "sweep": export.table_records(result.table),
            "purchases": export.table_records(result.purchases),
        },
    }
