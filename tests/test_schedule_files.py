"""Schedule outputs: schedule.csv, its sheet and JSON, the timeline bars, the floor sheet.

Every check runs on a schedule built here by hand, with its times worked out
in the comments, so the writers are tested without the scheduler.
"""

from __future__ import annotations

import csv
import json
from html.parser import HTMLParser

import openpyxl
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.planning.schedule import (
    SCHEDULE_COLUMNS,
    BeltPiece,
    Changeover,
    Feed,
    Schedule,
    SettingSpan,
    ShiftSchedule,
    Stop,
    TimedBatch,
    TraysOf,
    TunnelTimeline,
    Unplaced,
)
from optimizer.reporting import export
from optimizer.reporting.html import SAFETY_CAUTION
from optimizer.reporting.schedule_files import (
    belt_speed_down,
    clock,
    floor_sheet_html,
    minutes_up,
    schedule_json,
    schedule_tables,
    schedule_timelines,
)


def _plant() -> Schedule:
    """One shift of 240 min: an oven runs two batches with a changeover, one tunnel.

    Batch 01: load 0-8, cook 8-57.2 (49.2 min, shown as 50), unload 57.2-63,
    4 trays of A (10 kg each) and 2 of B (5 kg each): 50 kg.
    Changeover 63-75 (hot → warm). Batch 02: load 75-83, cook 83-113.5,
    unload 113.5-120, 3 trays of A: 30 kg.
    Tunnel: belt 0.3333 m/min to 150, 0.25 after; feeds 70-90 (A of 01),
    90-95 (B of 01), 125-140 (A of 02); the last piece leaves at 200.
    A stop on the tunnel 220-235.
    """
    b1 = TimedBatch(
        "mon",
        "oven-1",
        "mon/oven-1/01",
        "oven-1|hot|A:4+B:2",
        "hot",
        0.0,
        8.0,
        57.2,
        63.0,
        (TraysOf("A", 4, 40.0), TraysOf("B", 2, 10.0)),
    )
    b2 = TimedBatch(
        "mon",
        "oven-1",
        "mon/oven-1/02",
        "oven-1|warm|A:3",
        "warm",
        75.0,
        83.0,
        113.5,
        120.0,
        (TraysOf("A", 3, 30.0),),
    )

    def feed(batch, product, setting, start, end, kg, trays, need, out):
        return Feed(
            "mon",
            "tun",
            batch,
            product,
            "oven-1",
            setting,
            "cold",
            "full",
            start,
            end,
            kg,
            trays,
            need,
            out,
        )

    feeds = (
        feed("mon/oven-1/01", "A", "hot", 70.0, 90.0, 40.0, 4, 36.2, 162.0),
        feed("mon/oven-1/01", "B", "hot", 90.0, 95.0, 10.0, 2, 30.0, 167.0),
        feed("mon/oven-1/02", "A", "warm", 125.0, 140.0, 30.0, 3, 36.2, 200.0),
    )
    tl = TunnelTimeline(
        "mon",
        "tun",
        24.0,
        (BeltPiece(0.0, 150.0, 0.3333), BeltPiece(150.0, 240.0, 0.25)),
        (SettingSpan(0.0, 240.0, "cold"),),
        feeds,
    )
    return Schedule(
        (
            ShiftSchedule(
                "mon",
                240.0,
                (b1, b2),
                (Changeover("mon", "oven-1", 63.0, 75.0, "hot", "warm"),),
                (Stop("mon", "tun", 220.0, 235.0, "belt wash"),),
                (tl,),
                (Unplaced("mon", "oven-1", "oven-1|hot|A:4", 40.0, "hot_hold", "belt busy"),),
            ),
        ),
        notes=("chill re-checked with the actual wait",),
    )


RULES = pd.DataFrame(
    [
        {
            "product": "A",
            "cook_rule": "rule-a",
            "cook_requirement": "core ≥ 74 °C",
            "chill_rule": "chill-a",
            "chill_requirement": "57 → 21 °C within 120 min",
        },
        {
            "product": "B",
            "cook_rule": "rule-b",
            "cook_requirement": "core ≥ 70 °C for 2 min",
            "chill_rule": "chill-b",
            "chill_requirement": "54.4 → 26.7 °C within 90 min",
        },
    ]
)


