"""The ``corepace`` command: one subcommand per question a plant asks.

Subcommands
-----------
``validate SCENARIO``
    Check a scenario file and list every problem, one line each.
``dwell SCENARIO``
    The dwell table: every product at every air setting, minutes required,
    fastest belt speed, and why a setting is ruled out.
``schema``
    JSON Schema of scenario files, for editors that check YAML/JSON.

Exit codes
----------
0
    Done.
1
    No feasible plan; the shortfall diagnosis is printed.
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
import hashlib
import json
import os
import sys
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd
from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    SpinnerColumn,
    TextColumn,
    TimeElapsedColumn,
)
from rich.table import Table

from optimizer import export

__all__ = [
    "EXIT_BAD_INPUT",
    "EXIT_INTERNAL",
    "EXIT_NO_PLAN",
    "EXIT_OK",
    "BadInput",
    "main",
]

EXIT_OK = 0
EXIT_NO_PLAN = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3

DEFAULT_OUT = "corepace-out"


class BadInput(Exception):
    """Bad input for a command: one or more one-line problems.

    Parameters
    ----------
    problems : sequence of str
        One line each, naming the field or option and what is accepted.
    """

    def __init__(self, problems: Sequence[str]) -> None:
        self.problems = tuple(str(p) for p in problems) or ("bad input",)
        super().__init__("; ".join(self.problems))


def tool_version() -> str:
    """Installed version of corepace (``"unknown"`` when not installed)."""
    try:
        return metadata.version("corepace")
    except metadata.PackageNotFoundError:
        return "unknown"


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes, as hex.

    Parameters
    ----------
    path : str or path-like
        File to hash (read only).

    Returns
    -------
    str
        64 hex digits.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 16), b""):
            digest.update(block)
    return digest.hexdigest()


# ---------------------------------------------------------------------------
# Terminal output
# ---------------------------------------------------------------------------


@dataclass
class Ui:
    """Where a command's messages go, and whether to show progress.

    Parameters
    ----------
    quiet : bool
        Print only errors and the final one-line result.
    json_mode : bool
        Machine-readable JSON on stdout; human text is suppressed.
    """

    quiet: bool = False
    json_mode: bool = False
    console: Console = field(init=False)
    err: Console = field(init=False)

    def __post_init__(self) -> None:
        tty = sys.stdout.isatty()
        self.console = Console(
            file=sys.stdout, highlight=False, width=None if tty else 120, soft_wrap=False
        )
        self.err = Console(file=sys.stderr, highlight=False, width=200, soft_wrap=True)
        self.show_progress = tty and not self.quiet and not self.json_mode

    @property
    def human(self) -> bool:
        """True when human-readable text goes to stdout."""
        return not self.json_mode

    def say(self, *objects: Any) -> None:
        """Print to stdout unless ``--quiet`` or ``--json``."""
        if not self.quiet and not self.json_mode:
            self.console.print(*objects)

    def result(self, *objects: Any) -> None:
        """Print the final result line (shown with ``--quiet``, not with ``--json``)."""
        if not self.json_mode:
            self.console.print(*objects)

    def problem(self, text: str) -> None:
        """One line on stderr."""
        print(text, file=sys.stderr, flush=True)

    def emit_json(self, obj: Any) -> None:
        """Write ``obj`` as JSON on stdout (only with ``--json``)."""
        if self.json_mode:
            text = json.dumps(export.to_jsonable(obj), indent=2, allow_nan=False)
            sys.stdout.write(text + "\n")
            sys.stdout.flush()

    @contextmanager
    def progress(self, description: str) -> Iterator[Callable[..., None]]:
        """A progress bar for a long step; yields a ``callback(done, total)``.

        The callback also accepts a third argument or ``text=`` keyword: a
        short description of the current item. Without a terminal the
        callback does nothing.
        """
        if not self.show_progress:
            yield _ignore
            return
        bar = Progress(
            SpinnerColumn(),
            TextColumn("{task.description}"),
            BarColumn(),
            MofNCompleteColumn(),
            TimeElapsedColumn(),
            console=self.console,
            transient=True,
        )
        task = bar.add_task(description, total=None)

        def update(done: float = 0, total: float | None = None, text: str | None = None, **_: Any):
            kwargs: dict[str, Any] = {"completed": done}
            if total is not None:
                kwargs["total"] = total
            if text:
                kwargs["description"] = f"{description}: {text}"
            bar.update(task, **kwargs)

        with bar:
            yield update

    @contextmanager
    def status(self, description: str) -> Iterator[None]:
        """A spinner with elapsed time for a step without a count."""
        if not self.show_progress:
            yield
            return
        bar = Progress(
            SpinnerColumn(),
            TextColumn("{task.description}"),
            TimeElapsedColumn(),
            console=self.console,
            transient=True,
        )
        bar.add_task(description, total=None)
        with bar:
            yield


def _ignore(*_: Any, **__: Any) -> None:
    return None


# ---------------------------------------------------------------------------
# Shared steps
# ---------------------------------------------------------------------------


def _scenario_path(text: str) -> Path:
    path = Path(text)
    if not path.exists():
        raise BadInput([f"{text}: no such file"])
    if path.is_dir():
        raise BadInput([f"{text}: is a directory; give a scenario file (.yaml, .yml or .json)"])
    if not os.access(path, os.R_OK):
        raise BadInput([f"{text}: cannot be read (permission denied)"])
    return path


def load(path_text: str) -> Any:
    """Load and validate a scenario file, turning every problem into :class:`BadInput`.

    Parameters
    ----------
    path_text : str
        Scenario file as given on the command line.

    Returns
    -------
    optimizer.scenario.Scenario
        The validated scenario.

    Raises
    ------
    BadInput
        Listing every problem, each prefixed with the file name.
    """
    path = _scenario_path(path_text)
    from optimizer.scenario import ScenarioError, load_scenario

    try:
        return load_scenario(path)
    except ScenarioError as exc:
        raise BadInput([f"{path_text}: {p}" for p in _problems(exc)]) from exc


def _problems(exc: BaseException) -> list[str]:
    problems = getattr(exc, "problems", None)
    if problems:
        return [str(p) for p in problems]
    lines = [line for line in str(exc).splitlines() if line.strip()]
    return lines or [type(exc).__name__]


def out_dir(args: argparse.Namespace, scenario_path: str | None) -> Path:
    """The output directory of a run: ``--out`` or ``corepace-out/<scenario stem>``."""
    if args.out:
        return Path(args.out)
    stem = Path(scenario_path).stem if scenario_path else "run"
    return Path(DEFAULT_OUT) / stem


def _prepare_out(path: Path) -> Path:
    try:
        return export.prepare_out_dir(path)
    except export.OutputError as exc:
        raise BadInput([str(exc)]) from exc


def cache_dir(args: argparse.Namespace) -> Path | None:
    """The dwell-table cache directory (None when ``--no-cache``)."""
    if getattr(args, "no_cache", False):
        return None
    if getattr(args, "cache_dir", None):
        return Path(args.cache_dir)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "corepace" / "dwell"


def dwell_table(scenario: Any, args: argparse.Namespace, ui: Ui) -> pd.DataFrame:
    """Build (or read from the cache) the dwell table, with a progress bar."""
    from optimizer.dwell import build_dwell_table

    with ui.progress("dwell table") as callback:
        return build_dwell_table(scenario, cache_dir=cache_dir(args), progress=callback)


def _written(ui: Ui, paths: Sequence[Path]) -> None:
    for p in paths:
        ui.say(f"  wrote {p}")


# ---------------------------------------------------------------------------
# validate
# ---------------------------------------------------------------------------


def cmd_validate(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace validate SCENARIO``: check a scenario file."""
    scenario = load(args.scenario)
    summary = _scenario_summary(scenario)
    ui.emit_json({"scenario": args.scenario, "valid": True, "problems": [], **summary})
    parts = ", ".join(f"{v} {k}" for k, v in summary.items())
    ui.result(f"{args.scenario}: valid ({parts})" if parts else f"{args.scenario}: valid")
    return EXIT_OK


