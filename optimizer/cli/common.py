"""What every command shares: exit codes, bad input, loading a scenario, output paths."""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd

from optimizer.cli.terminal import Ui
from optimizer.dwell.checks import load_checked_scenario
from optimizer.dwell.table import build_dwell_table
from optimizer.planning.inputs import SolveOptions
from optimizer.planning.results import PlanResult, SolveStatus
from optimizer.reporting import export
from optimizer.scenario.models import Scenario, ScenarioError
from optimizer.scenario.overrides import OverrideError, parse_assignment

__all__ = [
    "DEFAULT_OUT",
    "EXIT_BAD_INPUT",
    "EXIT_INTERNAL",
    "EXIT_NO_PLAN",
    "EXIT_OK",
    "BadInput",
    "cache_dir",
    "dwell_table",
    "load",
    "out_dir",
    "prepare_out",
    "say_written",
    "solve_options",
    "status_code",
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


def scenario_path(text: str) -> Path:
    path = Path(text)
    if not path.exists():
        raise BadInput([f"{text}: no such file"])
    if path.is_dir():
        raise BadInput([f"{text}: is a directory; give a scenario file (.yaml, .yml or .json)"])
    if not os.access(path, os.R_OK):
        raise BadInput([f"{text}: cannot be read (permission denied)"])
    return path


def load(path_text: str, args: argparse.Namespace | None = None) -> Scenario:
    """Load and validate a scenario file, turning every problem into :class:`BadInput`.

    Parameters
    ----------
    path_text : str
        Scenario file as given on the command line.
    args : argparse.Namespace, optional
        Parsed options; its ``set`` list (``--set PATH=VALUE``) is applied
        to the file's contents before validation (the file is not changed).

    Returns
    -------
    optimizer.scenario.models.Scenario
        The validated scenario.

    Raises
    ------
    BadInput
        Listing every problem, each prefixed with the file name.
    """
    path = scenario_path(path_text)

    changes = []
    problems = []
    for text in getattr(args, "set", None) or []:
        try:
            changes.append(parse_assignment(text))
        except OverrideError as exc:
            problems.append(str(exc))
    if problems:
        raise BadInput(problems)
    try:
        return load_checked_scenario(path, changes)
    except ScenarioError as exc:
        # a line about the file itself names it already (the extends chain too)
        own = (f"{path_text}: ", f"{Path(path).resolve()}: ")
        raise BadInput(
            [p if p.startswith(own) else f"{path_text}: {p}" for p in problems_of(exc)]
        ) from exc


def problems_of(exc: BaseException) -> list[str]:
    problems = getattr(exc, "problems", None)
    if problems:
        return [str(p) for p in problems]
    lines = [line for line in str(exc).splitlines() if line.strip()]
    return lines or [type(exc).__name__]


def out_dir(args: argparse.Namespace, scenario_path: str | None) -> Path:
    """The output directory of a run: ``--out`` or ``corepace-out/<scenario stem>``."""
    if args.out:
        target = Path(args.out)
    else:
        stem = Path(scenario_path).stem if scenario_path else "run"
        target = Path(DEFAULT_OUT) / stem
    if target.exists() and not target.is_dir():
        raise BadInput([f"--out {target}: exists and is not a directory; give a directory path"])
    return target


def prepare_out(path: Path) -> Path:
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


def dwell_table(scenario: Scenario, args: argparse.Namespace, ui: Ui) -> pd.DataFrame:
    """Build (or read from the cache) the dwell table, with a progress bar."""
    with ui.progress("dwell table") as callback:
        return build_dwell_table(scenario, cache_dir=cache_dir(args), progress=callback)


def say_written(ui: Ui, paths: Sequence[Path]) -> None:
    for p in paths:
        ui.say(f"  wrote {p}")


def solve_options(args: argparse.Namespace, **overrides: Any) -> SolveOptions:
    """Planner options from the command line (``--time-limit``, ``--gap``, ``--solver``)."""
    kwargs: dict[str, Any] = {}
    if getattr(args, "time_limit", None) is not None:
        kwargs["time_limit_s"] = args.time_limit
    if getattr(args, "gap", None) is not None:
        kwargs["gap_rel"] = args.gap
    if getattr(args, "solver", None):
        kwargs["solver"] = args.solver
    kwargs.update(overrides)
    return SolveOptions(**kwargs)


def status_code(result: PlanResult) -> int:
    """The exit code of a plan: 0 with a plan, 1 infeasible or out of time, else 3."""
    if result.status.has_plan:
        return EXIT_OK
    if result.status in (SolveStatus.INFEASIBLE, SolveStatus.NO_SOLUTION_IN_TIME):
        return EXIT_NO_PLAN
    return EXIT_INTERNAL


def argv_text(argv: Sequence[str] | None) -> str:
    items = list(sys.argv[1:] if argv is None else argv)
    return " ".join(["corepace", *items])
