"""``corepace compare A B ...``: several scenarios planned and put side by side."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from pathlib import Path

from optimizer.cli.common import (
    EXIT_OK,
    BadInput,
    load,
    out_dir,
    prepare_out,
    say_written,
    status_code,
)
from optimizer.cli.options import (
    Formatter,
    add_cache_options,
    add_common,
    add_scenario_options,
    add_solve_options,
)
from optimizer.cli.plan import run_plan
from optimizer.cli.terminal import Ui, rich_table
from optimizer.reporting import export

__all__ = ["add_parser", "cmd_compare"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace compare`` to the command's subparsers."""
    p = subparsers.add_parser(
        "compare",
        help="several scenarios side by side",
        description="Plan each scenario and put the figures side by side; writes compare.csv, "
        "compare.xlsx, compare.json and compare.html.\nExit 1 when any scenario has no "
        "feasible plan.",
        epilog="examples:\n  corepace compare configs/demo.yaml configs/demo-longer-tunnel.yaml\n"
        "  corepace compare a.yaml b.yaml c.yaml --out reports/what-if\n",
        formatter_class=Formatter,
    )
    p.add_argument("scenarios", metavar="SCENARIO", nargs="+", help="two or more scenario files")
    add_scenario_options(p)
    add_solve_options(p)
    add_common(p)
    add_cache_options(p)
    p.set_defaults(func=cmd_compare)
    return p


def _labels(paths: Sequence[str]) -> list[str]:
    stems = [Path(p).stem for p in paths]
    if len(set(stems)) == len(stems):
        return stems
    return [str(p) for p in paths]


def cmd_compare(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace compare A B ...``: several scenarios side by side."""
    # the report brings matplotlib (about 0.6 s): imported only by the commands that draw
    from optimizer.reporting.compare import compare_report, compare_table
    from optimizer.reporting.plan import plan_json

    if len(args.scenarios) < 2:
        raise BadInput(["compare: give at least two scenario files"])
    problems: list[str] = []
    scenarios = []
    for path in args.scenarios:
        try:
            scenarios.append(load(path, args))
        except BadInput as exc:
            problems.extend(exc.problems)
    if problems:
        raise BadInput(problems)
    labels = _labels(args.scenarios)
    target = out_dir(args, "compare")
    runs = [
        run_plan(path, scenario, args, ui)
        for path, scenario in zip(args.scenarios, scenarios, strict=True)
    ]
    table = compare_table(runs, labels)
    prepare_out(target)
    protect = list(args.scenarios)
    tables = {"compare": table}
    written = export.write_tables(target, tables, workbook="compare.xlsx", protect=protect)
    html_text = compare_report(runs, labels, table, args.argv_text)
    written.append(export.atomic_write_text(target / "compare.html", html_text, protect=protect))
    data = {
        "scenarios": [
            {"label": label, **{k: v for k, v in plan_json(run, []).items() if k != "tables"}}
            for run, label in zip(runs, labels, strict=True)
        ],
        "tables": {"compare": export.table_records(table)},
    }
    written.append(export.write_json(target / "compare.json", data, protect=protect))
    data["files"] = [str(p) for p in written]
    ui.emit_json(data)
    ui.say(rich_table(table, title="Scenarios side by side"))
    say_written(ui, written)
    codes = [status_code(run.result) for run in runs]
    for run, label, code in zip(runs, labels, codes, strict=True):
        if code != EXIT_OK:
            ui.problem(f"{label}: no feasible plan ({run.result.status.value})")
            for s in run.result.shortfalls:
                ui.problem(f"{label}: shortfall: {s.message}")
    ui.result(f"compared {len(runs)} scenarios → {target}")
    return max(codes)
