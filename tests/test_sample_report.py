"""The committed sample report must come from the demo scenario as it is now.

`make sample` regenerates reports/sample/ from configs/demo.yaml; this test
fails when the demo file (or the tool version) changes without it, so the
sample a new user opens cannot go stale silently.
"""

from __future__ import annotations

import hashlib
import json
from importlib.metadata import version
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "reports" / "sample"


def test_sample_report_matches_the_demo_scenario_and_tool_version():
    plan = json.loads((SAMPLE / "plan.json").read_text(encoding="utf-8"))
    demo = hashlib.sha256((ROOT / "configs" / "demo.yaml").read_bytes()).hexdigest()
    assert plan["scenario_sha256"] == demo, "configs/demo.yaml changed: run `make sample`"
    assert plan["tool_version"] == version("corepace"), "version changed: run `make sample`"
    html = (SAMPLE / "report.html").read_text(encoding="utf-8")
    assert demo in html
    for name in plan["files"]:
        assert (SAMPLE / Path(name).name).exists(), name
