"""``corepace dwell SCENARIO``: the dwell table, printed and written as CSV and XLSX."""

from __future__ import annotations

import argparse

from optimizer.cli.common import EXIT_OK, dwell_table, load, out_dir, prepare_out, say_written
from optimizer.cli.options import Formatter, add_cache_options, add_common, add_scenario_options
from optimizer.cli.terminal import Ui, render_dwell_table
from optimizer.reporting import export

__all__ = ["add_parser", "cmd_dwell"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace dwell`` to the command's subparsers."""
    p = subparsers.add_parser(
        "dwell",
        help="the dwell table: minutes per product and air setting, and why cells are ruled out",
        description="Compute the dwell table (cook and chill minutes for the largest piece at "
        "every air setting, fastest belt speed, reasons for ruled-out cells); print it and "
        "write dwell.csv and dwell.xlsx.",
        epilog="examples:\n  corepace dwell configs/demo.yaml\n"
        "  corepace dwell configs/demo.yaml --out /tmp/dwell --no-cache\n",
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    add_scenario_options(p)
    add_common(p)
    add_cache_options(p)
    p.set_defaults(func=cmd_dwell)
    return p


def cmd_dwell(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace dwell SCENARIO``: print and write the dwell table."""
    scenario = load(args.scenario, args)
    target = out_dir(args, args.scenario)
    table = dwell_table(scenario, args, ui)
    prepare_out(target)
    protect = [args.scenario]
    written = [
        export.write_csv(target / "dwell.csv", table, protect=protect),
        export.write_xlsx(target / "dwell.xlsx", {"dwell": table}, protect=protect),
    ]
    n_ok = int(table["feasible"].astype(bool).sum()) if "feasible" in table else len(table)
    ui.emit_json(
        {
            "scenario": args.scenario,
            "rows": len(table),
            "feasible_rows": n_ok,
            "files": [str(p) for p in written],
            "dwell": table,
        }
    )
    ui.say(render_dwell_table(table, title=f"Dwell table — {args.scenario}"))
    say_written(ui, written)
    ui.result(f"{len(table)} rows, {n_ok} feasible, {len(table) - n_ok} ruled out → {target}")
    return EXIT_OK
