"""The documents of one plan run: tables (CSV, XLSX), plan.json and report.html."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from optimizer.dwell.describe import methods_used
from optimizer.planning.results import PlanResult, bottleneck
from optimizer.planning.run import PlanRun, temperature_curves
from optimizer.reporting import export
from optimizer.reporting.html import RunInfo, plan_report
from optimizer.scenario.provenance import made_at, tool_version

__all__ = ["plan_json", "write_plan_outputs"]


def _bottleneck_json(result: PlanResult) -> dict[str, Any] | None:
    bn = bottleneck(result)
    return None if bn is None else export.to_jsonable(bn)


def plan_json(run: PlanRun, files: Sequence[Path]) -> dict[str, Any]:
    """The machine-readable summary of a plan run (``--json``)."""
    r = run.result
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
        "messages": list(r.messages),
        "files": [str(p) for p in files],
        "tables": {name: export.table_records(t) for name, t in run.tables.items()},
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


def write_plan_outputs(
    run: PlanRun, target: Path, argv_text: str, named_as: Path | None = None
) -> list[Path]:
    """Write the plan's tables (CSV + XLSX), its JSON summary and its HTML report.

    ``named_as``: the folder the files will be in once a staging ``target``
    is swapped in (:func:`optimizer.reporting.outset.output_set`); plan.json
    lists them there.
    """
    protect = [run.path]
    written = export.write_tables(target, run.tables, workbook="plan.xlsx", protect=protect)
    written.append(export.write_csv(target / "dwell.csv", run.dwell, protect=protect))
    html_text = plan_report(
        run.result,
        run.inputs,
        run.tables,
        info=_run_info(run, argv_text),
        curves=temperature_curves(run),
        methods=methods_used(run.dwell, run.scenario),
    )
    written.append(export.atomic_write_text(target / "report.html", html_text, protect=protect))
    written.append(
        export.write_json(
            target / "plan.json",
            plan_json(run, [(named_as or target) / p.name for p in written]),
            protect=protect,
        )
    )
    return written
