"""The ``corepace`` command: one subcommand per question a plant asks.

This module holds the parser and the error handling every command shares;
each command is a module of its own in :mod:`optimizer.cli`.

Subcommands
-----------
``validate SCENARIO``
    Check a scenario file and list every problem, one line each.
``dwell SCENARIO``
    The dwell table: every product at every air setting, minutes required,
    fastest belt speed, and why a setting is ruled out.
``plan SCENARIO``
    The shift plan: batches, settings, belt speeds and loading, with the
    bottleneck, shadow prices and an HTML report.
``capacity SCENARIO``
    Most kg per hour and per week for a fixed product mix, and what limits it.
``compare A B ...``
    Several scenarios planned and put side by side.
``sweep STUDY``
    What-if study (:mod:`optimizer.studies.study`): one plan per point, purchases priced.
``calibrate SCENARIO LOG``
    Fit h to a trial run's probe log; write it as a scenario overlay.
``verify SCENARIO LOG``
    Check a logged run against the product's rule, probe by probe.
``schema``
    JSON Schema of scenario files, for editors that check YAML/JSON.

Exit codes
----------
0
    Done.
1
    No feasible plan; the shortfall diagnosis is printed. ``verify``: a probe
    misses the rule (the record is written).
2
    Bad input (scenario file, option): one line per problem on stderr, no
    traceback, nothing written.
3
    Internal error (a bug): one line on stderr; ``--debug`` shows the traceback.

Output files are written atomically (temporary file in the same directory,
then :func:`os.replace`); input files are never written; ``--out`` is created
when missing. The progress display on long steps is shown only when standard
output is a terminal and neither ``--quiet`` nor ``--json`` is given.
"""

from __future__ import annotations

import argparse
import re
import time
import warnings
from collections.abc import Iterator, Sequence
from contextlib import contextmanager

from optimizer.cli import (
    calibrate,
    capacity,
    compare,
    dwell,
    plan,
    schema,
    sweep,
    validate,
    verify,
)
from optimizer.cli.common import (
    EXIT_BAD_INPUT,
    EXIT_INTERNAL,
    BadInput,
    argv_text,
    problems_of,
)
from optimizer.cli.options import Formatter
from optimizer.cli.terminal import Ui
from optimizer.dwell.errors import ThermalInputError, ValidityWarning
from optimizer.planning.inputs import PlanInputError
from optimizer.reporting import export
from optimizer.scenario.provenance import tool_version

__all__ = ["build_parser", "main"]


EPILOG = """\
examples:
  corepace validate configs/demo.yaml
  corepace dwell configs/demo.yaml --out reports/demo
  corepace plan configs/demo.yaml --out reports/demo
  corepace capacity configs/demo.yaml --mix pork-sausage=2,ham-log=1
  corepace compare configs/demo.yaml other.yaml
  corepace sweep study.yaml --out reports/what-if
  corepace calibrate configs/demo.yaml trial.csv --product chicken-fillet --oven rack-oven-1
  corepace verify configs/demo.yaml run.csv --product chicken-fillet --stage cook --oven rack-oven-1
  corepace schema > scenario.schema.json

every command: --help for its options; --quiet, --json; --out DIR where files are written.

exit codes: 0 done, 1 no feasible plan (diagnosis printed) or a verified run
that misses its rule (record written), 2 bad input (one line per problem,
nothing written), 3 internal error.
"""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``corepace`` command."""
    parser = argparse.ArgumentParser(
        prog="corepace",
        description="Dwell times from heat-transfer physics and shift plans for batch ovens\n"
        "and cooling tunnels. The figures are model estimates for the piece sizes entered;\n"
        "limits come from the plant's food-safety plan and the local regulator, and a plan\n"
        "is validated with calibrated probes in the thickest pieces before use.",
        epilog=EPILOG,
        formatter_class=Formatter,
    )
    parser.add_argument("--version", action="version", version=f"corepace {tool_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    for command in (validate, dwell, plan, capacity, compare, sweep, calibrate, verify, schema):
        command.add_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``corepace`` command.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name; default ``sys.argv[1:]``.

    Returns
    -------
    int
        Exit code: 0 done, 1 no feasible plan, 2 bad input, 3 internal error.
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, usage errors (argparse exits 2)
        return int(exc.code or 0) if not isinstance(exc.code, str) else EXIT_BAD_INPUT
    args.argv_text = argv_text(argv)
    ui = Ui(quiet=args.quiet, json_mode=args.json)
    start = time.perf_counter()
    extrapolated: dict[str, int] = {}
    try:
        with _validity_notes(extrapolated):
            code = args.func(args, ui)
    except BadInput as exc:
        for line in exc.problems:
            ui.problem(line)
        ui.emit_json({"status": "bad_input", "problems": list(exc.problems)})
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        ui.problem("corepace: interrupted; no partial files were left behind")
        return 130
    except Exception as exc:
        if args.debug:
            raise
        bad = _input_error(exc)
        if bad is not None:
            for line in bad:
                ui.problem(line)
            ui.emit_json({"status": "bad_input", "problems": bad})
            return EXIT_BAD_INPUT
        ui.problem(
            f"corepace: internal error: {type(exc).__name__}: {exc} (run with --debug for details)"
        )
        return EXIT_INTERNAL
    if not ui.json_mode and not ui.quiet:
        for text, count in sorted(extrapolated.items()):
            ui.problem(f"note: {text} ({count} case{'s' if count > 1 else ''})")
    if not ui.json_mode and not ui.quiet and args.command != "schema":
        ui.console.print(f"[dim]done in {time.perf_counter() - start:.1f} s[/dim]")
    return code


@contextmanager
def _validity_notes(counts: dict[str, int]) -> Iterator[None]:
    """Collect the physics' out-of-range warnings as one note per kind.

    A correlation used outside its validity range warns once per case with
    the value; a person needs the kind and how often, not a line per cell.
    Other warnings are shown as usual.
    """
    shown = warnings.showwarning

    def show(message, category, filename, lineno, file=None, line=None):
        if issubclass(category, ValidityWarning):
            text = re.sub(r" = [-+0-9.eE]+", "", str(message))
            counts[text] = counts.get(text, 0) + 1
        else:
            shown(message, category, filename, lineno, file, line)

    with warnings.catch_warnings():
        warnings.simplefilter("always", ValidityWarning)
        warnings.showwarning = show
        yield


def _input_error(exc: Exception) -> list[str] | None:
    """Problems when ``exc`` is an input error of a lower layer, else None."""
    if isinstance(exc, export.OutputError | ThermalInputError | PlanInputError):
        return problems_of(exc)
    return None


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
