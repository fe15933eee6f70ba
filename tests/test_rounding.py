"""Safe-side rounding of the figures people act on (optimizer.planning.rounding).

Property: over any value the shown dwell, read back, is never below the exact
dwell, and the shown belt speed never above the exact maximum; each is the
closest such number at its resolution.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.planning import rounding as r

MINUTES = st.floats(min_value=0.0, max_value=1e6, allow_nan=False, allow_infinity=False)
SPEEDS = st.floats(min_value=1e-6, max_value=100.0, allow_nan=False, allow_infinity=False)


@settings(max_examples=300, deadline=None)
@given(MINUTES, st.integers(0, 3))
def test_shown_minutes_never_below_the_exact_minutes(minutes, decimals):
    shown = r.format_minutes(minutes, decimals)
    value = float(shown)
    assert value >= minutes
    # and no more than one step above: the smallest such number
    assert value - minutes < 10.0**-decimals * (1 + 1e-9) + 1e-9 * minutes


@settings(max_examples=300, deadline=None)
@given(SPEEDS, SPEEDS, st.integers(1, 3))
def test_shown_speed_never_above_the_exact_maximum(fastest, belt_max, decimals):
    # The dwell table's speed: length / residence capped at the belt maximum.
    exact = min(fastest, belt_max)
    shown = r.format_speed(exact, decimals)
    value = float(shown)
    assert value <= exact
    assert exact - value < 10.0**-decimals * (1 + 1e-9)


def test_examples_at_the_default_resolution():
    # whole minutes up, hundredths of a m/min down (as on the floor sheet)
    assert r.format_minutes(25.01) == "26"
    assert r.format_minutes(25.0) == "25"
    assert r.format_minutes(12.000000000000002) == "13"  # strict: never below
    assert r.format_speed(0.23176) == "0.23"
    assert r.format_speed(2.0) == "2.00"
    assert r.format_speed(0.1 + 0.2) == "0.30"  # 0.30000000000000004 >= 0.30
    assert r.format_minutes(math.nan) == "—" and r.format_speed(math.inf) == "—"
    assert r.minutes_up(25.6, 1) == 25.6 and r.minutes_up(25.61, 1) == 25.7
    assert r.speed_down(1e22) == 1e22


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 500), st.floats(0.1, 50.0))
def test_trays_per_batch_never_exceed_the_capacity(capacity, kg_per_tray):
    # trays that fit capacity kg: capacity * kg_per_tray / kg_per_tray is whole
    # up to float noise; the count never exceeds it
    trays = r.count_down(capacity * kg_per_tray / kg_per_tray)
    assert trays == capacity
    assert r.count_down(capacity + 0.999) == capacity
    with pytest.raises(ValueError, match="count: must be a finite number"):
        r.count_down(math.nan)


def test_column_directions():
    assert r.safe_rounding("cook_min") == "up" and r.safe_rounding("chill_min") == "up"
    assert r.safe_rounding("max_belt_speed_m_per_min") == "down"
    assert r.safe_rounding("belt_speed_m_per_min") == "down"
    assert r.safe_rounding("kg") is None


# ----------------------------------------------------------- what the report and terminal show

_UP = st.floats(min_value=0.01, max_value=2000.0, allow_nan=False)
_DOWN = st.floats(min_value=0.001, max_value=5.0, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_UP, _UP, _DOWN, _DOWN), min_size=1, max_size=8))
def test_report_tables_never_show_a_dwell_below_or_a_speed_above_the_exact_value(rows):
    # Random plan tables through the HTML report's table and the terminal's
    # rich table: every shown cook/chill minute >= the exact value (kept in
    # data-value), every shown belt speed <= it.
    import html as html_lib
    import io
    import re

    import pandas as pd
    from rich.console import Console

    from optimizer.cli.terminal import rich_table
    from optimizer.reporting.html import HtmlReport

    frame = pd.DataFrame(
        rows, columns=["cook_min", "chill_min", "belt_speed_m_per_min", "max_belt_speed_m_per_min"]
    )
    report = HtmlReport("t")
    report.table("t", frame)
    page = report.render()
    cells = re.findall(r'<td class="num" data-value="([^"]*)">([^<]*)</td>', page)
    assert len(cells) == 4 * len(rows)
    for i, (exact, shown) in enumerate(cells):
        value, exact_value = float(html_lib.unescape(shown).replace(",", "")), float(exact)
        if i % 4 < 2:
            assert value >= exact_value
        else:
            assert value <= exact_value
    console = Console(width=200, record=True, file=io.StringIO())
    console.print(rich_table(frame, title="t"))
    lines = [line for line in console.export_text().splitlines() if "│" in line]
    assert len(lines) == len(rows)
    for line, row in zip(lines, rows, strict=True):
        shown = [float(c.strip().replace(",", "")) for c in line.strip("│ ").split("│")]
        assert shown[0] >= row[0] and shown[1] >= row[1]
        assert shown[2] <= row[2] and shown[3] <= row[3]


def test_demo_plan_trays_per_batch_never_exceed_the_oven_capacity():
    # reports/sample is the demo plan as it is now (tests/test_sample_report.py):
    # the trays shown for each batch load, summed over its products, fit the oven.
    import re
    from pathlib import Path

    import pandas as pd
    import yaml

    root = Path(__file__).resolve().parents[1]
    demo = yaml.safe_load((root / "configs" / "demo.yaml").read_text(encoding="utf-8"))
    trays = {o["name"]: int(o["trays"]) for o in demo["ovens"]}
    ovens = pd.read_csv(root / "reports" / "sample" / "ovens.csv")
    assert len(ovens) > 0
    for row in ovens.itertuples(index=False):
        shown = [int(n) for n in re.findall(r" x(\d+)", row.load)]
        assert shown and sum(shown) <= trays[row.oven], row.load