class _Tables(HTMLParser):
    """Cell texts of every table by its data-table name, and each sheet's text."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self.sheets: dict[str, str] = {}
        self._table: str | None = None
        self._sheet: str | None = None
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section" and "data-sheet" in a:
            self._sheet = a["data-sheet"]
            self.sheets[self._sheet] = ""
        if tag == "table":
            self._table = a.get("data-table")
            self.tables[self._table] = []
        elif tag == "tr" and self._table is not None:
            self.tables[self._table].append([])
        elif tag in ("td", "th") and self._table is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.tables[self._table][-1].append("".join(self._cell))
            self._cell = None
        elif tag == "table":
            self._table = None
        elif tag == "section":
            self._sheet = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        if self._sheet is not None:
            self.sheets[self._sheet] += data


def _parse(text: str) -> _Tables:
    parser = _Tables()
    parser.feed(text)
    return parser


# -- rounding -----------------------------------------------------------------


def test_rounding_helpers_on_hand_values():
    assert minutes_up(49.2) == 50
    assert minutes_up(12.0) == 12
    # strict (issue 21): a shown minute is never below the computed one, even
    # by float noise; the extra minute is on the safe side
    assert minutes_up(12.0 + 1e-12) == 13
    assert minutes_up(12.001) == 13
    assert belt_speed_down(0.3333) == pytest.approx(0.33)
    assert belt_speed_down(0.13) == pytest.approx(0.13)
    assert belt_speed_down(0.1299) == pytest.approx(0.12)
    assert clock(95.0) == "1:35"
    assert clock(59.6) == "1:00"


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=0.0, max_value=5000.0))
def test_cook_minutes_are_never_rounded_short(minutes):
    shown = minutes_up(minutes)
    assert shown >= minutes * (1 - 1e-8) - 1e-8
    # <=, not <: a tiny positive minute rounds up to 1, and in floats 1e-130 + 1 == 1
    assert shown <= minutes + 1


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=0.01, max_value=10.0))
def test_belt_speeds_are_never_rounded_faster(speed):
    shown = belt_speed_down(speed)
    assert shown <= speed * (1 + 1e-8)
    assert shown > speed - 0.01 - 1e-12


# -- tables, workbook and JSON ---------------------------------------------------


def test_schedule_csv_sheet_and_json_carry_the_same_rows(tmp_path):
    schedule = _plant()
    tables = schedule_tables(schedule)
    assert set(tables) == {"schedule", "unplaced"}
    export.write_tables(tmp_path, tables, workbook="plan.xlsx")
    with open(tmp_path / "schedule.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    assert tuple(rows[0]) == SCHEDULE_COLUMNS
    # 2 batches, 1 changeover, 1 stop, 3 feeds, 2 belt pieces
    kinds = sorted(r[2] for r in rows[1:])
    assert kinds == ["batch", "batch", "belt", "belt", "changeover", "feed", "feed", "feed", "stop"]
    sheet = openpyxl.load_workbook(tmp_path / "plan.xlsx")["schedule"]
    values = list(sheet.values)
    assert tuple(values[0]) == SCHEDULE_COLUMNS
    assert len(values) == len(rows)
    data = json.loads(json.dumps(schedule_json(schedule)))
    assert tuple(data["columns"]) == SCHEDULE_COLUMNS
    assert len(data["rows"]) == len(rows) - 1
    feeds = [r for r in data["rows"] if r["kind"] == "feed"]
    assert [f["batch"] for f in feeds] == ["mon/oven-1/01", "mon/oven-1/01", "mon/oven-1/02"]
    # kg balance: batch kg = kg fed from it = total
    assert sum(r["kg"] for r in data["rows"] if r["kind"] == "batch") == pytest.approx(80.0)
    assert sum(f["kg"] for f in feeds) == pytest.approx(data["total_kg"]) == pytest.approx(80.0)
    assert data["unplaced"][0]["rule"] == "hot_hold"
    assert data["notes"] == ["chill re-checked with the actual wait"]
    # the CSV's numbers are the records' numbers, exactly
    first_batch = next(r for r in rows[1:] if r[2] == "batch")
    assert float(first_batch[4]) == 63.0


def test_no_unplaced_table_when_everything_is_placed():
    base = _plant()
    shift = base.shifts[0]
    clean = Schedule(
        (
            ShiftSchedule(
                shift.shift,
                shift.length_min,
                shift.batches,
                shift.changeovers,
                shift.stops,
                shift.tunnels,
            ),
        )
    )
    assert set(schedule_tables(clean)) == {"schedule"}
    assert schedule_json(clean)["unplaced"] == []


# -- timeline -------------------------------------------------------------------


def test_timeline_bars_are_the_schedule_times():
    bars = schedule_timelines(_plant())["mon"]
    oven = [(b.start, b.end, b.kind) for b in bars if b.machine == "oven-1"]
    assert oven == [
        (0.0, 8.0, "setup"),  # loading batch 01
        (8.0, 57.2, "work"),  # its cook
        (57.2, 63.0, "setup"),  # unloading
        (75.0, 83.0, "setup"),
        (83.0, 113.5, "work"),
        (113.5, 120.0, "setup"),
        (63.0, 75.0, "setup"),  # the changeover
    ]
    cooks = [b for b in bars if b.machine == "oven-1" and b.kind == "work"]
    assert [b.group for b in cooks] == ["A + B", "A"]
    tunnel = [(b.start, b.end, b.kind, b.label) for b in bars if b.machine == "tun"]
    assert tunnel == [
        (220.0, 235.0, "stop", "belt wash"),
        (70.0, 90.0, "work", "0.33 m/min"),
        (90.0, 95.0, "work", "0.33 m/min"),
        (125.0, 140.0, "work", "0.33 m/min"),
        (140.0, 200.0, "drain", ""),  # the last piece leaves at 200
    ]


def test_timeline_figure_draws_every_kind():
    from optimizer.reporting.html import figure_png, timeline_figure

    fig = timeline_figure(
        schedule_timelines(_plant())["mon"],
        title="t",
        shift_minutes=240,
        machines=["oven-1", "tun"],
    )
    labels = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert "planned stop" in labels and "belt emptying" in labels
    assert figure_png(fig)[:4] == b"\x89PNG"


# -- floor sheet ------------------------------------------------------------------


def test_floor_sheet_per_machine_with_batches_targets_and_safe_rounding():
    page = floor_sheet_html(_plant(), RULES, plant="Test plant", made="2026-01-01")
    parsed = _parse(page)
    assert list(parsed.sheets) == ["mon · oven-1", "mon · tun"]
    oven = parsed.tables["floor-mon-oven-1"]
    header, *rows = oven
    assert header[:5] == [
        "batch",
        "load at [min (h:mm)]",
        "trays",
        "setting",
        "cook [min, at least]",
    ]
    # batch 01, the changeover at 63, batch 02 at 75, in time order
    assert rows[0][:5] == ["01", "0 (0:00)", "4 × A; 2 × B", "hot", "50"]
    assert "A: core ≥ 74 °C [rule-a]" in rows[0][6]
    assert "B: core ≥ 70 °C for 2 min [rule-b]" in rows[0][6]
    assert rows[1][1] == "63 (1:03)" and "hot → warm: 12 min" in rows[1][2]
    assert rows[2][:5] == ["02", "75 (1:15)", "3 × A", "warm", "31"]  # 30.5 min cook → 31
    belt = parsed.tables["floor-mon-tun-belt"][1:]
    assert belt == [
        ["0 (0:00)", "150 (2:30)", "0.33", "cold"],
        ["150 (2:30)", "240 (4:00)", "0.25", "cold"],
    ]
    feed = parsed.tables["floor-mon-tun-feed"][1:]
    assert [r[0] for r in feed] == ["70 (1:10)", "90 (1:30)", "125 (2:05)"]
    assert feed[0][1:7] == ["01 (oven-1)", "A", "4 trays, 40 kg", "full", "0.33", "37"]
    assert feed[1][7] == "54.4 → 26.7 °C within 90 min [chill-b]"
    for text in parsed.sheets.values():
        assert "Where to probe" in text
        assert "thickest piece" in text
        for caution in SAFETY_CAUTION:
            assert caution in text


def test_floor_sheet_prints_one_page_per_machine():
    page = floor_sheet_html(_plant(), RULES)
    assert page.count('class="sheet"') == 2
    assert "page-break-after: always" in page
    # without a rules table the sheet still says where the target comes from
    assert "see the food-safety plan" in floor_sheet_html(_plant())


def test_floor_sheet_of_an_empty_schedule_says_so():
    assert "Nothing is scheduled" in floor_sheet_html(Schedule(()))


def test_floor_sheet_keeps_the_margin_apart_from_the_rule_targets():
    # the targets stay as the rules state them; the margin the minutes include
    # is said once per sheet (rules table column 'margin', optimizer.dwell.describe)
    rules = RULES.assign(margin="calculated with cook targets +0.5 K, chill limits −0.5 K")
    page = floor_sheet_html(_plant(), rules)
    assert "A: core ≥ 74 °C [rule-a]" in page
    assert "Targets are shown as the rules state them; the minutes were calculated with " in page
    assert "cook targets +0.5 K, chill limits −0.5 K." in page
    assert "Targets are shown as the rules state them" not in floor_sheet_html(_plant(), RULES)


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=0.0, max_value=5000.0), st.floats(min_value=0.01, max_value=10.0))
def test_floor_sheet_rounding_is_the_strict_shared_rule(minutes, speed):
    # the same rule as the report and terminal tables (optimizer.planning.rounding),
    # with no float-noise allowance
    from optimizer.planning import rounding

    assert minutes_up(minutes) >= minutes
    assert minutes_up(minutes) == rounding.minutes_up(minutes, 0)
    assert belt_speed_down(speed) <= speed
    assert belt_speed_down(speed) == rounding.speed_down(speed, 2)
