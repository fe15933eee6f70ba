"""The run record and the calibration page as a browser shows and prints them.

The run record is the written record of a run: printed on A4 it must take at
most two pages, with nothing cut and no text under 9 px (plots counted at the
size they are drawn).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from optimizer.cli.app import main
from tests import browser as br

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.yaml"
LOGS = ROOT / "configs" / "logs"
OVEN = ["--product", "chicken-fillet", "--oven", "rack-oven-1", "--setting", "roast-180"]


@pytest.fixture(scope="module")
def chromium():
    with br.browser() as b:
        yield b


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    out = tmp_path_factory.mktemp("probe-pages")
    args = ["verify", DEMO, LOGS / "run-chicken-roast-180.csv", *OVEN, "--stage", "cook"]
    assert main([str(a) for a in [*args, "--out", out / "rec", "--quiet"]]) == 0
    args = ["calibrate", DEMO, LOGS / "trial-chicken-roast-180.csv", *OVEN, "--window", "0,8"]
    assert main([str(a) for a in [*args, "--bootstrap", "0", "--out", out / "cal", "-q"]]) == 0
    return out / "rec" / "record.html", out / "cal" / "calibration.html"


def _assert_readable(layout: br.Layout) -> None:
    assert not layout.wide, f"at {layout.width} px, wider than the page: {layout.wide[:8]}"
    assert not layout.small, f"at {layout.width} px, text under 9 px: {layout.small[:8]}"
    assert layout.scroll_width <= layout.width


def test_run_record_prints_on_at_most_two_pages(chromium, pages, tmp_path):
    record, _ = pages
    _assert_readable(br.measure(chromium, record, br.PRINT_WIDTH, printed=True))
    assert 1 <= br.pdf_pages(chromium, record, tmp_path / "record.pdf") <= 2


@pytest.mark.parametrize("width", [br.DESKTOP, br.PHONE])
def test_probe_pages_fit_the_screen(chromium, pages, width):
    for page in pages:
        _assert_readable(br.measure(chromium, page, width))
