"""Verifying a logged run against its rule: hand-computed F-values and cooling windows."""

from __future__ import annotations

import math

import numpy as np
import pytest

from optimizer.dwell.convert import chill_rule, cook_rule
from optimizer.probes.logs import read_log
from optimizer.probes.model import air_segments, probe_temperatures
from optimizer.probes.verify import verify_run
from optimizer.scenario.models import builtin_rules
from thermal.foods import ConstantProperties
from thermal.geometry import Slab
from thermal.rules import CookRule, LethalityRule


def _log(tmp_path, times_s, cores, air=None, name="run.csv"):
    cols = [f"core {i + 1}" for i in range(len(cores))]
    head = "time [s]," + ",".join(cols) + (",air" if air is not None else "")
    rows = []
    for j, t in enumerate(times_s):
        vals = [c[j] for c in cores] + ([air[j]] if air is not None else [])
        rows.append(f"{t:g}," + ",".join("" if np.isnan(v) else repr(float(v)) for v in vals))
    path = tmp_path / name
    path.write_text(head + "\n" + "\n".join(rows) + "\n")
    return read_log(path)


def test_f_value_of_a_ramp_and_hold_matches_the_closed_form(tmp_path):
    # 60 -> 70 °C in 10 min, then 70 °C for 5 min; T_ref 70 °C, z 10 K.
    # Hand computation: a linear ramp has an exponential lethal rate, so
    # F_ramp = 600 s x (1 - 0.1) / ln 10 = 234.52 s; the hold adds 300 s.
    t = np.arange(0.0, 901.0, 30.0)
    y = np.where(t <= 600.0, 60.0 + t / 60.0, 70.0)
    log = _log(tmp_path, t, [y])
    rule = CookRule(70.0, 0.0, LethalityRule("test organism", 60.0, 70.0, 10.0, 8.0))
    rec = verify_run(log, rule)
    (p,) = rec.probes
    f_hand = 600.0 * 0.9 / math.log(10.0) + 300.0
    assert p.f_value == pytest.approx(f_hand, rel=1e-9)
    assert p.log_reduction == pytest.approx(f_hand / 60.0, rel=1e-9)
    assert p.met and rec.met
    leth = p.verdict.clause("lethality")
    assert leth.margin == pytest.approx(f_hand / 60.0 - 8.0, rel=1e-9)
    # 8 log = 480 s of F: 234.52 s by the end of the ramp, the rest at 70 °C
    assert leth.met_at == pytest.approx(600.0 + (480.0 - 600.0 * 0.9 / math.log(10.0)), rel=1e-9)
    assert p.verdict.clause("core_target").met_at == pytest.approx(600.0)


def test_shipped_appendix_a_rule_against_the_published_time_at_temperature_rows(tmp_path):
    # Source: USDA FSIS Appendix A (1999), 6.5-log10 Salmonella table:
    # 54.4 °C (130 °F) for 112 min and 62.8 °C (145 °F) for 4 min.
    spec = builtin_rules()["fsis-appendix-a-salmonella-6.5log"]
    rule = cook_rule(spec, 5.0)
    for temp, minutes in ((54.4, 112.0), (62.8, 4.0)):
        t = np.array([0.0, 1.0, 1.0 + minutes * 60.0, 2.0 + minutes * 60.0])
        y = np.array([temp - 40.0, temp, temp, temp - 40.0])
        rec = verify_run(_log(tmp_path, t, [y], name=f"a{temp}.csv"), rule)
        # the table rows are printed to whole minutes: 6.5 log within 1 %
        assert rec.probes[0].log_reduction == pytest.approx(6.5, rel=0.01)
    t = np.array([0.0, 1.0, 1.0 + 3.5 * 60.0, 2.0 + 3.5 * 60.0])
    y = np.array([22.8, 62.8, 62.8, 22.8])
    rec = verify_run(_log(tmp_path, t, [y], name="short.csv"), rule)
    assert not rec.met
    assert rec.probes[0].verdict.binding == "lethality"
    assert rec.probes[0].verdict.margin == pytest.approx(6.5 * 3.5 / 4 - 6.5, abs=0.05)


