"""``corepace calibrate SCENARIO LOG``: fit h to a trial run and write it as a scenario overlay."""

from __future__ import annotations

import argparse
import math
from pathlib import Path

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
from optimizer.dwell.convert import thermal_product
from optimizer.probes.calibrate import Calibration, CalibrationError, calibrate
from optimizer.probes.overlay import overlay_text, provenance
from optimizer.reporting import export
from optimizer.scenario.provenance import made_at, tool_version

__all__ = ["add_parser", "cmd_calibrate"]

EPILOG = """\
examples:
  corepace calibrate configs/demo.yaml configs/logs/trial-chicken-roast-180.csv \\
      --product chicken-fillet --oven rack-oven-1 --setting roast-180 --out reports/cal
  corepace calibrate plant.yaml trial.csv --product ham-log --oven smoke-1 --fit-offset
  corepace calibrate plant.yaml chill.csv --product ham-log --tunnel t1 --setting fast \\
      --zone 1 --core T1 --core T2 --air T5 --window 0,45

writes <scenario>-calibrated.yaml (extends the scenario, sets measured_h and
measured_h_source), calibration.html, calibration.json, calibration.csv and
calibration_curves.csv; `corepace plan <scenario>-calibrated.yaml` then uses the
fitted h. Calibrate with the largest pieces: every product in the air setting
takes the fitted h.
"""


