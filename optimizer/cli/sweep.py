"""``corepace sweep STUDY``: a what-if study, one plan per point, purchases priced."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

from optimizer.cli.common import (
    EXIT_BAD_INPUT,
    EXIT_NO_PLAN,
    EXIT_OK,
    BadInput,
    cache_dir,
    out_dir,
    prepare_out,
    say_written,
)
from optimizer.cli.options import (
    Formatter,
    add_cache_options,
    add_common,
    add_scenario_options,
    add_solve_options,
)
from optimizer.cli.terminal import Ui, rich_table
from optimizer.planning.highs import quiet_solver_banner
from optimizer.reporting import export
from optimizer.scenario.overrides import OverrideError, parse_assignment
from optimizer.scenario.provenance import file_sha256, made_at, tool_version
from optimizer.studies.execute import ExecMode, done_indices
from optimizer.studies.study import (
    CLUSTER_CONNECT_TIMEOUT_S,
    Study,
    StudyError,
    load_study,
    run_study,
    sweep_points,
)

if TYPE_CHECKING:  # dask.distributed is the optional 'sweep' extra
    from distributed import Client

__all__ = ["add_parser", "cmd_sweep", "main", "run_sweep"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace sweep STUDY`` to the command's subparsers.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        What ``ArgumentParser.add_subparsers`` returned.

    Returns
    -------
    argparse.ArgumentParser
        The ``sweep`` parser (its ``func`` is :func:`cmd_sweep`).
    """
    p = subparsers.add_parser(
        "sweep",
        help="what-if study: one plan per point of a grid or list, and purchase payback",
        description="Plan every point of a study (a base scenario and a grid or a list of "
        "changes), then write sweep.csv, purchases.csv, sweep.xlsx, sweep.json and the "
        "comparison report sweep.html. Points run in a local process pool by default, on "
        "a Dask cluster with --cluster. Finished points are kept in OUT/points; running "
        "the same command again resumes an interrupted sweep.\nExit 1 when a point has "
        "no feasible plan (its row says why).",
        epilog="examples:\n  corepace sweep configs/study_tunnel.yaml\n"
        "  corepace sweep configs/study_tunnel.yaml --workers 4 --out reports/tunnel\n"
        "  corepace sweep study.yaml --cluster tcp://10.0.0.5:8786 --cache-dir /shared/dwell\n",
        formatter_class=Formatter,
    )
    p.add_argument("study", metavar="STUDY", help="study file (.yaml)")
    group = p.add_argument_group("where points run")
    where = group.add_mutually_exclusive_group()
    where.add_argument(
        "--serial", action="store_true", help="plan the points one by one in this process"
    )
    where.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="Dask scheduler address (tcp://host:port); --cache-dir must be a path every "
        "worker reaches",
    )
    group.add_argument(
        "--workers",
        type=_workers,
        metavar="N",
        help="processes of the local pool (default: the number of CPUs)",
    )
    group.add_argument(
        "--restart",
        action="store_true",
        help="forget the points finished by an earlier run of this study",
    )
    add_scenario_options(p)
    add_solve_options(p)
    add_common(p)
    add_cache_options(p)
    p.set_defaults(func=cmd_sweep)
    return p


