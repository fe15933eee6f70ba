"""Tests of the HTML report builder, its plots and the atomic exports.

The report is checked by parsing it back with the standard library's
``html.parser`` (an independent reader): tables must hold the exact values
of the DataFrames they came from, every plot must be a real PNG, and the page
must not load anything from outside.
"""

from __future__ import annotations

import itertools
import json
import math
import os
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from optimizer.dwell.histories import CurveSet, RuleMark, Stage
from optimizer.reporting import export
from optimizer.reporting.cells import format_cell
from optimizer.reporting.html import (
    HtmlReport,
    TimelineBar,
    figure_png,
    temperature_figure,
    timeline_figure,
)
from tests._png import DRAWN_MIN, coloured_share, png_of_data_uri

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


class ReportReader(HTMLParser):
    """Collects tables (as lists of cell ``data-value`` strings), images and links."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, dict[str, list]] = {}
        self.images: list[dict[str, str]] = []
        self.external: list[str] = []
        self.text: list[str] = []
        self._table: str | None = None
        self._row: list[str] | None = None
        self._in_head = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table":
            self._table = a.get("data-table", "")
            self.tables[self._table] = {"columns": [], "rows": []}
        elif tag == "thead":
            self._in_head = True
        elif tag == "tbody":
            self._in_head = False
        elif tag == "th" and self._table is not None and self._in_head:
            self.tables[self._table]["columns"].append(a.get("data-column"))
        elif tag == "tr" and self._table is not None and not self._in_head:
            self._row = []
        elif tag == "td" and self._row is not None and "data-value" in a:
            self._row.append(a["data-value"])
        elif tag == "img":
            self.images.append(a)
        for key in ("src", "href"):
            value = a.get(key)
            if value and not value.startswith(("data:", "#")):
                self.external.append(value)

    def handle_endtag(self, tag):
        if tag == "tr" and self._row is not None:
            if self._row:
                self.tables[self._table]["rows"].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)


def read_report(text: str) -> ReportReader:
    reader = ReportReader()
    reader.feed(text)
    reader.close()
    return reader


def _curves() -> CurveSet:
    t = np.linspace(0.0, 180.0, 181)
    core = np.where(t < 80, 4 + 70 * (1 - np.exp(-t / 25)), 4 + 70 * np.exp(-(t - 80) / 35))
    surface = core + np.where(t < 80, 8.0, -6.0)
    return CurveSet(
        title="test product",
        time_min=t,
        core=core,
        surface=surface,
        stages=(Stage("oven", 0, 80, 170.0), Stage("tunnel", 80, 180, -2.0)),
        rules=(
            RuleMark("core ≥ 72 °C", 72.0, 0.0, 80.0, 75.0),
            RuleMark("core ≤ 21 °C within 120 min", 21.0, 80.0, 200.0, 150.0),
        ),
    )


def test_table_cells_keep_exact_values_and_parse_back():
    table = pd.DataFrame(
        {
            "product": ["ham log", "meatball"],
            "kg": [1234.56789012, 0.1 + 0.2],
            "batches": [3, 12],
            "ok": [True, False],
            "gap": [math.nan, 2.5],
        }
    )
    report = HtmlReport("t")
    report.section("Tables")
    report.table("plan", table, caption="plan")
    reader = read_report(report.render())
    parsed = reader.tables["plan"]
    assert parsed["columns"] == list(table.columns)
    assert len(parsed["rows"]) == len(table)
    for row, (_, expected) in zip(parsed["rows"], table.iterrows(), strict=True):
        assert row[0] == expected["product"]
        assert float(row[1]) == expected["kg"]  # exact, not rounded
        assert int(row[2]) == expected["batches"]
        assert row[3] == ("true" if expected["ok"] else "false")
        if math.isnan(expected["gap"]):
            assert row[4] == ""
        else:
            assert float(row[4]) == expected["gap"]


def test_table_escapes_markup_and_shows_empty_tables():
    report = HtmlReport("<b>title</b>")
    report.section("S")
    report.table("x", pd.DataFrame({"name": ["<script>alert(1)</script>"]}))
    report.table("empty", pd.DataFrame({"a": pd.Series([], dtype=float)}))
    text = report.render()
    assert "<script>" not in text
    assert "&lt;script&gt;" in text
    reader = read_report(text)
    assert reader.tables["x"]["rows"] == [["<script>alert(1)</script>"]]
    assert reader.tables["empty"]["rows"] == []
    assert "nothing planned" in "".join(reader.text)


def test_figures_are_embedded_pngs_and_nothing_is_loaded_from_outside():
    report = HtmlReport("plots")
    report.section("Curves")
    report.figure(temperature_figure(_curves()), caption="c", alt="curves", name="curves")
    bars = [
        TimelineBar("oven A", 0, 8, kind="setup"),
        TimelineBar("oven A", 8, 98, "ham", "roast 170"),
        TimelineBar("tunnel", 100, 300, "ham", "ham"),
    ]
    report.figure(
        timeline_figure(bars, title="shift 1", shift_minutes=480), caption="t", alt="timeline"
    )
    reader = read_report(report.render())
    assert len(reader.images) == 2
    # the same helpers with nothing to draw: axes, labels, grid and legend only
    curves = _curves()
    nothing = np.full_like(curves.core, np.nan)
    blank_curves = CurveSet("test product", curves.time_min, nothing, nothing, (), ())
    blanks = [
        figure_png(temperature_figure(blank_curves)),
        figure_png(timeline_figure([], title="shift 1", shift_minutes=480, machines=["oven A"])),
    ]
    assert max(coloured_share(png) for png in blanks) < DRAWN_MIN
    for image in reader.images:
        png = png_of_data_uri(image["src"])
        assert png.startswith(PNG_MAGIC)
        assert coloured_share(png) >= DRAWN_MIN, image["alt"]  # data drawn, not empty axes
        assert image["alt"]
    assert reader.external == []


def test_rendered_page_is_responsive_and_printable():
    report = HtmlReport("page")
    report.section("One")
    report.caution("Food safety", ["model estimates"])
    report.section("Two", newpage=True)
    text = report.render()
    assert '<meta name="viewport"' in text
    assert "@media print" in text
    assert "@media (max-width" in text
    assert 'href="#one"' in text and 'id="two"' in text


def test_format_cell():
    assert format_cell(math.nan) == "–"
    assert format_cell(None) == "–"
    assert format_cell(True) == "yes"
    assert format_cell(12345) == "12,345"
    assert format_cell(1234.5678, 1) == "1,234.6"
    assert format_cell(math.inf) == "∞"
    assert format_cell("oven") == "oven"


# ---------------------------------------------------------------------------
# exports
# ---------------------------------------------------------------------------


def test_atomic_write_replaces_whole_file_and_leaves_no_temp(tmp_path: Path):
    target = tmp_path / "a.txt"
    export.atomic_write_text(target, "old")
    export.atomic_write_text(target, "new contents")
    assert target.read_text() == "new contents"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"]
    mode = target.stat().st_mode & 0o777
    umask = os.umask(0)
    os.umask(umask)
    assert mode == 0o666 & ~umask


def test_atomic_write_failure_keeps_old_file(tmp_path: Path, monkeypatch):
    target = tmp_path / "a.json"
    export.atomic_write_text(target, "{}")

    def failing_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(export.os, "replace", failing_replace)
    with pytest.raises(OSError, match="No space"):
        export.write_json(target, {"x": 1})
    assert target.read_text() == "{}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.json"]


def test_protected_input_is_never_written(tmp_path: Path):
    scenario = tmp_path / "plant.yaml"
    scenario.write_text("name: x\n")
    with pytest.raises(export.OutputError, match="input file"):
        export.atomic_write_text(tmp_path / "." / "plant.yaml", "overwritten", protect=[scenario])
    assert scenario.read_text() == "name: x\n"


def test_prepare_out_dir(tmp_path: Path):
    nested = tmp_path / "a" / "b"
    assert export.prepare_out_dir(nested).is_dir()
    afile = tmp_path / "file"
    afile.write_text("x")
    with pytest.raises(export.OutputError, match="not a directory"):
        export.prepare_out_dir(afile)


def test_csv_and_xlsx_round_trip(tmp_path: Path):
    table = pd.DataFrame(
        {"product": ["a", "b"], "kg": [1 / 3, 2.0e6 + 0.125], "n": [1, 2], "ok": [True, False]}
    )
    tables = {"plan": table, "x" * 40: table}
    written = export.write_tables(tmp_path, tables, workbook="all.xlsx")
    assert [p.name for p in written] == ["plan.csv", "x" * 40 + ".csv", "all.xlsx"]
    back = pd.read_csv(tmp_path / "plan.csv")
    pd.testing.assert_frame_equal(back, table)  # full float precision in CSV
    sheets = pd.read_excel(tmp_path / "all.xlsx", sheet_name=None)
    assert list(sheets) == export.excel_sheet_names(tables)
    assert all(len(name) <= 31 for name in sheets)
    pd.testing.assert_frame_equal(sheets["plan"], table)


def test_table_names_must_be_plain(tmp_path: Path):
    with pytest.raises(export.OutputError, match="plain file name"):
        export.write_tables(tmp_path, {"../x": pd.DataFrame()}, workbook="w.xlsx")
    assert list(tmp_path.iterdir()) == []


def test_excel_sheet_names_unique_and_valid():
    names = export.excel_sheet_names(["a" * 40, "a" * 40, "x[1]", "X[1]"])
    assert len(set(n.lower() for n in names)) == 4
    assert all(len(n) <= 31 and not set(n) & set("[]:*?/\\") for n in names)


def test_json_is_strict(tmp_path: Path):
    from dataclasses import dataclass
    from enum import Enum

    class Kind(Enum):
        A = "a"

    @dataclass(frozen=True)
    class Row:
        kind: Kind
        value: float

    obj = {
        "table": pd.DataFrame({"x": [1.0, math.nan], "y": ["p", "q"]}),
        "rows": (Row(Kind.A, math.inf), Row(Kind.A, np.float64(2.5))),
        "n": np.int64(3),
        "path": Path("/x/y"),
    }
    path = export.write_json(tmp_path / "out.json", obj)
    data = json.loads(path.read_text())  # strict parser: would fail on NaN
    assert data == {
        "table": [{"x": 1.0, "y": "p"}, {"x": None, "y": "q"}],
        "rows": [{"kind": "a", "value": None}, {"kind": "a", "value": 2.5}],
        "n": 3,
        "path": "/x/y",
    }


# ---------------------------------------------------------------------------
# plan report pieces on a hand-made plan (planner test plant, invented data)
# ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def small_plan():
    from optimizer.planning.solve import plan
    from tests._planner_cases import one_line

    inputs = one_line(
        products={"A": (10.0, 50.0, 1.0, {}), "B": (12.0, 45.0, 0.3, {})},
        n_shifts=2,
        oven_changeover=15.0,
        tunnel_changeover=10.0,
        tunnel_width=0.5,
    )
    result = plan(inputs)
    assert result.status.has_plan
    return inputs, result


def test_timeline_accounts_for_every_batch_and_run(small_plan):
    from optimizer.reporting.html import shift_timelines

    inputs, result = small_plan
    timelines = shift_timelines(result, inputs)
    assert set(timelines) == set(result.shifts)
    for shift, bars in timelines.items():
        oven_work = [b for b in bars if b.machine == "oven-1" and b.kind == "work"]
        batches = [b for b in result.batches if b.shift == shift]
        assert len(oven_work) == sum(b.batches for b in batches)
        cook = sum(b.end - b.start for b in oven_work)
        assert cook == pytest.approx(sum(b.batches * b.cook_min for b in batches))
        # oven bars never overlap
        ordered = sorted((b for b in bars if b.machine == "oven-1"), key=lambda b: b.start)
        for a, b in itertools.pairwise(ordered):
            assert b.start >= a.end - 1e-9
        tunnel_work = [b for b in bars if b.machine == "tunnel-1" and b.kind == "work"]
        runs = [r for r in result.runs if r.shift == shift]
        assert sum(b.end - b.start for b in tunnel_work) == pytest.approx(
            sum(r.minutes for r in runs)
        )
        # the belt never takes a product before the first batch holding it leaves the oven
        for bar in tunnel_work:
            first_cook_end = min(o.end for o in oven_work if bar.group in o.group.split(" + "))
            assert bar.start >= first_cook_end - 1e-9


def test_plan_report_tables_equal_plan_tables(small_plan):
    from optimizer.planning.results import plan_tables
    from optimizer.reporting.html import RunInfo, plan_report

    inputs, result = small_plan
    tables = plan_tables(result)
    text = plan_report(
        result, inputs, tables, info=RunInfo("plant.yaml", "0" * 64, "0.1.0", "now", "Test")
    )
    reader = _PartsReader()
    reader.feed(text)
    for name, table in tables.items():
        rows = reader.rows.get(name, [])
        if table.empty:
            continue
        expected = [[export._cell_json(v) for v in row] for row in table.itertuples(index=False)]
        got = [[_typed(cell) for cell in row] for row in rows]
        assert sorted(map(repr, got)) == sorted(map(repr, expected)), name
    assert len(reader.images) >= 1 + len(result.shifts)  # utilisation + a timeline per shift
    assert "Food safety" in text and "0" * 64 in text


def _typed(cell: str):
    if cell == "":
        return None
    if cell in ("true", "false"):
        return cell == "true"
    try:
        return int(cell)
    except ValueError:
        pass
    try:
        return float(cell)
    except ValueError:
        return cell


class _PartsReader(ReportReader):
    """Joins the parts of tables shown in several pieces (per shift)."""

    def __init__(self):
        super().__init__()
        self.rows: dict[str, list[list[str]]] = {}

    def handle_endtag(self, tag):
        if tag == "tr" and self._row:
            self.rows.setdefault(self._table, []).append(self._row)
        super().handle_endtag(tag)
