"""What a calibration and a verification write: the scenario overlay and the pages."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import yaml

from optimizer.dwell.checks import load_checked_scenario
from optimizer.probes.calibrate import calibrate
from optimizer.probes.logs import read_log
from optimizer.probes.model import air_segments, probe_temperatures
from optimizer.probes.overlay import TargetError, air_target, overlay_text
from optimizer.probes.verify import verify_run
from optimizer.reporting.probe_pages import PageInfo, calibration_report, run_record_report
from thermal.foods import ConstantProperties
from thermal.geometry import Slab
from thermal.rules import CookRule

DEMO = Path(__file__).resolve().parents[1] / "configs" / "demo.yaml"
SLAB, PROPS = Slab(0.03), ConstantProperties(0.45, 1050.0, 3500.0)
GRID = {"n_cells": 8, "steps": 30}


@pytest.fixture(scope="module")
def trial(tmp_path_factory):
    """A small synthetic trial run (two probes) and its fit."""
    tmp = tmp_path_factory.mktemp("trial")
    t = np.arange(0.0, 1501.0, 30.0)
    air = np.full(t.size, 180.0)
    y = probe_temperatures(
        SLAB, PROPS, air_segments(t, air), t, np.full(2, 35.0), start_core=[4.0, 5.0], **GRID
    )
    rng = np.random.default_rng(1)
    y = np.round(y + rng.normal(0, 0.1, y.shape), 1)
    path = tmp / "trial.csv"
    rows = [
        f"{tt:g},{a:.1f},{b:.1f},{c:.1f}" for tt, a, b, c in zip(t, y[0], y[1], air, strict=True)
    ]
    path.write_text("time [s],core 1,core 2,air\n" + "\n".join(rows) + "\n")
    log = read_log(path)
    return log, calibrate(log, SLAB, PROPS, **GRID)


def test_overlay_extends_the_scenario_and_sets_the_fitted_h_with_its_source(tmp_path, trial):
    log, fit = trial
    scenario = load_checked_scenario(DEMO)
    target = air_target(scenario, oven="rack-oven-1", setting="roast-180")
    out = tmp_path / "out" / "demo-calibrated.yaml"
    out.parent.mkdir()
    text = overlay_text(DEMO, out, target, fit, product="chicken-fillet", made="2026-12-03")
    out.write_text(text)
    doc = yaml.safe_load(text)
    assert (out.parent / doc["extends"]).resolve() == DEMO.resolve()
    assert text.startswith("# h calibrated from a probe log")
    calibrated = load_checked_scenario(out)
    setting = next(s for s in calibrated.oven("rack-oven-1").settings if s.name == "roast-180")
    assert setting.air_speed is None
    assert setting.measured_h == pytest.approx(fit.h.value, rel=1e-3)
    assert log.sha256 in setting.measured_h_source
    assert f"{fit.h.low:.4g} to {fit.h.high:.4g}" in setting.measured_h_source
    # every other setting is the base scenario's
    other = next(s for s in calibrated.oven("rack-oven-1").settings if s.name == "cook-150")
    assert other.air_speed == 3.0 and other.measured_h is None


def test_air_targets_of_tunnels_and_bad_names():
    scenario = load_checked_scenario(DEMO)
    z = air_target(scenario, tunnel="chill-tunnel", setting="chill-0", zone="2")
    assert z.path == "tunnels.chill-tunnel.settings.chill-0.zones.1"
    assert z.spec.air_temperature == -2.0
    tr = air_target(scenario, tunnel="chill-tunnel", transfer=True)
    assert tr.path == "tunnels.chill-tunnel.transfer"
    with pytest.raises(TargetError, match="--zone: setting 'chill-0' has 2 zones"):
        air_target(scenario, tunnel="chill-tunnel", setting="chill-0")
    with pytest.raises(TargetError, match="--oven: no oven 'oven-9'; ovens: rack-oven-1"):
        air_target(scenario, oven="oven-9")
    with pytest.raises(TargetError, match="--setting: oven 'rack-oven-1' has no setting 'x'"):
        air_target(scenario, oven="rack-oven-1", setting="x")
    with pytest.raises(TargetError, match="exactly one"):
        air_target(scenario)


def test_measured_h_source_needs_measured_h(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text(
        f"extends: {DEMO}\nchanges:\n"
        "  - set: ovens.rack-oven-1.settings.roast-180.measured_h_source\n"
        "    value: a probe log\n"
    )
    with pytest.raises(ValueError, match="measured_h_source: is only accepted with measured_h"):
        load_checked_scenario(bad)


def test_pages_carry_the_result_the_cautions_and_the_log_hash(trial):
    log, fit = trial
    info = PageInfo("configs/demo.yaml", "chicken-fillet", "rack-oven-1 / roast-180", "0", "now")
    page = calibration_report(fit, info, "demo-calibrated.yaml")
    assert f"{fit.h.value:.2f} W/(m² K)" in page
    assert log.sha256 in page
    assert 'data-table="calibration"' in page and 'data-figure="calibration"' in page
    assert "food-safety plan" in page
    record = verify_run(log, CookRule(70.0), geometry=SLAB, properties=PROPS, h=fit.h.value)
    page = run_record_report(record, info)
    assert "HACCP" in page and "does not replace" in page
    assert 'data-table="record"' in page and 'data-figure="record"' in page
    assert ("PASS" if record.met else "FAIL") in page
