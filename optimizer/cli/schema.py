"""``corepace schema``: the JSON Schema of scenario files."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from optimizer.cli.common import EXIT_OK, prepare_out
from optimizer.cli.options import Formatter, add_common
from optimizer.cli.terminal import Ui
from optimizer.reporting import export
from optimizer.scenario.models import scenario_json_schema

__all__ = ["add_parser", "cmd_schema"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace schema`` to the command's subparsers."""
    p = subparsers.add_parser(
        "schema",
        help="JSON Schema of scenario files",
        description="Print the JSON Schema of scenario files (or write "
        "scenario.schema.json into --out).",
        epilog="examples:\n  corepace schema > scenario.schema.json\n"
        "  corepace schema --out schemas\n",
        formatter_class=Formatter,
    )
    add_common(p)
    p.set_defaults(func=cmd_schema)
    return p


def cmd_schema(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace schema``: the JSON Schema of scenario files."""
    schema = scenario_json_schema()
    text = json.dumps(schema, indent=2, ensure_ascii=False) + "\n"
    if args.out:
        target = prepare_out(Path(args.out))
        path = export.atomic_write_text(target / "scenario.schema.json", text)
        ui.emit_json({"file": str(path), "schema": schema})
        ui.result(f"wrote {path}")
    else:
        sys.stdout.write(text)
    return EXIT_OK