def _scenario_summary(scenario: Any) -> dict[str, int]:
    counts = {}
    for name in ("products", "ovens", "tunnels", "shifts", "orders"):
        items = getattr(scenario, name, None)
        if items is not None:
            try:
                counts[name] = len(items)
            except TypeError:
                continue
    return counts


# ---------------------------------------------------------------------------
# dwell
# ---------------------------------------------------------------------------

DWELL_SHOWN = (
    ("product", "product"),
    ("oven", "oven"),
    ("oven_setting", "oven setting"),
    ("tunnel", "tunnel"),
    ("tunnel_setting", "tunnel setting"),
    ("loading", "loading"),
    ("cook_min", "cook min"),
    ("chill_min", "chill min"),
    ("max_belt_speed_m_per_min", "belt ≤ m/min"),
)


def dwell_rich_table(table: pd.DataFrame, *, title: str) -> Table:
    """The dwell table as a rich table: one row per combination, reason when ruled out.

    Parameters
    ----------
    table : pandas.DataFrame
        Dwell table (columns as in the interface contract).
    title : str
        Table title.

    Returns
    -------
    rich.table.Table
        Ready to print.
    """
    from optimizer.report import format_cell

    shown = [(c, label) for c, label in DWELL_SHOWN if c in table.columns]
    out = Table(title=title, title_justify="left", header_style="bold", show_lines=False)
    for column, label in shown:
        numeric = pd.api.types.is_numeric_dtype(table[column])
        out.add_column(label, justify="right" if numeric else "left", no_wrap=True)
    out.add_column("status", overflow="fold")
    decimals = {"cook_min": 1, "chill_min": 1, "max_belt_speed_m_per_min": 2}
    for row in table.itertuples(index=False):
        record = row._asdict()
        cells = [format_cell(record[c], decimals.get(c, 2)) for c, _ in shown]
        feasible = bool(record.get("feasible", True))
        status = "ok" if feasible else f"ruled out: {record.get('reason', '') or '?'}"
        style = None if feasible else "dim"
        out.add_row(*cells, status, style=style)
    return out


