"""``corepace validate SCENARIO``: check a scenario file and list every problem.

A valid scenario also gets the assumptions register without physics
(:func:`optimizer.dwell.assumptions.assumptions`) as warnings: every default
or estimate the dwell table would apply, most dangerous first. Warnings never
change the exit code.
"""

from __future__ import annotations

import argparse

from rich.markup import escape

from optimizer.cli.common import EXIT_OK, load
from optimizer.cli.options import Formatter, add_common, add_scenario_options
from optimizer.cli.terminal import Ui
from optimizer.dwell.assumptions import assumption_lines, assumptions, assumptions_table
from optimizer.reporting import export
from optimizer.scenario.models import Scenario

__all__ = ["add_parser", "cmd_validate"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace validate`` to the command's subparsers."""
    p = subparsers.add_parser(
        "validate",
        help="check a scenario file and list every problem",
        description="Check a scenario file; list every problem, one line each (exit 2 if any).",
        epilog="example:\n  corepace validate configs/demo.yaml\n",
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.yaml/.yml/.json)")
    add_scenario_options(p)
    add_common(p, out=False)
    p.set_defaults(func=cmd_validate)
    return p


def cmd_validate(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace validate SCENARIO``: check a scenario file."""
    scenario = load(args.scenario, args)
    summary = _scenario_summary(scenario)
    # defaults and estimates the dwell table would apply: warnings, never a failure
    register = assumptions(scenario)
    ui.emit_json(
        {
            "scenario": args.scenario,
            "valid": True,
            "problems": [],
            **summary,
            "warnings": assumption_lines(register),
            "assumptions": export.table_records(assumptions_table(register)),
        }
    )
    parts = ", ".join(f"{v} {k}" for k, v in summary.items())
    ui.result(f"{args.scenario}: valid ({parts})" if parts else f"{args.scenario}: valid")
    if register:
        risky = sum(a.direction == "shorter" for a in register)
        ui.say(
            f"{len(register)} assumption(s) in force ({risky} could shorten a dwell); give "
            "the field named to replace one:"
        )
        for line in assumption_lines(register):
            ui.say(escape(f"warning: {line}"))
    return EXIT_OK


def _scenario_summary(scenario: Scenario) -> dict[str, int]:
    counts = {}
    for name in ("products", "ovens", "tunnels", "shifts", "orders"):
        items = getattr(scenario, name, None)
        if items is not None:
            try:
                counts[name] = len(items)
            except TypeError:
                continue
    return counts
