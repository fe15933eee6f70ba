"""``corepace validate SCENARIO``: check a scenario file and list every problem."""

from __future__ import annotations

import argparse

from optimizer.cli.common import EXIT_OK, load
from optimizer.cli.options import Formatter, add_common, add_scenario_options
from optimizer.cli.terminal import Ui
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
    ui.emit_json({"scenario": args.scenario, "valid": True, "problems": [], **summary})
    parts = ", ".join(f"{v} {k}" for k, v in summary.items())
    ui.result(f"{args.scenario}: valid ({parts})" if parts else f"{args.scenario}: valid")
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
