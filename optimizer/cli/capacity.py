"""``corepace capacity SCENARIO``: most kg per hour and per week for a fixed product mix."""

from __future__ import annotations

import argparse
from collections.abc import Sequence

from optimizer.cli.common import (
    EXIT_NO_PLAN,
    EXIT_OK,
    BadInput,
    dwell_table,
    load,
    out_dir,
    prepare_out,
    say_written,
    solve_options,
)
from optimizer.cli.options import (
    Formatter,
    add_cache_options,
    add_common,
    add_scenario_options,
    add_solve_options,
)
from optimizer.cli.terminal import Ui, rich_table
from optimizer.planning.adapter import plan_inputs
from optimizer.planning.capacity import (
    capacity_tables,
    default_mix,
    full_machines,
    max_mix_capacity,
)
from optimizer.planning.highs import quiet_solver_banner
from optimizer.reporting import export

__all__ = ["add_parser", "cmd_capacity", "parse_mix"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace capacity`` to the command's subparsers."""
    p = subparsers.add_parser(
        "capacity",
        help="most kg per hour and per week for a fixed product mix, and what limits it",
        description="With the product proportions fixed, find the most kg the plant makes over "
        "the scenario's shifts, per hour and per week, and what runs out first. Writes\n"
        "capacity.html, capacity.json, the tables as CSV and capacity.xlsx.",
        epilog="examples:\n  corepace capacity configs/demo.yaml\n"
        "  corepace capacity configs/demo.yaml --mix pork-sausage=2,ham-log=1\n"
        "  corepace capacity configs/demo.yaml --shifts-per-week 10 --json\n",
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    p.add_argument(
        "--mix",
        action="append",
        metavar="PRODUCT=SHARE,...",
        help="product proportions (any positive numbers, normalised); default: the orders' "
        "minimums, else their maximums, else equal shares",
    )
    p.add_argument(
        "--shifts-per-week",
        type=float,
        metavar="N",
        help="shifts a week for kg per week (default 15: three shifts, five days)",
    )
    add_scenario_options(p)
    add_solve_options(p)
    add_common(p)
    add_cache_options(p)
    p.set_defaults(func=cmd_capacity)
    return p


def parse_mix(texts: Sequence[str], known: Sequence[str]) -> dict[str, float]:
    """Read ``--mix`` values (``NAME=SHARE``, comma separated or repeated) into shares.

    Parameters
    ----------
    texts : sequence of str
        Option values, e.g. ``["pork-sausage=2,ham-log=1"]``.
    known : sequence of str
        Product names of the scenario.

    Returns
    -------
    dict of str to float
        Product → share, the shares summing to 1.

    Raises
    ------
    BadInput
        Listing every malformed item, unknown product and bad share.
    """
    raw: dict[str, float] = {}
    problems = []
    for text in texts:
        for item in text.split(","):
            item = item.strip()
            if not item:
                continue
            name, sep, share = item.rpartition("=")
            name = name.strip()
            if not sep or not name:
                problems.append(f"--mix: expected PRODUCT=SHARE such as ham-log=2, got {item!r}")
                continue
            if name not in known:
                problems.append(
                    f"--mix: {name!r} is not a product; known: {', '.join(sorted(known))}"
                )
                continue
            try:
                value = float(share)
            except ValueError:
                problems.append(f"--mix {name}: share must be a number >= 0, got {share!r}")
                continue
            if not value >= 0 or value == float("inf"):
                problems.append(f"--mix {name}: share must be a finite number >= 0, got {share!r}")
                continue
            raw[name] = raw.get(name, 0.0) + value
    if not problems and raw and sum(raw.values()) <= 0:
        problems.append("--mix: at least one share must be > 0")
    if problems:
        raise BadInput(problems)
    total = sum(raw.values())
    return {k: v / total for k, v in raw.items() if v > 0}


def cmd_capacity(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace capacity SCENARIO``: most kg per hour and week for a fixed mix."""
    # the report brings matplotlib (about 0.6 s): imported only by the commands that draw
    from optimizer.reporting.capacity import capacity_json, capacity_report

    scenario = load(args.scenario, args)
    names = [p.name for p in scenario.products]
    shares = parse_mix(args.mix, names) if args.mix else None
    if args.shifts_per_week is not None and not args.shifts_per_week > 0:
        raise BadInput([f"--shifts-per-week: must be > 0, got {args.shifts_per_week:g}"])
    target = out_dir(args, args.scenario)
    dwell = dwell_table(scenario, args, ui)
    inputs = plan_inputs(scenario, dwell)
    source = "--mix"
    if shares is None:
        shares, source = default_mix(inputs)
    per_week = args.shifts_per_week if args.shifts_per_week is not None else 15.0
    quiet_solver_banner()
    with ui.status("searching the most kg with the mix fixed"):
        cap = max_mix_capacity(
            inputs, shares, solve_options(args), shifts_per_week=per_week, mix_source=source
        )
    tables = capacity_tables(cap)
    prepare_out(target)
    protect = [args.scenario]
    written = export.write_tables(target, tables, workbook="capacity.xlsx", protect=protect)
    html_text = capacity_report(args.scenario, scenario, cap, tables, args.argv_text)
    written.append(export.atomic_write_text(target / "capacity.html", html_text, protect=protect))
    data = capacity_json(args.scenario, cap, tables, written)
    written.append(export.write_json(target / "capacity.json", data, protect=protect))
    data["files"] = [str(p) for p in written]
    ui.emit_json(data)
    ui.say(rich_table(tables["capacity_mix"], title=f"Mix ({source})"))
    for line in full_machines(cap.plan):
        ui.say(f"At capacity: {line}")
    if cap.limit is not None:
        ui.say("Just above this total the plan runs out of:")
        for s in cap.limit.shortfalls:
            ui.say(f"  - {s.message}")
    say_written(ui, written)
    if cap.total_kg <= 0:
        for p, reasons in cap.plan.excluded.items():
            ui.problem(f"{p} cannot be made on this plant: {'; '.join(reasons)}")
        ui.result("no feasible plan with this mix: capacity 0 kg")
        return EXIT_NO_PLAN
    ui.result(
        f"capacity with this mix: {cap.kg_per_hour:,.0f} kg/h, {cap.kg_per_week:,.0f} kg/week "
        f"({cap.total_kg:,.0f} kg over {len(inputs.shifts)} shift(s), "
        f"{per_week:g} shifts/week) → {target}"
    )
    return EXIT_OK
