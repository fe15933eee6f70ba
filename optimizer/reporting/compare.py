"""The documents of ``corepace compare``: the side-by-side table and compare.html."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import pandas as pd
from matplotlib.figure import Figure

from optimizer.planning.results import bottleneck
from optimizer.planning.run import PlanRun
from optimizer.reporting.html import BAR_COLOURS, SAFETY_CAUTION, HtmlReport
from optimizer.scenario.provenance import made_at, tool_version

__all__ = ["compare_report", "compare_table"]


def compare_table(runs: Sequence[PlanRun], labels: Sequence[str]) -> pd.DataFrame:
    """Side-by-side figures of several plan runs: one row per figure, one column per scenario.

    Rows: status, objective value, total kg, mean kg per shift, kg of each
    product, mean utilisation of each machine, the bottleneck and its shadow
    price, solve seconds. Values are strings or numbers; a product or machine
    a scenario does not have is empty.
    """
    products = sorted({r.product for run in runs for r in run.result.runs})
    machines = list(dict.fromkeys(u.machine for run in runs for u in run.result.machine_use))
    rows: list[tuple[str, str, list[Any]]] = []

    def add(figure: str, unit: str, values: list[Any]) -> None:
        rows.append((figure, unit, values))

    add("status", "", [run.result.status.value for run in runs])
    add("objective", "", [run.result.objective.value for run in runs])
    add("objective value", "", [run.result.objective_value for run in runs])
    add("total kg", "kg", [run.result.total_kg for run in runs])
    add("bound kg (bucketed plan)", "kg", [run.result.bucket_kg for run in runs])
    add(
        "mean kg per shift",
        "kg",
        [run.result.total_kg / max(len(run.result.shifts), 1) for run in runs],
    )
    for p in products:
        add(f"kg {p}", "kg", [sum(r.kg for r in run.result.runs if r.product == p) for run in runs])
    for m in machines:
        values = []
        for run in runs:
            uses = [u.utilisation for u in run.result.machine_use if u.machine == m]
            values.append(sum(uses) / len(uses) if uses else None)
        add(f"utilisation {m}", "-", values)
    bns = [bottleneck(run.result) for run in runs]
    add("bottleneck", "", [f"{b.kind} {b.machine}" if b else "" for b in bns])
    add(
        "bottleneck shadow price",
        "per extra hour",
        [b.per_hour if b else None for b in bns],
    )
    data = {"figure": [r[0] for r in rows], "unit": [r[1] for r in rows]}
    for i, label in enumerate(labels):
        data[label] = [r[2][i] for r in rows]
    return pd.DataFrame(data).astype({label: object for label in labels})


def compare_report(
    runs: Sequence[PlanRun], labels: Sequence[str], table: pd.DataFrame, command: str
) -> str:
    """The HTML page comparing several scenarios."""
    report = HtmlReport(
        "Scenario comparison",
        f"{len(runs)} scenarios · made {made_at()}",
    )
    report.caution("Food safety", SAFETY_CAUTION)
    report.section("Side by side")
    report.table("compare", table, caption="Plan figures per scenario")
    products = sorted({r.product for run in runs for r in run.result.runs})
    fig = Figure(figsize=(7.4, 0.9 + 0.5 * max(len(runs), 1)))
    ax = fig.add_subplot(1, 1, 1)
    left = [0.0] * len(runs)
    for j, p in enumerate(products):
        values = [sum(r.kg for r in run.result.runs if r.product == p) for run in runs]
        ax.barh(labels, values, left=left, color=BAR_COLOURS[j % len(BAR_COLOURS)], label=p)
        left = [a + b for a, b in zip(left, values, strict=True)]
    ax.invert_yaxis()
    ax.set_xlabel("kg over the horizon", fontsize=9)
    ax.set_title("kg per product and scenario", fontsize=10, loc="left")
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    if products:
        ax.legend(fontsize=7.5, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    report.figure(
        fig,
        caption="Planned kg per product in each scenario.",
        alt="kg per scenario",
        name="compare-kg",
    )
    for run, label in zip(runs, labels, strict=True):
        if run.result.shortfalls:
            report.heading(f"{label}: what does not fit")
            report.bullets(s.message for s in run.result.shortfalls)
    for run, label in zip(runs, labels, strict=True):
        report.footer(f"{label} sha256", run.sha256)
    report.footer("corepace version", tool_version())
    report.footer("command", command)
    return report.render()
