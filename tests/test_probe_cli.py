"""``corepace calibrate`` and ``corepace verify`` on the invented demo logs, and on bad input."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from optimizer.cli.app import main
from optimizer.cli.common import EXIT_BAD_INPUT, EXIT_OK
from optimizer.dwell.checks import load_checked_scenario
from optimizer.dwell.describe import methods_used

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.yaml"
TRIAL = ROOT / "configs" / "logs" / "trial-chicken-roast-180.csv"
RUN = ROOT / "configs" / "logs" / "run-chicken-roast-180.csv"
OVEN = ["--product", "chicken-fillet", "--oven", "rack-oven-1", "--setting", "roast-180"]


def run(capsys, *argv: object) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_calibrate_writes_an_overlay_that_plan_reads_with_its_source(tmp_path, capsys):
    out = tmp_path / "cal"
    # the first 8 minutes and no bootstrap keep the test short
    code, text, err = run(
        capsys, "calibrate", DEMO, TRIAL, *OVEN, "--window", "0,8", "--bootstrap", "0",
        "--out", out, "--json",
    )  # fmt: skip
    assert code == EXIT_OK, err
    summary = json.loads(text)
    h = summary["estimates"][0]
    assert h["name"] == "h" and h["low_95"] < h["value"] < h["high_95"]
    # the demo log was made with an invented h of 32.3 W/(m² K) (configs/logs/make_demo_logs.py)
    assert 29.0 < h["value"] < 36.0
    files = {Path(f).name for f in summary["files"]}
    assert files == {
        "demo-calibrated.yaml",
        "calibration.html",
        "calibration.json",
        "calibration.csv",
        "calibration_curves.csv",
    }
    overlay = load_checked_scenario(out / "demo-calibrated.yaml")
    setting = next(s for s in overlay.oven("rack-oven-1").settings if s.name == "roast-180")
    assert setting.measured_h == pytest.approx(h["value"], rel=1e-3)
    methods = dict(methods_used(pd.DataFrame(), overlay))
    (label,) = [m for m in methods if m.startswith("Surface coefficient measured at the plant: ")]
    assert "rack-oven-1 / roast-180" in label
    assert summary["log_sha256"] in methods[label]
    curves = pd.read_csv(out / "calibration_curves.csv")
    assert set(curves["probe"]) == {"Core 1", "Core 2", "Core 3"}
    assert curves["time_min"].max() == pytest.approx(8.0)


def test_verify_writes_the_record_and_exits_1_when_a_probe_misses(tmp_path, capsys):
    out = tmp_path / "rec"
    code, text, err = run(capsys, "verify", DEMO, RUN, *OVEN, "--stage", "cook", "--out", out)
    assert code == EXIT_OK, err
    assert "PASS" in text
    record = json.loads((out / "record.json").read_text())
    assert record["met"] and {p["probe"] for p in record["probes"]} == {
        "core A",
        "core B",
        "core C",
    }
    pulled = next(p for p in record["probes"] if p["probe"] == "core C")
    assert pulled["pulled_at_min"] == pytest.approx(28.5)
    assert "HACCP" in (out / "record.html").read_text()
    # the first 20 min of the same run only: the core is still below 74 °C
    code, text, err = run(
        capsys, "verify", DEMO, RUN, *OVEN, "--stage", "cook", "--window", "0,20",
        "--out", tmp_path / "r2",
    )  # fmt: skip
    assert code == 1
    assert "FAIL" in text
    rows = pd.read_csv(tmp_path / "r2" / "record.csv")
    assert not rows["met"].any()
    code, _text, err = run(
        capsys, "verify", DEMO, RUN, *OVEN, "--stage", "cook", "--window", "40,50",
        "--out", tmp_path / "r3",
    )  # fmt: skip
    assert code == EXIT_BAD_INPUT
    assert err.strip() == "--window: holds 0 readings (40 to 50 min); needs at least 3"
    assert not (tmp_path / "r3").exists()


@pytest.mark.parametrize("command", ["calibrate", "verify"])
def test_bad_log_exits_2_with_one_line_and_writes_nothing(tmp_path, capsys, command):
    bad = tmp_path / "bad.csv"
    bad.write_text("time [min],core,air\n0,4.0,180\n0.5,4;2,180\n1,4.5,180\n")
    out = tmp_path / "out"
    stage = ["--stage", "cook"] if command == "verify" else []
    code, _text, err = run(capsys, command, DEMO, bad, *OVEN, *stage, "--out", out)
    assert code == EXIT_BAD_INPUT
    lines = err.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith(f"{bad}:3: column 'core':")
    assert "Traceback" not in err
    assert not out.exists()


@pytest.mark.parametrize(
    ("options", "words"),
    [
        (["--product", "tofu", "--oven", "rack-oven-1"], "--product: no product 'tofu'"),
        (["--product", "chicken-fillet", "--oven", "oven-9"], "--oven: no oven 'oven-9'"),
        (["--product", "chicken-fillet"], "--oven/--tunnel"),
        (
            ["--product", "chicken-fillet", "--oven", "rack-oven-1"],
            "--setting: oven 'rack-oven-1' has 2 settings; name one: roast-180, cook-150",
        ),
        ([*OVEN, "--h-bounds", "5"], "--h-bounds"),
        ([*OVEN, "--core", "T9"], "column 'T9': no such column"),
    ],
)
def test_bad_options_exit_2_naming_the_option(tmp_path, capsys, options, words):
    out = tmp_path / "out"
    code, _text, err = run(capsys, "calibrate", DEMO, TRIAL, *options, "--out", out)
    assert code == EXIT_BAD_INPUT
    assert words in err
    assert "Traceback" not in err
    assert not out.exists()
