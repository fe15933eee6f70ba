"""``corepace plan SCENARIO``: the shift plan, its tables and its report."""

from __future__ import annotations

import argparse

from optimizer.cli.common import (
    EXIT_OK,
    dwell_table,
    load,
    out_dir,
    say_written,
    solve_options,
    status_code,
)
from optimizer.cli.options import (
    Formatter,
    add_cache_options,
    add_common,
    add_scenario_options,
    add_solve_options,
)
from optimizer.cli.terminal import Ui, rich_table, say_assumptions
from optimizer.planning.highs import quiet_solver_banner
from optimizer.planning.results import SolveStatus, totals_table
from optimizer.planning.run import PlanRun, solve_run
from optimizer.scenario.models import Scenario

__all__ = ["add_parser", "cmd_plan", "run_plan"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace plan`` to the command's subparsers."""
    p = subparsers.add_parser(
        "plan",
        help="the shift plan: batches, settings, belt speeds and loading for the most output",
        description="Plan the shifts for the scenario's objective; print a summary and write "
        "the plan tables (CSV, plan.xlsx), plan.json, dwell.csv and report.html.\n"
        "Exit 1 when no plan meets the orders: the shortfall diagnosis is printed.",
        epilog="examples:\n  corepace plan configs/demo.yaml\n"
        "  corepace plan configs/demo.yaml --out reports/demo --time-limit 30\n"
        "  corepace plan configs/demo.yaml --set tunnels.chill-tunnel.length='30 m' --json\n",
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file")
    add_scenario_options(p)
    add_solve_options(p)
    add_common(p)
    add_cache_options(p)
    p.set_defaults(func=cmd_plan)
    return p


def run_plan(path: str, scenario: Scenario, args: argparse.Namespace, ui: Ui) -> PlanRun:
    """Dwell table (with a progress bar), planner inputs and the solve for one scenario."""
    dwell = dwell_table(scenario, args, ui)
    options = solve_options(args)
    quiet_solver_banner()
    with ui.status(f"solving the plan ({path})"):
        return solve_run(path, scenario, dwell, options)


def cmd_plan(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace plan SCENARIO``: the shift plan, its tables and its report."""
    # the report brings matplotlib (about 0.6 s): imported only by the commands that draw
    from optimizer.reporting.outset import output_set
    from optimizer.reporting.plan import plan_json, write_plan_outputs

    scenario = load(args.scenario, args)
    target = out_dir(args, args.scenario)
    # --out checked and locked before the work, written as one set, swapped in at the end
    with output_set(target) as staging:
        run = run_plan(args.scenario, scenario, args, ui)
        with ui.status("writing the report"):
            staged = write_plan_outputs(run, staging, args.argv_text, named_as=target)
    written = [target / p.name for p in staged]
    ui.emit_json(plan_json(run, written))
    plan_summary(run, ui)
    say_written(ui, written)
    code = status_code(run.result)
    r = run.result
    if code == EXIT_OK:
        ui.result(
            f"{r.status.value}: {r.total_kg:,.0f} kg over {len(r.shifts)} shift(s) → {target}"
        )
    else:
        for s in r.shortfalls:
            if not ui.human or ui.quiet:
                ui.problem(f"shortfall: {s.message}")
        if r.status is SolveStatus.NO_SOLUTION_IN_TIME:
            ui.result(
                f"no plan yet: the time limit ran out before any plan was found; "
                f"raise --time-limit (report in {target / 'report.html'})"
            )
        else:
            ui.result(f"no feasible plan; diagnosis in {target / 'report.html'}")
    return code


def plan_summary(run: PlanRun, ui: Ui) -> None:
    """Print the plan's summary and its tables readably."""
    r = run.result
    ui.say(run.summary())
    say_assumptions(ui, run.tables.get("assumptions"))
    if r.status.has_plan:
        wide = totals_table(r, run.inputs).reset_index()
        ui.say(rich_table(wide, title="kg per product and shift"))
        ui.say(rich_table(run.tables["ovens"], title="Oven batches"))
        ui.say(rich_table(run.tables["tunnels"], title="Tunnel runs"))