def _count(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number >= 0, got {text!r}") from None
    if n < 0 or n > 10000:
        raise argparse.ArgumentTypeError(f"must be a whole number 0..10000, got {text!r}")
    return n


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace calibrate`` to the command's subparsers."""
    p = subparsers.add_parser(
        "calibrate",
        help="fit h to a trial run's probe log; write it as a scenario overlay",
        description="Fit the surface heat-transfer coefficient h (radiation included) of an air "
        "setting to a logged trial run by least squares on the core probes, with 95 % "
        "intervals (Jacobian, and a bootstrap over probes), and write it as a scenario "
        "overlay with its provenance. Optionally also fit a conductivity factor and the "
        "probes' offset from the centre. For a tunnel setting with several zones, fit each "
        "zone's part of the log (--window) to its --zone.",
        epilog=EPILOG,
        formatter_class=Formatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="the plant's scenario file")
    p.add_argument("log", metavar="LOG", help="the logger file (CSV)")
    add_target_options(p)
    add_log_options(p)
    g = p.add_argument_group("fit")
    g.add_argument(
        "--fit-conductivity", action="store_true", help="also fit a factor on the conductivity"
    )
    g.add_argument(
        "--fit-offset",
        action="store_true",
        help="also fit the probes' offset from the centre (share of the half-thickness)",
    )
    g.add_argument(
        "--h-bounds",
        type=minutes_pair,
        metavar="LOW,HIGH",
        default=(1.0, 1000.0),
        help="[W/(m² K)]",
    )
    g.add_argument(
        "--window",
        type=minutes_pair,
        metavar="START,END",
        help="fit only this part of the log [min from its first reading]",
    )
    g.add_argument(
        "--bootstrap", type=_count, default=200, metavar="N", help="resamples of the probes"
    )
    g.add_argument("--seed", type=_count, default=0, help="seed of the resampling")
    add_scenario_options(p)
    add_common(p)
    p.set_defaults(func=cmd_calibrate)
    return p


def _curves(fit: Calibration) -> pd.DataFrame:
    rows = []
    for p in fit.probes:
        for t, m, f, u in zip(p.times, p.measured, p.fitted, p.used, strict=True):
            rows.append(
                {
                    "probe": p.channel,
                    "time_min": (t + fit.window[0]) / 60.0,
                    "measured_C": m if math.isfinite(m) else None,
                    "fitted_C": f,
                    "used": bool(u),
                }
            )
    return pd.DataFrame(rows)


def cmd_calibrate(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace calibrate SCENARIO LOG``."""
    from optimizer.reporting.probe_pages import PageInfo, calibration_report, calibration_table

    scenario = load(args.scenario, args)
    product = product_from_args(scenario, args)
    target = target_from_args(scenario, args)
    log = log_from_args(args)
    piece = thermal_product(product)
    window = None if args.window is None else (args.window[0] * 60.0, args.window[1] * 60.0)
    if args.h_bounds[0] <= 0:
        raise BadInput([f"--h-bounds: LOW must be > 0 W/(m² K), got {args.h_bounds[0]:g}"])
    no_air = log.air is None
    try:
        with ui.status("fitting h"):
            fit = calibrate(
                log,
                piece.geometry,
                piece.properties,
                fit_conductivity=args.fit_conductivity,
                fit_offset=args.fit_offset,
                h_bounds=args.h_bounds,
                window=window,
                air_temperature=target.spec.air_temperature if no_air else None,
                bootstrap=args.bootstrap,
                seed=args.seed,
            )
    except CalibrationError as exc:
        raise BadInput([str(exc)]) from exc
    target_dir = out_dir(args, args.scenario)
    stem = Path(args.scenario).stem
    overlay_path = target_dir / f"{stem}-calibrated.yaml"
    made = made_at()
    notes = [n.message for n in log.notes]
    if no_air:
        notes.append(
            f"the log has no air channel: the setting's {target.spec.air_temperature:g} °C was used"
        )
    info = PageInfo(args.scenario, product.name, target.label, tool_version(), made, args.argv_text)
    summary = {
        "scenario": args.scenario,
        "log": args.log,
        "log_sha256": fit.log_sha256,
        "run_started": fit.started,
        "product": product.name,
        "air_setting": target.path,
        "estimates": [
            {
                "name": e.name,
                "unit": e.unit,
                "value": e.value,
                "low_95": e.low,
                "high_95": e.high,
                "bootstrap_low_95": e.boot_low,
                "bootstrap_high_95": e.boot_high,
                "at_bound": e.at_bound,
            }
            for e in fit.estimates
        ],
        "biot": fit.biot,
        "rms_K": fit.rms,
        "readings": fit.n_points,
        "probes": [{"probe": p.channel, "rms_K": p.rms} for p in fit.probes],
        "warnings": list(fit.warnings),
        "log_notes": log_notes(log),
        "measured_h_source": provenance(fit, product=product.name, made=made),
        "overlay": str(overlay_path),
    }
    prepare_out(target_dir)
    protect = [args.scenario, args.log]
    with ui.status("writing the calibration"):
        written = [
            export.atomic_write_text(
                overlay_path,
                overlay_text(
                    args.scenario, overlay_path, target, fit, product=product.name, made=made
                ),
                protect=protect,
            ),
            export.atomic_write_text(
                target_dir / "calibration.html",
                calibration_report(fit, info, overlay_path.name, notes),
                protect=protect,
            ),
            export.write_json(target_dir / "calibration.json", summary, protect=protect),
            export.write_csv(
                target_dir / "calibration.csv", calibration_table(fit), protect=protect
            ),
            export.write_csv(target_dir / "calibration_curves.csv", _curves(fit), protect=protect),
        ]
    ui.emit_json({**summary, "files": [str(p) for p in written]})
    h = fit.h
    ui.say(f"{product.name} in {target.label}: {len(fit.probes)} probe(s), {fit.n_points} readings")
    for e in fit.estimates:
        boot = (
            f"; bootstrap {e.boot_low:.4g} to {e.boot_high:.4g}" if e.boot_low is not None else ""
        )
        ui.say(f"  {e.name} = {e.value:.4g} {e.unit} (95 %: {e.low:.4g} to {e.high:.4g}{boot})")
    ui.say(f"  rms residual {fit.rms:.3f} K, Bi {fit.biot:.2f}")
    for w in fit.warnings:
        ui.say(f"  warning: {w}")
    for n in notes:
        ui.say(f"  log: {n}")
    say_written(ui, written)
    ui.result(f"h = {h.value:.4g} W/(m² K) (95 %: {h.low:.4g} to {h.high:.4g}) → {overlay_path}")
    return EXIT_OK