def test_cooling_windows_of_a_logged_chill(tmp_path):
    # (times within 0.01 s: the rule checks count 1e-6 K inside a limit as met)
    # 60 °C at 0, 57 °C at 10 min, 21 °C at 100 min, 5 °C at 300 min, 4 °C at 320
    # min, linear between: by hand, the 57 -> 21 °C window is 90 min (limit 2 h,
    # 30 min to spare) and 57 -> 5 °C is 290 min (limit 6 h, 70 min to spare).
    knots_t = np.array([0.0, 10.0, 100.0, 300.0, 320.0]) * 60.0
    knots_y = np.array([60.0, 57.0, 21.0, 5.0, 4.0])
    t = np.arange(0.0, 320.0 * 60.0 + 1.0, 60.0)
    y = np.interp(t, knots_t, knots_y)
    rule = chill_rule(builtin_rules()["fda-food-code-2022-cooling"])
    rec = verify_run(_log(tmp_path, t, [y]), rule)
    p = rec.probes[0]
    assert rec.met and rec.stage == "chill"
    s1, s2 = p.verdict.clause("step 1"), p.verdict.clause("step 2")
    assert s1.margin == pytest.approx(30.0 * 60.0, abs=0.01)
    assert s2.margin == pytest.approx(70.0 * 60.0, abs=0.01)
    assert s1.met_at == pytest.approx(100.0 * 60.0, abs=0.01)
    # Appendix B: 54.4 -> 26.7 °C within 1.5 h; 26.7 -> 4.4 °C within 5 h.
    # Source of the limits: USDA FSIS Appendix B (1999). By hand on the same trace:
    # 54.4 °C at 10 + 2.6/36 x 90 = 16.5 min, 26.7 °C at 10 + 30.3/36 x 90 = 85.75
    # min: 69.25 min; 4.4 °C is never reached before 4 °C at 320 min: 26.7 -> 4.4
    # takes until 300 + 0.6/1 x 20 = 312 min, i.e. 226.25 min of the 300 allowed.
    rule_b = chill_rule(builtin_rules()["fsis-appendix-b-chill"])
    p = verify_run(_log(tmp_path, t, [y], name="b.csv"), rule_b).probes[0]
    assert p.verdict.clause("step 1").margin == pytest.approx((90.0 - 69.25) * 60.0, abs=0.01)
    assert p.verdict.clause("step 2").margin == pytest.approx((300.0 - 226.25) * 60.0, abs=0.01)


def test_the_worst_probe_governs(tmp_path):
    t = np.arange(0.0, 3601.0, 60.0)
    fast = np.minimum(10.0 + t / 30.0, 90.0)
    slow = np.minimum(10.0 + t / 50.0, 90.0)
    rule = CookRule(74.0, 60.0)
    rec = verify_run(_log(tmp_path, t, [fast, slow]), rule)
    assert rec.met and rec.governing == "core 2"
    short = np.minimum(10.0 + t / 50.0, 73.0)
    rec = verify_run(_log(tmp_path, t, [fast, slow, short], name="fail.csv"), rule)
    assert not rec.met and rec.governing == "core 3"
    rows = rec.rows()
    assert {r["probe"] for r in rows if r["governing"]} == {"core 3"}
    assert any(r["clause"] == "core_target" and r["met"] is False for r in rows)


def test_a_pulled_probe_is_checked_up_to_the_pull_and_missing_readings_counted(tmp_path):
    t = np.arange(0.0, 1801.0, 60.0)
    y = 10.0 + t / 20.0
    y[5] = np.nan
    air = np.full(t.size, 180.0)
    y[20:] = 179.5  # pulled out into the oven air
    rec = verify_run(_log(tmp_path, t, [y], air), CookRule(74.0))
    p = rec.probes[0]
    assert p.pulled_at == pytest.approx(1200.0)
    assert p.missing == 1
    assert p.peak < 74.0 and not p.met
    assert any("pulled" in n for n in rec.notes)


def test_model_trace_beside_the_measured_one(tmp_path):
    slab, props = Slab(0.04), ConstantProperties(0.45, 1050.0, 3500.0)
    t = np.arange(0.0, 3601.0, 60.0)
    air = np.full(t.size, 170.0)
    (y,) = probe_temperatures(
        slab, props, air_segments(t, air), t, np.array([30.0]), start_core=np.array([5.0])
    )
    log = _log(tmp_path, t, [np.round(y, 1)], air)
    rec = verify_run(log, CookRule(72.0, 0.0), geometry=slab, properties=props, h=30.0)
    p = rec.probes[0]
    assert p.difference is not None and p.difference <= 0.06
    assert p.predicted_verdict is not None and p.predicted_verdict.met
    assert p.predicted_verdict.clause("core_target").met_at == pytest.approx(
        p.verdict.clause("core_target").met_at, abs=60.0
    )
    assert rec.h == 30.0
    assert "HACCP" in rec.caution


def test_a_missed_cooling_window_is_missed_when_its_time_runs_out(tmp_path):
    # 57 °C at 10 min, 21 °C only at 150 min: the 2 h window opened at 10 min
    # closes unmet at 130 min (by hand); the 6 h window is met (5 °C at
    # 150 + 16/17 x 150 = 291 min).
    t = np.arange(0.0, 320.0 * 60.0 + 1.0, 60.0)
    y = np.interp(t, np.array([0.0, 10.0, 150.0, 300.0]) * 60.0, [60.0, 57.0, 21.0, 4.0])
    rule = chill_rule(builtin_rules()["fda-food-code-2022-cooling"])
    rec = verify_run(_log(tmp_path, t, [y]), rule)
    p = rec.probes[0]
    assert not p.met and p.verdict.binding == "step 1"
    assert dict(p.missed_at) == pytest.approx({"step 1": 130.0 * 60.0}, abs=0.01)
    (row,) = [r for r in rec.rows() if r["clause"] == "step 1"]
    assert row["missed_at_min"] == pytest.approx(130.0, abs=1e-3)
    assert row["margin"] == pytest.approx(-20.0 * 60.0, abs=0.1)
