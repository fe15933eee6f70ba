"""``corepace verify SCENARIO LOG``: check a logged run against the product's rule, per probe."""

from __future__ import annotations

import argparse
import math

import pandas as pd

from optimizer.cli.common import EXIT_OK, BadInput, load, out_dir, prepare_out, say_written
from optimizer.cli.options import Formatter, add_common, add_scenario_options
from optimizer.cli.probe_options import (
    add_log_options,
    add_target_options,
    log_from_args,
    log_notes,
    minutes_pair,
    product_from_args,
    target_from_args,
)
from optimizer.cli.terminal import Ui
from optimizer.dwell.convert import air_setting, chill_rule, cook_rule, thermal_product
from optimizer.dwell.errors import ThermalInputError
from optimizer.probes.verify import RunRecord, VerifyError, verify_run
from optimizer.reporting import export
from optimizer.scenario.provenance import made_at, tool_version

__all__ = ["EXIT_RULE_MISSED", "add_parser", "cmd_verify"]

EXIT_RULE_MISSED = 1
"""Exit code when a probe misses the rule (the record is written)."""

EPILOG = """\
examples:
  corepace verify configs/demo.yaml configs/logs/run-chicken-roast-180.csv \\
      --product chicken-fillet --stage cook --oven rack-oven-1 --setting roast-180 \\
      --out reports/record
  corepace verify plant.yaml chill.csv --product ham-log --stage chill --tunnel t1 \\
      --setting fast --zone 1 --core T1 --core T2 --air T5

writes record.html (prints on one or two pages), record.json and record.csv.
exit 0 when every probe meets the rule, 1 when one misses it (the record is
written), 2 on a bad file or option. The record supports, and does not replace,
the plant's HACCP verification.
"""


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace verify`` to the command's subparsers."""
    p = subparsers.add_parser(
        "verify",
        help="check a logged run against the product's rule, probe by probe",
        description="Check every core probe of a logged run against the product's cook rule "
        "(target and hold, lethality, time-temperature table) or its chill or freeze rule "
        "(cooling windows, exit limit): pass or fail with the margin and the moment each "
        "limit was met; the worst probe governs. The model's trace for the same run (the "
        "scenario's h for the air setting, the logged air) is put beside each probe.",
        epilog=EPILOG,
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="the plant's scenario file")
    p.add_argument("log", metavar="LOG", help="the logger file (CSV)")
    p.add_argument(
        "--stage",
        required=True,
        choices=("cook", "chill"),
        help="check the product's cook rule, or its chill (or freeze) rule",
    )
    p.add_argument(
        "--window",
        type=minutes_pair,
        metavar="START,END",
        help="check only this part of the log [min from its first reading], e.g. the chill "
        "after the oven",
    )
    add_target_options(p)
    add_log_options(p)
    add_scenario_options(p)
    add_common(p)
    p.set_defaults(func=cmd_verify)
    return p


def _h_of(product, target) -> tuple[float, str]:
    """h of the air setting for the model trace [W/(m² K)] and where it comes from."""
    spec = target.spec
    if spec.measured_h is not None:
        return float(spec.measured_h), spec.measured_h_source or "measured_h of the scenario"
    conv = thermal_product(product).surface_coefficient(air_setting(spec))
    return float(conv.h), f"correlation ({conv.correlation}) at the setting's air speed"


def _summary(record: RunRecord) -> dict:
    return {
        "stage": record.stage,
        "rule": record.rule,
        "met": record.met,
        "governing_probe": record.governing,
        "log": record.log_path,
        "log_sha256": record.log_sha256,
        "run_started": record.started,
        "model_h": record.h,
        "model_h_source": record.h_source,
        "probes": [
            {
                "probe": p.channel,
                "met": p.met,
                "binding": p.verdict.binding,
                "margin": p.verdict.margin if math.isfinite(p.verdict.margin) else None,
                "unit": p.verdict.unit,
                "reason": p.verdict.reason,
                "finished_min": p.finished_at / 60 if math.isfinite(p.finished_at) else None,
                "f_value_s": p.f_value,
                "log_reduction": p.log_reduction,
                "missing_readings": p.missing,
                "pulled_at_min": None if p.pulled_at is None else p.pulled_at / 60,
                "model_met": None if p.predicted_verdict is None else p.predicted_verdict.met,
                "max_difference_K": p.difference,
            }
            for p in record.probes
        ],
        "caution": record.caution,
    }


def cmd_verify(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace verify SCENARIO LOG``."""
    from optimizer.reporting.probe_pages import PageInfo, run_record_report

    scenario = load(args.scenario, args)
    product = product_from_args(scenario, args)
    target = target_from_args(scenario, args)
    log = log_from_args(args)
    if args.window is not None:
        try:
            log = log.part(args.window[0] * 60.0, args.window[1] * 60.0)
        except ValueError as exc:
            raise BadInput([f"--{exc}"]) from exc
    start = float(next(v for v in log.cores[0].values if math.isfinite(v)))
    if args.stage == "cook":
        rule = cook_rule(scenario.cook_rule(product), start)
    else:
        rule = chill_rule(scenario.chill_rule(product))
    piece = thermal_product(product)
    try:
        h, source = _h_of(product, target)
    except ThermalInputError as exc:
        raise BadInput([f"{target.path}: {exc}"]) from exc
    if log.air is None:
        source += (
            f"; the log has no air channel: the model holds the setting's "
            f"{target.spec.air_temperature:g} °C"
        )
    try:
        record = verify_run(
            log,
            rule,
            geometry=piece.geometry,
            properties=piece.properties,
            h=h,
            h_source=source,
            air_temperature=target.spec.air_temperature,
        )
    except VerifyError as exc:
        raise BadInput([str(exc)]) from exc
    info = PageInfo(
        args.scenario, product.name, target.label, tool_version(), made_at(), args.argv_text
    )
    summary = {
        **_summary(record),
        "scenario": args.scenario,
        "product": product.name,
        "air_setting": target.path,
        "log_notes": log_notes(log),
    }
    target_dir = out_dir(args, args.scenario)
    prepare_out(target_dir)
    protect = [args.scenario, args.log]
    written = [
        export.atomic_write_text(
            target_dir / "record.html", run_record_report(record, info), protect=protect
        ),
        export.write_json(target_dir / "record.json", summary, protect=protect),
        export.write_csv(target_dir / "record.csv", pd.DataFrame(record.rows()), protect=protect),
    ]
    ui.emit_json({**summary, "files": [str(p) for p in written]})
    ui.say(f"{product.name}, {record.stage} rule: {record.rule}")
    for p in record.probes:
        mark = "pass" if p.met else "FAIL"
        ui.say(f"  {p.channel}: {mark}: {p.verdict.reason}")
    for n in log.notes:
        ui.say(f"  log: {n.message}")
    say_written(ui, written)
    verdict = "PASS" if record.met else "FAIL"
    ui.result(f"{verdict}: worst probe {record.governing} → {target_dir / 'record.html'}")
    return EXIT_OK if record.met else EXIT_RULE_MISSED
