"""The reports as a browser shows and prints them (Debian chromium, headless).

Checked at desktop width (1366 px), at phone width (390 px) and printed on
A4: nothing wider than the page unless it scrolls in its own box (screen
only), no text under 9 px (plots counted at the size they are drawn), and
the page itself never scrolls sideways. The pages are the committed sample
report (kept equal to the demo by tests/test_sample_report.py) and floor
sheets built from a hand-made schedule.

Set ``COREPACE_SCREENSHOT=1`` to refresh ``reports/sample/report-390px.png``,
the committed screenshot of the sample report at phone width.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from tests import browser as br

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "reports" / "sample" / "report.html"


@pytest.fixture(scope="module")
def chromium():
    with br.browser() as b:
        yield b


def _assert_readable(layout: br.Layout) -> None:
    assert not layout.wide, f"at {layout.width} px, wider than the page: {layout.wide[:8]}"
    assert not layout.small, f"at {layout.width} px, text under 9 px: {layout.small[:8]}"
    assert layout.scroll_width <= layout.width, (
        f"at {layout.width} px the page scrolls sideways ({layout.scroll_width} px wide)"
    )


@pytest.mark.parametrize("width", [br.DESKTOP, br.PHONE])
def test_sample_report_fits_the_screen(chromium, width):
    _assert_readable(br.measure(chromium, SAMPLE, width))


def test_sample_report_prints_without_cut_columns(chromium, tmp_path):
    _assert_readable(br.measure(chromium, SAMPLE, br.PRINT_WIDTH, printed=True))
    assert br.pdf_pages(chromium, SAMPLE, tmp_path / "report.pdf") >= 2


def test_sample_screenshot_at_phone_width(chromium, tmp_path):
    target = ROOT / "reports" / "sample" / "report-390px.png"
    out = target if os.environ.get("COREPACE_SCREENSHOT") else tmp_path / "report-390px.png"
    br.screenshot(chromium, SAMPLE, out, br.PHONE)
    from PIL import Image

    with Image.open(out) as image:
        assert image.size[0] == br.PHONE
    assert target.exists(), "no committed screenshot: run with COREPACE_SCREENSHOT=1"


def test_the_checks_catch_a_page_that_is_too_wide_or_too_small(chromium, tmp_path):
    """The measures must be able to fail: a wide unscrolled table and 7 px text."""
    page = tmp_path / "bad.html"
    cells = "".join(f"<td>column-{i}-with-a-long-name</td>" for i in range(30))
    page.write_text(
        '<!DOCTYPE html><html><head><meta name="viewport" content="width=device-width">'
        f'</head><body><table data-table="t"><tr>{cells}</tr></table>'
        '<p style="font-size:7px">tiny</p></body></html>',
        encoding="utf-8",
    )
    layout = br.measure(chromium, page, br.PHONE)
    assert layout.wide and layout.wide[0].startswith("table t")
    assert layout.small and "7px" in layout.small[0]
    assert layout.scroll_width > br.PHONE


@pytest.mark.parametrize("width", [br.DESKTOP, br.PHONE])
def test_floor_sheet_fits_the_screen_and_prints(chromium, tmp_path, width):
    from optimizer.reporting.schedule_files import floor_sheet_html
    from tests.test_schedule_files import RULES, _plant

    page = tmp_path / "floor_sheet.html"
    page.write_text(floor_sheet_html(_plant(), RULES, plant="Test plant"), encoding="utf-8")
    _assert_readable(br.measure(chromium, page, width))
    _assert_readable(br.measure(chromium, page, br.PRINT_WIDTH, printed=True))
    assert br.pdf_pages(chromium, page, tmp_path / "floor.pdf") == 2
