"""The documents of one plan run: tables (CSV, XLSX), plan.json and report.html."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd

from optimizer.dwell.describe import methods_used
from optimizer.planning.results import PlanResult, bottleneck, totals_table
from optimizer.planning.run import PlanRun, alike_loadings, dwell_notes, temperature_curves
from optimizer.planning.schedule import Schedule
from optimizer.reporting import export
from optimizer.reporting.explain import not_made_notes, plan_explanation
from optimizer.reporting.html import RunInfo, plan_report
from optimizer.reporting.schedule_files import floor_sheet_html, schedule_json, schedule_tables
from optimizer.scenario.provenance import made_at, tool_version

__all__ = ["plan_json", "plan_schedule", "write_plan_outputs"]

_NONE = pd.DataFrame()


def _bottleneck_json(result: PlanResult) -> dict[str, Any] | None:
    bn = bottleneck(result)
    return None if bn is None else export.to_jsonable(bn)


def plan_json(
    run: PlanRun, files: Sequence[Path], schedule: Schedule | None = None
) -> dict[str, Any]:
    """The machine-readable summary of a plan run (``--json`` and ``plan.json``).

    With a timed schedule (``schedule``, else the one the plan carries) it
    holds it under ``schedule`` (:func:`optimizer.reporting.schedule_files.schedule_json`).
    """
    r = run.result
    schedule = schedule if schedule is not None else plan_schedule(run)
    extra = {} if schedule is None else {"schedule": schedule_json(schedule)}
    return {
        "scenario": run.path,
        "scenario_sha256": run.sha256,
        "scenario_content_sha256": run.resolved_sha256,
        "tool_version": tool_version(),
        "status": r.status.value,
        "objective": r.objective.value,
        "objective_value": r.objective_value,
        "objective_unit": r.objective_unit,
        "best_bound": r.best_bound,
        "gap": r.gap,
        "solver": r.solver,
        "total_kg": r.total_kg,
        "bucket_kg": r.bucket_kg,
        "bucket_value": r.bucket_value,
        "bottleneck": _bottleneck_json(r),
        "shortfalls": [s.message for s in r.shortfalls],
        "excluded": {k: list(v) for k, v in r.excluded.items()},
        "messages": [*r.messages, *dwell_notes(run.tables.get("dwell_used", _NONE))],
        "files": [str(p) for p in files],
        "tables": {name: export.table_records(t) for name, t in run.tables.items()},
        **extra,
    }


def _run_info(run: PlanRun, argv_text: str) -> RunInfo:
    return RunInfo(
        scenario_path=run.path,
        scenario_sha256=run.sha256,
        resolved_sha256=run.resolved_sha256,
        tool_version=tool_version(),
        generated=made_at(),
        plant=getattr(run.scenario, "plant", Path(run.path).stem),
        command=argv_text,
    )


def plan_schedule(run: PlanRun) -> Schedule | None:
    """The timed schedule the plan carries, if it was scheduled."""
    schedule = getattr(run.result, "schedule", None)
    return schedule if isinstance(schedule, Schedule) else None


def write_plan_outputs(
    run: PlanRun,
    target: Path,
    argv_text: str,
    named_as: Path | None = None,
    *,
    schedule: Schedule | None = None,
) -> list[Path]:
    """Write the plan's tables (CSV + XLSX), its JSON summary and its HTML report.

    ``named_as``: the folder the files will be in once a staging ``target``
    is swapped in (:func:`optimizer.reporting.outset.output_set`); plan.json
    lists them there. With a timed schedule (``schedule``, else the one the
    plan carries) also ``schedule.csv`` (and its sheet in ``plan.xlsx``),
    ``unplaced.csv`` when anything was left out, the schedule in
    ``plan.json`` and ``floor_sheet.html``; the report's timelines are then
    the schedule's.
    """
    protect = [run.path]
    schedule = schedule if schedule is not None else plan_schedule(run)
    tables = dict(run.tables)
    if schedule is not None:
        tables.update(schedule_tables(schedule))
    wide = {"totals_wide": totals_table(run.result, run.inputs)}
    written = export.write_tables(
        target, tables, workbook="plan.xlsx", protect=protect, extra_sheets=wide
    )
    written.append(export.write_csv(target / "dwell.csv", run.dwell, protect=protect))
    info = _run_info(run, argv_text)
    html_text = plan_report(
        run.result,
        run.inputs,
        run.tables,
        info=info,
        curves=temperature_curves(run),
        methods=methods_used(run.dwell, run.scenario),
        notes=[*dwell_notes(run.tables.get("dwell_used", _NONE)), *alike_loadings(run.dwell)],
        schedule=schedule,
        explanation=plan_explanation(
            run.result, run.inputs, not_made_notes(run.tables.get("totals", _NONE))
        ),
    )
    written.append(export.atomic_write_text(target / "report.html", html_text, protect=protect))
    if schedule is not None:
        sheet = floor_sheet_html(
            schedule, run.tables.get("rules"), plant=info.plant, made=info.generated
        )
        written.append(
            export.atomic_write_text(target / "floor_sheet.html", sheet, protect=protect)
        )
    data = plan_json(run, [(named_as or target) / p.name for p in written], schedule)
    written.append(export.write_json(target / "plan.json", data, protect=protect))
    return written
