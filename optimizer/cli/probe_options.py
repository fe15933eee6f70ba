"""Options shared by ``corepace calibrate`` and ``corepace verify``: the log and the air setting."""

from __future__ import annotations

import argparse
import math
from typing import Any

from optimizer.cli.common import BadInput
from optimizer.probes.logs import LogFileError, ProbeLog, read_log
from optimizer.probes.overlay import AirTarget, TargetError, air_target
from optimizer.scenario.models import Product, Scenario

__all__ = [
    "add_log_options",
    "add_target_options",
    "log_from_args",
    "minutes_pair",
    "product_from_args",
    "target_from_args",
]


def minutes_pair(text: str) -> tuple[float, float]:
    """Two numbers ``LOW,HIGH`` with LOW < HIGH (a window in minutes, or bounds)."""
    parts = text.split(",")
    try:
        lo, hi = (float(p) for p in parts)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"must be two numbers LOW,HIGH such as 5,200, got {text!r}"
        ) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise argparse.ArgumentTypeError(f"needs finite LOW < HIGH, got {text!r}")
    return lo, hi


def add_log_options(parser: argparse.ArgumentParser) -> None:
    """The logger file's channels and units."""
    g = parser.add_argument_group(
        "logger file",
        "channels are recognised from the header (core/centre/probe, surface, air) unless named",
    )
    g.add_argument(
        "--core", action="append", metavar="COLUMN", help="a core probe column; repeatable"
    )
    g.add_argument("--surface", action="append", metavar="COLUMN", help="a surface probe column")
    g.add_argument("--air", metavar="COLUMN", help="the air probe column")
    g.add_argument("--time-column", metavar="COLUMN", help="the time column")
    g.add_argument(
        "--temperature-unit", choices=("degC", "degF", "K"), help="unit of every probe column"
    )
    g.add_argument("--time-unit", choices=("s", "min", "h"), help="unit of elapsed times")
    g.add_argument(
        "--date-order", choices=("ymd", "dmy", "mdy"), help="order of dates the file leaves open"
    )


def add_target_options(parser: argparse.ArgumentParser) -> None:
    """The product and the air setting of the run."""
    g = parser.add_argument_group("product and air setting")
    g.add_argument("--product", required=True, metavar="NAME", help="the product in the run")
    g.add_argument("--oven", metavar="NAME", help="the oven of the run")
    g.add_argument("--tunnel", metavar="NAME", help="the tunnel of the run")
    g.add_argument(
        "--setting",
        metavar="NAME",
        help="the oven's or tunnel's air setting (default its only one)",
    )
    g.add_argument("--zone", metavar="NAME|N", help="a tunnel setting's zone, by name or 1..n")
    g.add_argument(
        "--transfer", action="store_true", help="the tunnel's transfer stage (the hot hold)"
    )


def log_from_args(args: argparse.Namespace) -> ProbeLog:
    """Read the logger file named on the command line; bad files become BadInput."""
    try:
        return read_log(
            args.log,
            time_column=args.time_column,
            core=args.core,
            surface=args.surface,
            air=args.air,
            temperature_unit=args.temperature_unit,
            time_unit=args.time_unit,
            date_order=args.date_order,
        )
    except LogFileError as exc:
        raise BadInput([str(exc)]) from exc


def product_from_args(scenario: Scenario, args: argparse.Namespace) -> Product:
    """The ``--product`` of the scenario."""
    try:
        return scenario.product(args.product)
    except KeyError:
        names = ", ".join(p.name for p in scenario.products)
        raise BadInput([f"--product: no product {args.product!r}; products: {names}"]) from None


def target_from_args(scenario: Scenario, args: argparse.Namespace) -> AirTarget:
    """The air setting named by ``--oven`` or ``--tunnel``, ``--setting``, ``--zone``."""
    try:
        return air_target(
            scenario,
            oven=args.oven,
            tunnel=args.tunnel,
            setting=args.setting,
            zone=args.zone,
            transfer=args.transfer,
        )
    except TargetError as exc:
        raise BadInput([str(exc)]) from exc


def log_notes(log: ProbeLog) -> list[dict[str, Any]]:
    """The log's notes as plain records (JSON)."""
    return [
        {
            "kind": n.kind,
            "channel": n.channel,
            "line": n.line,
            "count": n.count,
            "message": n.message,
        }
        for n in log.notes
    ]