def _workers(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number >= 1, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be a whole number >= 1, got {text!r}")
    return value


def _shown(table: pd.DataFrame, columns: Sequence[str]) -> pd.DataFrame:
    return table[[c for c in columns if c in table.columns]]


def cmd_sweep(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace sweep STUDY``: the study's plans, tables, plots and report.

    Raises
    ------
    optimizer.cli.common.BadInput
        For a bad study file or option, or a ``--cluster`` address where no
        scheduler answers (nothing is written).
    """
    study_path = Path(args.study)
    if not study_path.is_file():
        raise BadInput([f"{args.study}: no such study file"])
    changes, problems = [], []
    for text in getattr(args, "set", None) or []:
        try:
            changes.append(parse_assignment(text))
        except OverrideError as exc:
            problems.append(str(exc))
    if problems:
        raise BadInput(problems)
    with ui.status(f"checking {args.study}"):
        try:
            study = load_study(study_path, changes)
        except StudyError as exc:
            raise BadInput(exc.problems) from None
    target = out_dir(args, args.study)
    if args.cluster:
        mode = ExecMode.CLUSTER
    elif args.serial or args.workers == 1:
        mode = ExecMode.SERIAL
    else:
        mode = ExecMode.POOL
    # reach the scheduler before anything is written: a bad address is bad input
    client = _connect(args.cluster) if mode is ExecMode.CLUSTER else None
    try:
        return _sweep_into(target, study, study_path, args, ui, mode, client)
    finally:
        if client is not None:
            client.close()


def _connect(address: str) -> Client:
    """A Dask client on the scheduler at ``address``.

    Raises
    ------
    optimizer.cli.common.BadInput
        One line when dask.distributed is missing, the address is malformed
        or no scheduler answers within :data:`CLUSTER_CONNECT_TIMEOUT_S`.
    """
    try:
        from distributed import Client  # the 'sweep' extra: optional
    except ImportError:
        raise BadInput(
            ["--cluster: dask.distributed is not installed; install the 'sweep' extra"]
        ) from None
    try:
        return Client(address, timeout=CLUSTER_CONNECT_TIMEOUT_S)
    except (OSError, ValueError, TypeError) as exc:
        reason = " ".join(str(exc).split()) or type(exc).__name__
        raise BadInput([f"--cluster {address}: cannot connect ({reason})"]) from None


def _sweep_into(
    target: Path,
    study: Study,
    study_path: Path,
    args: argparse.Namespace,
    ui: Ui,
    mode: ExecMode,
    client: Client | None,
) -> int:
    """Run the points of a loaded study and write its tables and report into ``target``."""
    # the report brings matplotlib (about 0.6 s): imported only by the commands that draw
    from optimizer.reporting.study import sweep_json, sweep_report

    prepare_out(target)
    done_dir = target / "points"
    if args.restart and done_dir.is_dir():
        for f in done_dir.glob("*.json"):
            f.unlink()
    options = {"time_limit_s": args.time_limit, "gap_rel": args.gap, "solver": args.solver}
    points = sweep_points(study, cache_dir=cache_dir(args), **options)
    already = len(done_indices(points, done_dir))
    if already:
        ui.say(f"resuming: {already} of {len(study.points)} points done in {done_dir}")
    quiet_solver_banner()
    try:
        with ui.progress("sweep") as bar:
            result = run_study(
                study,
                mode=mode,
                workers=args.workers,
                cluster=client,
                cache_dir=cache_dir(args),
                done_dir=done_dir,
                on_done=lambda done, total, text: bar(done, total, text),
                **options,
            )
    except KeyboardInterrupt:
        kept = len(done_indices(points, done_dir))
        ui.problem(
            f"corepace sweep: interrupted; {kept} of {len(study.points)} points kept in "
            f"{done_dir}; run the same command again to resume"
        )
        return 130
    except OSError as exc:
        if mode is ExecMode.CLUSTER:  # connected at the start: failed on the way
            kept = len(done_indices(points, done_dir))
            raise BadInput(
                [
                    f"--cluster {args.cluster}: the sweep failed ({exc}); {kept} of "
                    f"{len(study.points)} points kept in {done_dir}; run the same command "
                    "again to resume"
                ]
            ) from None
        raise
    protect = [args.study, str(study.base_path)]
    with ui.status("writing the report"):
        tables = {"sweep": result.table, "purchases": result.purchases}
        written = export.write_tables(target, tables, workbook="sweep.xlsx", protect=protect)
        html_text = sweep_report(
            result,
            command=getattr(args, "argv_text", ""),
            generated=made_at(),
            tool_version=tool_version(),
            study_sha256=file_sha256(study_path),
        )
        written.append(export.atomic_write_text(target / "sweep.html", html_text, protect=protect))
        written.append(
            export.write_json(target / "sweep.json", sweep_json(result, written), protect=protect)
        )
    data = sweep_json(result, written)
    ui.emit_json(data)
    shown = ["point", *study.columns, "status", "kg_per_shift", "kg_per_week", "bottleneck"]
    shown += ["marginal_value", "energy_kwh"]
    ui.say(rich_table(_shown(result.table, shown), title=f"Sweep — {study.title}"))
    if not result.purchases.empty:
        cols = ["option", "point", "extra_kg_per_week", "extra_margin_per_year"]
        cols += ["simple_payback_years", "npv", "option_bottleneck", "note"]
        ui.say(rich_table(_shown(result.purchases, cols), title="Purchase options"))
    say_written(ui, written)
    failed = result.table[~result.table["status"].isin(["optimal", "feasible_with_gap"])]
    for r in failed.itertuples():
        ui.problem(
            f"{r.point}: no feasible plan ({r.status}){': ' + r.message if r.message else ''}"
        )
    n = len(result.table)
    ui.result(f"{n - len(failed)} of {n} points planned → {target / 'sweep.html'}")
    return EXIT_OK if failed.empty else EXIT_NO_PLAN


def run_sweep(args: argparse.Namespace, ui: Ui | None = None) -> int:
    """Run ``corepace sweep`` from parsed arguments and return the exit code.

    Bad input (study file, options) gives one line per problem on stderr and
    exit 2 with nothing written; 1 when a point has no feasible plan; 0 done.

    Parameters
    ----------
    args : argparse.Namespace
        Arguments parsed by the parser of :func:`add_sweep_parser`.
    ui : optimizer.cli.terminal.Ui, optional
        Terminal output (default: from ``--quiet``/``--json``).
    """
    ui = ui or Ui(quiet=args.quiet, json_mode=args.json)
    try:
        return cmd_sweep(args, ui)
    except BadInput as exc:
        for line in exc.problems:
            ui.problem(line)
        ui.emit_json({"status": "bad_input", "problems": list(exc.problems)})
        return EXIT_BAD_INPUT


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m optimizer.cli.sweep STUDY ...``: the same as ``corepace sweep STUDY ...``."""
    parser = argparse.ArgumentParser(prog="corepace", formatter_class=Formatter)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    add_parser(sub)
    items = list(sys.argv[1:] if argv is None else argv)
    if not items or items[0] != "sweep":
        items = ["sweep", *items]
    try:
        args = parser.parse_args(items)
    except SystemExit as exc:
        return int(exc.code or 0) if not isinstance(exc.code, str) else EXIT_BAD_INPUT
    args.argv_text = " ".join(["corepace", *items])
    return run_sweep(args)


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