def cmd_dwell(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace dwell SCENARIO``: print and write the dwell table."""
    scenario = load(args.scenario)
    target = out_dir(args, args.scenario)
    table = dwell_table(scenario, args, ui)
    _prepare_out(target)
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
    ui.say(dwell_rich_table(table, title=f"Dwell table — {args.scenario}"))
    _written(ui, written)
    ui.result(f"{len(table)} rows, {n_ok} feasible, {len(table) - n_ok} ruled out → {target}")
    return EXIT_OK


# ---------------------------------------------------------------------------
# schema
# ---------------------------------------------------------------------------


def cmd_schema(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace schema``: the JSON Schema of scenario files."""
    from optimizer.scenario import scenario_json_schema

    schema = scenario_json_schema()
    text = json.dumps(schema, indent=2, ensure_ascii=False) + "\n"
    if args.out:
        target = _prepare_out(Path(args.out))
        path = export.atomic_write_text(target / "scenario.schema.json", text)
        ui.emit_json({"file": str(path), "schema": schema})
        ui.result(f"wrote {path}")
    else:
        sys.stdout.write(text)
    return EXIT_OK


# ---------------------------------------------------------------------------
# Parser
# ---------------------------------------------------------------------------

EPILOG = """\
examples:
  corepace validate configs/demo.yaml
  corepace dwell configs/demo.yaml --out reports/demo
  corepace schema > scenario.schema.json

exit codes: 0 done, 1 no feasible plan (diagnosis printed), 2 bad input
(one line per problem, nothing written), 3 internal error.
"""


class _Formatter(argparse.RawDescriptionHelpFormatter):
    def __init__(self, prog: str) -> None:
        super().__init__(prog, max_help_position=30, width=100)


def _common(parser: argparse.ArgumentParser, *, out: bool = True) -> None:
    group = parser.add_argument_group("common options")
    if out:
        group.add_argument(
            "--out",
            metavar="DIR",
            help=f"directory for the files written (created when missing; "
            f"default {DEFAULT_OUT}/<scenario name>)",
        )
    group.add_argument("--quiet", "-q", action="store_true", help="print only the result line")
    group.add_argument(
        "--json", action="store_true", help="machine-readable JSON on stdout instead of text"
    )
    group.add_argument(
        "--debug", action="store_true", help="show the traceback of an internal error"
    )


def _cache_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("dwell table cache")
    group.add_argument(
        "--cache-dir",
        metavar="DIR",
        help="where dwell tables are cached (default $XDG_CACHE_HOME/corepace/dwell)",
    )
    group.add_argument("--no-cache", action="store_true", help="recompute the dwell table")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``corepace`` command."""
    parser = argparse.ArgumentParser(
        prog="corepace",
        description="Dwell times from heat-transfer physics and shift plans for batch ovens\n"
        "and cooling tunnels. The figures are model estimates for the piece sizes entered;\n"
        "limits come from the plant's food-safety plan and the local regulator, and a plan\n"
        "is validated with calibrated probes in the thickest pieces before use.",
        epilog=EPILOG,
        formatter_class=_Formatter,
    )
    parser.add_argument("--version", action="version", version=f"corepace {tool_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser(
        "validate",
        help="check a scenario file and list every problem",
        description="Check a scenario file; list every problem, one line each (exit 2 if any).",
        epilog="example:\n  corepace validate configs/demo.yaml\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.yaml/.yml/.json)")
    _common(p, out=False)
    p.set_defaults(func=cmd_validate)

    p = sub.add_parser(
        "dwell",
        help="the dwell table: minutes per product and air setting, and why cells are ruled out",
        description="Compute the dwell table (cook and chill minutes for the largest piece at "
        "every air setting, fastest belt speed, reasons for ruled-out cells); print it and "
        "write dwell.csv and dwell.xlsx.",
        epilog="examples:\n  corepace dwell configs/demo.yaml\n"
        "  corepace dwell configs/demo.yaml --out /tmp/dwell --no-cache\n",
        formatter_class=_Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    _common(p)
    _cache_options(p)
    p.set_defaults(func=cmd_dwell)

    p = sub.add_parser(
        "schema",
        help="JSON Schema of scenario files",
        description="Print the JSON Schema of scenario files (or write "
        "scenario.schema.json into --out).",
        epilog="examples:\n  corepace schema > scenario.schema.json\n"
        "  corepace schema --out schemas\n",
        formatter_class=_Formatter,
    )
    _common(p)
    p.set_defaults(func=cmd_schema)
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
    ui = Ui(quiet=args.quiet, json_mode=args.json)
    start = time.perf_counter()
    try:
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
    if not ui.json_mode and not ui.quiet and args.command != "schema":
        ui.console.print(f"[dim]done in {time.perf_counter() - start:.1f} s[/dim]")
    return code


def _input_error(exc: Exception) -> list[str] | None:
    """Problems when ``exc`` is an input error of a lower layer, else None."""
    kinds: list[type[BaseException]] = [export.OutputError]
    try:
        from thermal.errors import ThermalInputError

        kinds.append(ThermalInputError)
    except ImportError:  # pragma: no cover - thermal is part of the package
        pass
    try:
        from optimizer.inputs import PlanInputError

        kinds.append(PlanInputError)
    except ImportError:
        pass
    if isinstance(exc, tuple(kinds)):
        return _problems(exc)
    return None


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
