"""The documents of a capacity run: capacity.json and capacity.html."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import pandas as pd

from optimizer.planning.capacity import CAPACITY_TOLERANCE, CapacityResult, full_machines
from optimizer.reporting import export
from optimizer.reporting.html import SAFETY_CAUTION, HtmlReport, utilisation_figure
from optimizer.scenario.models import Scenario
from optimizer.scenario.provenance import file_sha256, made_at, tool_version

__all__ = ["capacity_json", "capacity_report"]


def capacity_json(
    path: str,
    cap: CapacityResult,
    tables: Mapping[str, pd.DataFrame],
    files: Sequence[Path],
) -> dict[str, Any]:
    """The machine-readable result of ``corepace capacity``."""
    return {
        "scenario": path,
        "scenario_sha256": file_sha256(path),
        "mix": cap.shares,
        "mix_source": cap.mix_source,
        "total_kg": cap.total_kg,
        "horizon_hours": cap.horizon_hours,
        "kg_per_hour": cap.kg_per_hour,
        "kg_per_week": cap.kg_per_week,
        "shifts_per_week": cap.shifts_per_week,
        "free_mix_kg": cap.free_mix_kg,
        "solves": cap.solves,
        "full_machines": full_machines(cap.plan),
        "limits": [s.message for s in cap.limit.shortfalls] if cap.limit is not None else [],
        "files": [str(p) for p in files],
        "tables": {name: export.table_records(t) for name, t in tables.items()},
    }


def capacity_report(
    path: str,
    scenario: Scenario,
    cap: CapacityResult,
    tables: Mapping[str, pd.DataFrame],
    command: str,
) -> str:
    """The HTML page of a capacity run."""
    plant = getattr(scenario, "plant", Path(path).stem)
    report = HtmlReport(
        f"Capacity with a fixed mix — {plant}",
        f"Scenario {path} · made {made_at()}",
    )
    report.caution("Food safety", SAFETY_CAUTION)
    report.section("Capacity")
    pairs: list[tuple[str, Any]] = [
        ("most kg per hour", f"{cap.kg_per_hour:,.0f} kg/h"),
        ("most kg per week", f"{cap.kg_per_week:,.0f} kg ({cap.shifts_per_week:g} shifts)"),
        ("over the scenario's shifts", f"{cap.total_kg:,.0f} kg in {cap.horizon_hours:g} h"),
        ("with the mix free", f"{cap.free_mix_kg:,.0f} kg"),
        ("mix from", cap.mix_source),
    ]
    for line in full_machines(cap.plan):
        pairs.append(("at capacity", line))
    report.key_values(pairs)
    report.paragraph(
        "Method: the most kg with the product proportions fixed, found by bisection on the "
        f"total ({cap.solves} plans solved, stopped within {100 * CAPACITY_TOLERANCE:g} %). "
        "kg per hour is over the shifts' available hours; kg per week assumes the "
        "scenario's shifts repeat."
    )
    report.table(
        "capacity_mix",
        tables["capacity_mix"],
        caption="Mix and capacity per product",
        percent=("share",),
    )
    report.section("What limits it")
    if cap.limit is not None and cap.limit.shortfalls:
        report.bullets(s.message for s in cap.limit.shortfalls)
    report.table(
        "capacity_limits",
        tables["capacity_limits"],
        caption="Shortfalls just above the capacity (elastic re-solve)",
        empty_text="none: the capacity is the most the mix allows",
    )
    util = tables["utilisation"]
    if not util.empty:
        report.figure(
            utilisation_figure(util),
            caption="Machine utilisation at capacity.",
            alt="utilisation at capacity",
            name="utilisation",
        )
    report.table("utilisation", util, caption="Utilisation at capacity", percent=("utilisation",))
    report.table("ovens", tables["ovens"], caption="Oven batches at capacity")
    report.table("tunnels", tables["tunnels"], caption="Tunnel runs at capacity")
    report.footer("scenario", path)
    report.footer("scenario sha256", file_sha256(path))
    report.footer("corepace version", tool_version())
    report.footer("command", command)
    return report.render()
