"""Option groups shared by the commands, and the help layout."""

from __future__ import annotations

import argparse

from optimizer.cli.common import DEFAULT_OUT

__all__ = [
    "Formatter",
    "add_cache_options",
    "add_common",
    "add_scenario_options",
    "add_solve_options",
    "fraction",
    "positive_float",
]


class Formatter(argparse.RawDescriptionHelpFormatter):
    """Help text as written (line breaks kept), options in a 100-column layout."""

    def __init__(self, prog: str) -> None:
        super().__init__(prog, max_help_position=30, width=100)


def add_common(parser: argparse.ArgumentParser, *, out: bool = True) -> None:
    """``--out``, ``--quiet``, ``--json`` and ``--debug``."""
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


def positive_float(text: str) -> float:
    """An option value that must be a finite number > 0."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number > 0, got {text!r}") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"must be a finite number > 0, got {text!r}")
    return value


def fraction(text: str) -> float:
    """An option value that must be a number in [0, 1)."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number in [0, 1), got {text!r}") from None
    if not 0 <= value < 1:
        raise argparse.ArgumentTypeError(f"must be a number in [0, 1), got {text!r}")
    return value


def add_scenario_options(parser: argparse.ArgumentParser) -> None:
    """``--set PATH=VALUE`` (repeatable)."""
    parser.add_argument(
        "--set",
        action="append",
        metavar="PATH=VALUE",
        help="change a scenario value for this run only (the file is not changed), "
        "e.g. --set tunnels.chill-tunnel.length='30 m'; repeatable",
    )


def add_solve_options(parser: argparse.ArgumentParser) -> None:
    """``--time-limit``, ``--gap`` and ``--solver``."""
    group = parser.add_argument_group("solver")
    group.add_argument(
        "--time-limit",
        type=positive_float,
        metavar="SECONDS",
        help="wall-clock limit per solve [s] (default 60)",
    )
    group.add_argument(
        "--gap", type=fraction, metavar="FRACTION", help="relative MIP gap to stop at"
    )
    group.add_argument("--solver", choices=("highs", "cbc"), help="first solver to try")


def add_cache_options(parser: argparse.ArgumentParser) -> None:
    """``--cache-dir`` and ``--no-cache``."""
    group = parser.add_argument_group("dwell table cache")
    group.add_argument(
        "--cache-dir",
        metavar="DIR",
        help="where dwell tables are cached (default $XDG_CACHE_HOME/corepace/dwell)",
    )
    group.add_argument("--no-cache", action="store_true", help="recompute the dwell table")
