"""End-to-end tests of the ``corepace`` command.

Most tests call :func:`optimizer.cli.main` in-process (fast); two run the
installed console script and ``python -m optimizer`` in a subprocess.

The planning commands run on the demo plant cut down to three of its
products (a slab, a cylinder and a sphere) and one air setting per oven and
tunnel, both loadings kept: the full demo's dwell table (32 cook and 128
chill simulations) takes minutes of CPU, far over this module's budget. The
cut-down plant is written from ``configs/demo.yaml`` at the start of the
session, so it follows every change to the demo; its dwell table is computed
once into a shared temporary cache, and every later command reads it from
there. Validation and bad-input tests use the full demo file.

Reports are read back with the standard library's ``html.parser``, an
independent reader: the test checks that the tables in the HTML hold exactly
the values of the exported CSV files, and that every plot is a real PNG.
"""

from __future__ import annotations

import hashlib
import html
import io
import json
import math
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest
import yaml

from optimizer.cli.app import main
from optimizer.cli.common import EXIT_BAD_INPUT, EXIT_NO_PLAN, EXIT_OK
from tests._png import DRAWN_MIN, coloured_share, png_of_data_uri

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.yaml"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
PLAN_TABLES = (
    "ovens",
    "tunnels",
    "totals",
    "utilisation",
    "shadow_prices",
    "slack",
    "shortfalls",
    "rules",
    "dwell_used",
    "dwell_ruled_out",
    "assumptions",
)


def run(capsys, *argv: object) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def files_under(path: Path) -> list[str]:
    return sorted(str(p.relative_to(path)) for p in path.rglob("*")) if path.exists() else []


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


class Page(HTMLParser):
    """Tables (rows of ``data-value`` strings, parts joined) and images of a report."""

    def __init__(self) -> None:
        super().__init__()
        self.columns: dict[str, list[str]] = {}
        self.rows: dict[str, list[list[str]]] = {}
        self.images: list[dict[str, str]] = []
        self.external: list[str] = []
        self._table: str | None = None
        self._row: list[str] | None = None
        self._head = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table":
            self._table = a["data-table"]
            self.rows.setdefault(self._table, [])
            self.columns[self._table] = []
        elif tag == "thead":
            self._head = True
        elif tag == "tbody":
            self._head = False
        elif tag == "th" and self._head and self._table:
            self.columns[self._table].append(a["data-column"])
        elif tag == "tr" and self._table and not self._head:
            self._row = []
        elif tag == "td" and self._row is not None and "data-value" in a:
            self._row.append(a["data-value"])
        elif tag == "img":
            self.images.append(a)
        for key in ("src", "href"):
            if a.get(key) and not a[key].startswith(("data:", "#")):
                self.external.append(a[key])

    def handle_endtag(self, tag):
        if tag == "tr" and self._row is not None:
            if self._row:
                self.rows[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None


def read_page(path: Path) -> Page:
    page = Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return page


def same_cell(html_value: str, csv_value: object) -> bool:
    """A report cell's exact value against the CSV cell read back by pandas."""
    if csv_value is None or (isinstance(csv_value, float) and math.isnan(csv_value)):
        return html_value == ""
    if isinstance(csv_value, bool):
        return html_value == ("true" if csv_value else "false")
    if isinstance(csv_value, int | float):
        return html_value != "" and float(html_value) == float(csv_value)
    return html_value == str(csv_value)


def assert_report_table_equals_csv(page: Page, name: str, csv_path: Path) -> None:
    table = pd.read_csv(csv_path, keep_default_na=True)
    assert page.columns[name] == list(table.columns), name
    html_rows = page.rows[name]
    assert len(html_rows) == len(table), name
    csv_rows = [list(r) for r in table.itertuples(index=False, name=None)]
    # per-shift parts come out grouped by shift: compare as multisets of rows
    key = repr
    unmatched = sorted(html_rows, key=key)
    for row in csv_rows:
        hit = next(
            (
                i
                for i, h in enumerate(unmatched)
                if all(same_cell(a, b) for a, b in zip(h, row, strict=True))
            ),
            None,
        )
        assert hit is not None, f"{name}: CSV row {row} not in the report"
        unmatched.pop(hit)
    assert not unmatched


# ---------------------------------------------------------------------------
# fixtures: one cold dwell table for the session, then one plan run
# ---------------------------------------------------------------------------


PLANT_PRODUCTS = ("beef-patty", "pork-sausage", "beef-meatball")


def cut_down_demo(path: Path) -> Path:
    """The demo plant with three products and one air setting per oven and tunnel."""
    data = yaml.safe_load(DEMO.read_text())
    data["products"] = [p for p in data["products"] if p["name"] in PLANT_PRODUCTS]
    data["orders"] = [o for o in data["orders"] if o["product"] in PLANT_PRODUCTS]
    for oven in data["ovens"]:
        oven["settings"] = oven["settings"][:1]
    for tunnel in data["tunnels"]:
        tunnel["settings"] = tunnel["settings"][:1]
    assert {p["name"] for p in data["products"]} == set(PLANT_PRODUCTS)
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


@pytest.fixture(scope="session")
def plant(tmp_path_factory) -> Path:
    return cut_down_demo(tmp_path_factory.mktemp("plant") / "plant.yaml")


@pytest.fixture(scope="session")
def cache(tmp_path_factory) -> Path:
    """A fresh dwell cache for the session, keyed with the physics as it was at the start.

    The cache keys include a hash of the physics source files; freezing it for
    the session keeps one cold computation per session even when the source
    tree changes under a running test session. The cache is new and empty, so
    nothing computed by other code can be read back.
    """
    from optimizer.dwell import table as dwell

    salt = dwell.physics_salt()
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(dwell, "physics_salt", lambda: salt)
        yield tmp_path_factory.mktemp("dwell-cache")


@pytest.fixture(scope="session")
def demo_plan(tmp_path_factory, cache, plant):
    """``corepace plan PLANT --json`` into a fresh directory (created by the command)."""
    out = tmp_path_factory.mktemp("plan") / "new" / "dir"
    before = (sha256(plant), plant.stat().st_mtime_ns)
    code = main(["plan", str(plant), "--out", str(out), "--cache-dir", str(cache), "--json"])
    return code, out, before


def test_plan_demo_exit_code_and_files(demo_plan, plant):
    code, out, before = demo_plan
    assert code == EXIT_OK
    names = set(files_under(out))
    expected = {f"{t}.csv" for t in PLAN_TABLES} | {
        "plan.xlsx",
        "plan.json",
        "dwell.csv",
        "report.html",
    }
    assert expected <= names
    assert not [n for n in names if n.endswith(".tmp")]
    assert (sha256(plant), plant.stat().st_mtime_ns) == before  # input untouched


def test_plan_demo_report_tables_equal_exported_tables(demo_plan):
    _, out, _ = demo_plan
    page = read_page(out / "report.html")
    assert page.external == []
    shown = set()
    for name in PLAN_TABLES:
        if name == "shortfalls" and pd.read_csv(out / "shortfalls.csv").empty:
            # deliberately left out: the "What does not fit" section (and its table)
            # appears only when there is a shortfall or no plan; see
            # test_infeasible_orders_exit_1_with_diagnosis for the table when it does
            assert name not in page.rows
            continue
        assert name in page.rows, f"plan table {name} is not in the report"
        assert_report_table_equals_csv(page, name, out / f"{name}.csv")
        shown.add(name)
    # no other table in the report, and the demo plan has batches and runs
    assert set(page.rows) == shown
    assert len(page.rows["ovens"]) > 0 and len(page.rows["tunnels"]) > 0


def test_plan_demo_every_plot_present_and_drawn(demo_plan):
    _, out, _ = demo_plan
    page = read_page(out / "report.html")
    tunnels = pd.read_csv(out / "tunnels.csv")
    shifts = tunnels["shift"].unique()
    products = tunnels["product"].unique()
    # utilisation + a timeline per shift + a temperature plot per planned product
    assert len(page.images) == 1 + len(shifts) + len(products)
    # the report's own figure helpers with nothing to draw: axes, labels, grid, legend
    from optimizer.reporting.html import figure_png, timeline_figure, utilisation_figure

    utilisation = pd.read_csv(out / "utilisation.csv")
    blanks = [
        figure_png(utilisation_figure(utilisation.assign(utilisation=0.0))),
        figure_png(
            timeline_figure(
                [],
                title=f"Machine timeline, {shifts[0]}",
                shift_minutes=480,
                machines=list(dict.fromkeys(utilisation["machine"])),
            )
        ),
    ]
    assert max(coloured_share(png) for png in blanks) < DRAWN_MIN
    for image in page.images:
        png = png_of_data_uri(image["src"])
        assert png.startswith(PNG_MAGIC)
        assert coloured_share(png) >= DRAWN_MIN, image.get("alt")  # data drawn on the axes
        assert image.get("alt")
    text = (out / "report.html").read_text(encoding="utf-8")
    for product in products:
        assert f'data-figure="temperatures-{product}"' in text
    for shift in shifts:
        assert f'data-figure="timeline-{shift}"' in text


def test_plan_demo_report_carries_caution_hash_and_version(demo_plan, plant):
    _, out, _ = demo_plan
    text = (out / "report.html").read_text(encoding="utf-8")
    assert sha256(plant) in text
    from optimizer.scenario.provenance import tool_version

    assert tool_version() in text
    for phrase in (
        "model estimates",
        "food-safety plan",
        "local regulator",
        "calibrated probes",
        "largest piece",
    ):
        assert phrase in text
    rules = pd.read_csv(out / "rules.csv")
    assert rules["cook_source"].str.len().min() > 0
    assert rules["chill_source"].str.len().min() > 0


def test_plan_demo_xlsx_has_every_table(demo_plan):
    _, out, _ = demo_plan
    sheets = pd.read_excel(out / "plan.xlsx", sheet_name=None)
    assert set(PLAN_TABLES) <= set(sheets)
    ovens = pd.read_csv(out / "ovens.csv")
    from optimizer.reporting.export import header_text

    pd.testing.assert_frame_equal(
        sheets["ovens"], ovens.rename(columns=header_text), check_dtype=False
    )


def test_plan_json_file_matches_tables(demo_plan, plant):
    _, out, _ = demo_plan
    data = json.loads((out / "plan.json").read_text())
    assert data["status"] in ("optimal", "feasible_with_gap")
    assert data["scenario_sha256"] == sha256(plant)
    tunnels = pd.read_csv(out / "tunnels.csv")
    assert data["total_kg"] == pytest.approx(tunnels["kg"].sum(), rel=1e-9)
    for name in PLAN_TABLES:
        table = pd.read_csv(out / f"{name}.csv")
        records = data["tables"][name]
        assert len(records) == len(table), name
        if len(table):
            assert list(records[0]) == list(table.columns)


def test_plan_json_on_stdout_parses_and_matches(tmp_path, cache, capsys, demo_plan, plant):
    out = tmp_path / "again"
    code, stdout, _ = run(capsys, "plan", plant, "--out", out, "--cache-dir", cache, "--json")
    assert code == EXIT_OK
    data = json.loads(stdout)  # nothing but JSON on stdout (solver banner included)
    ovens = pd.read_csv(out / "ovens.csv")
    got = pd.DataFrame(data["tables"]["ovens"])
    pd.testing.assert_frame_equal(got, ovens, check_dtype=False)
    # same input, same plan
    first = json.loads((demo_plan[1] / "plan.json").read_text())
    assert data["objective_value"] == pytest.approx(first["objective_value"], rel=1e-9)
    assert data["tables"]["tunnels"] == first["tables"]["tunnels"]


def test_plan_prints_summary_for_people(tmp_path, cache, capsys, demo_plan, plant):
    code, stdout, _ = run(capsys, "plan", plant, "--out", tmp_path, "--cache-dir", cache)
    assert code == EXIT_OK
    assert "Plan status" in stdout and "Bottleneck" in stdout
    assert "report.html" in stdout


# ---------------------------------------------------------------------------
# bad input: exit 2, one line per problem, nothing written
# ---------------------------------------------------------------------------


def broken_demo(tmp_path: Path) -> Path:
    data = yaml.safe_load(DEMO.read_text())
    data["products"][1]["geometry"]["diameter"] = "-24 mm"
    data["ovens"][0]["settings"][0]["air_temperature"] = "3 m/s"
    data["orders"].append({"product": "no-such-product", "min_kg": 10})
    path = tmp_path / "broken.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


@pytest.mark.parametrize("command", ["validate", "dwell", "plan", "capacity"])
def test_bad_scenario_is_exit_2_one_line_per_problem_nothing_written(command, tmp_path, capsys):
    scenario = broken_demo(tmp_path)
    before = sha256(scenario)
    out = tmp_path / "out"
    cache = tmp_path / "cache"
    argv = [command, scenario]
    if command != "validate":
        argv += ["--out", out, "--cache-dir", cache]
    code, stdout, stderr = run(capsys, *argv)
    assert code == EXIT_BAD_INPUT
    lines = stderr.strip().splitlines()
    assert len(lines) == 3  # the three problems broken_demo makes, one line each
    assert "Traceback" not in stderr
    assert all(line.startswith(f"{scenario}: ") for line in lines)
    joined = "\n".join(lines)
    assert "products[1]" in joined
    assert "ovens[0]" in joined
    assert "no-such-product" in joined
    assert not out.exists() and not cache.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["broken.yaml"]
    assert sha256(scenario) == before
    assert stdout == ""


def test_bad_scenario_with_json_lists_the_same_problems(tmp_path, capsys):
    scenario = broken_demo(tmp_path)
    code, stdout, stderr = run(capsys, "validate", scenario, "--json")
    assert code == EXIT_BAD_INPUT
    data = json.loads(stdout)
    assert data["status"] == "bad_input"
    assert data["problems"] == stderr.strip().splitlines()


def test_out_that_is_a_file_is_bad_input(tmp_path, capsys):  # no dwell table needed
    afile = tmp_path / "taken"
    afile.write_text("x")
    cache = tmp_path / "cache"
    code, _, stderr = run(capsys, "dwell", DEMO, "--out", afile, "--cache-dir", cache)
    assert code == EXIT_BAD_INPUT
    assert stderr.strip().splitlines() == [
        f"--out {afile}: exists and is not a directory; give a directory path"
    ]
    assert afile.read_text() == "x"
    assert not cache.exists()


def test_bad_options_are_exit_2(tmp_path, capsys):
    code, _, err = run(capsys, "plan", DEMO, "--time-limit", "-3", "--out", tmp_path / "o")
    assert code == EXIT_BAD_INPUT
    assert "--time-limit" in err and "> 0" in err
    code, _, err = run(capsys, "capacity", DEMO, "--mix", "ham=1", "--out", tmp_path / "o")
    assert code == EXIT_BAD_INPUT
    assert err.strip().startswith("--mix: 'ham' is not a product; known:")
    code, _, err = run(capsys, "plan", DEMO, "--set", "nonsense", "--out", tmp_path / "o")
    assert code == EXIT_BAD_INPUT
    assert "--set" in err
    assert not (tmp_path / "o").exists()


def test_missing_study_file_is_exit_2(capsys, tmp_path):
    code, _, err = run(capsys, "sweep", tmp_path / "absent.yaml", "--out", tmp_path / "o")
    assert code == EXIT_BAD_INPUT
    assert err.strip().splitlines() == [f"{tmp_path / 'absent.yaml'}: no such study file"]
    assert not (tmp_path / "o").exists()


def test_missing_scenario_file(capsys, tmp_path):
    code, _, err = run(capsys, "dwell", tmp_path / "absent.yaml", "--out", tmp_path / "o")
    assert code == EXIT_BAD_INPUT
    assert err.strip().splitlines() == [f"{tmp_path / 'absent.yaml'}: no such file"]
    assert not (tmp_path / "o").exists()


# ---------------------------------------------------------------------------
# no feasible plan: exit 1 with the diagnosis
# ---------------------------------------------------------------------------


def test_infeasible_orders_exit_1_with_diagnosis(tmp_path, cache, capsys, demo_plan, plant):
    out = tmp_path / "out"
    code, stdout, stderr = run(
        capsys,
        "plan",
        plant,
        "--set",
        "orders.0.min_kg=500000 kg",
        "--set",
        "orders.0.max_kg=600000 kg",
        "--out",
        out,
        "--cache-dir",
        cache,
        "--quiet",
    )
    assert code == EXIT_NO_PLAN
    shortfalls = [line for line in stderr.splitlines() if line.startswith("shortfall: ")]
    assert shortfalls, stderr
    first_order = yaml.safe_load(plant.read_text())["orders"][0]["product"]
    assert first_order in "\n".join(shortfalls)
    table = pd.read_csv(out / "shortfalls.csv")
    assert len(table) == len(shortfalls)
    page = read_page(out / "report.html")
    assert len(page.rows["shortfalls"]) == len(table)
    assert "no feasible plan" in stdout


# ---------------------------------------------------------------------------
# other commands
# ---------------------------------------------------------------------------


def test_validate_demo(capsys):
    code, stdout, stderr = run(capsys, "validate", DEMO)
    assert code == EXIT_OK
    assert stdout.startswith(f"{DEMO}: valid (")
    assert stderr == ""


def test_dwell_writes_csv_and_prints_table(tmp_path, cache, capsys, demo_plan, plant):
    code, stdout, _ = run(capsys, "dwell", plant, "--out", tmp_path, "--cache-dir", cache)
    assert code == EXIT_OK
    table = pd.read_csv(tmp_path / "dwell.csv")
    plan_dwell = pd.read_csv(demo_plan[1] / "dwell.csv")
    pd.testing.assert_frame_equal(table, plan_dwell)
    assert {"product", "cook_min", "chill_min", "feasible", "reason"} <= set(table.columns)
    for product in table["product"].unique():
        assert product in stdout
    # every ruled-out row says why
    reasons = table.loc[~table["feasible"], "reason"].fillna("").astype(str)
    assert (reasons.str.len() > 0).all()


def test_schema_is_json_schema(capsys, tmp_path):
    code, stdout, _ = run(capsys, "schema")
    assert code == EXIT_OK
    schema = json.loads(stdout)
    assert schema.get("type") == "object"
    assert {"ovens", "tunnels", "products", "shifts"} <= set(schema["properties"])
    code, _, _ = run(capsys, "schema", "--out", tmp_path / "s")
    assert code == EXIT_OK
    assert json.loads((tmp_path / "s" / "scenario.schema.json").read_text()) == schema


def test_capacity_with_fixed_mix(tmp_path, cache, capsys, demo_plan, plant):
    out = tmp_path / "cap"
    code, stdout, _ = run(
        capsys,
        "capacity",
        plant,
        "--mix",
        "pork-sausage=2,beef-meatball=1",
        "--out",
        out,
        "--cache-dir",
        cache,
        "--json",
    )
    assert code == EXIT_OK
    data = json.loads(stdout)
    assert data["mix"] == pytest.approx({"pork-sausage": 2 / 3, "beef-meatball": 1 / 3})
    assert data["total_kg"] > 0
    assert data["kg_per_hour"] * data["horizon_hours"] == pytest.approx(data["total_kg"])
    assert data["total_kg"] <= data["free_mix_kg"] * (1 + 1e-9)
    # the plan at capacity makes the products in the fixed proportions
    totals = pd.read_csv(out / "totals.csv").groupby("product")["kg"].sum()  # long form
    assert totals.sum() == pytest.approx(data["total_kg"], rel=1e-6)
    assert totals["pork-sausage"] / totals.sum() == pytest.approx(2 / 3, rel=1e-6)
    assert set(totals.index) == {"pork-sausage", "beef-meatball"}
    assert (out / "capacity.html").exists() and (out / "capacity.xlsx").exists()
    # issue 17, defect 11: "What limits it" names the machine, not only the order
    page_text = (out / "capacity.html").read_text(encoding="utf-8")
    limits = page_text.split("<h2>What limits it</h2>", 1)[1].split("<table", 1)[0]
    machines = ("rack-oven-1", "cook-chamber-2", "chill-tunnel")
    assert any(f"{kind} {m}" in limits for kind in ("oven", "tunnel") for m in machines)
    page = read_page(out / "capacity.html")
    assert_report_table_equals_csv(page, "capacity_mix", out / "capacity_mix.csv")


def test_compare_two_scenarios(tmp_path, cache, capsys, demo_plan, plant):
    # a what-if that changes the shifts, not the physics: the dwell cache is reused
    data = yaml.safe_load(plant.read_text())
    for shift in data["shifts"]:
        shift["minutes"] = 600
    longer = tmp_path / "longer-shifts.yaml"
    longer.write_text(yaml.safe_dump(data, sort_keys=False))
    out = tmp_path / "cmp"
    code, stdout, _ = run(
        capsys, "compare", plant, longer, "--out", out, "--cache-dir", cache, "--json"
    )
    assert code == EXIT_OK
    result = json.loads(stdout)
    assert [s["label"] for s in result["scenarios"]] == ["plant", "longer-shifts"]
    table = pd.read_csv(out / "compare.csv")
    difference = "longer-shifts − plant"
    assert list(table.columns) == ["figure", "unit", "plant", "longer-shifts", difference]
    total = table.set_index("figure").loc["total kg"]
    assert float(total["plant"]) == pytest.approx(result["scenarios"][0]["total_kg"])
    assert float(total["longer-shifts"]) == pytest.approx(result["scenarios"][1]["total_kg"])
    # issue 17, defect 8: the difference column is the second minus the first
    assert float(total[difference]) == pytest.approx(
        float(total["longer-shifts"]) - float(total["plant"])
    )
    # issue 17, defect 11: utilisation in % as everywhere else, never "0.97" with "-"
    util = table[table["figure"].str.startswith("mean utilisation")]
    assert len(util) and set(util["unit"]) == {"%"}
    assert util["plant"].astype(float).between(0, 100).all()
    # longer shifts never lower the bound (the bucketed plan); the timed schedule is a
    # heuristic and may place less with longer shifts, so only the bound is checked
    bound = table.set_index("figure").loc["bound kg (bucketed plan)"]
    assert float(bound["plant"]) == pytest.approx(result["scenarios"][0]["bucket_kg"])
    assert float(bound["longer-shifts"]) >= float(bound["plant"]) * (1 - 1e-6)
    assert float(total["plant"]) <= float(bound["plant"]) * (1 + 1e-6)
    page = read_page(out / "compare.html")
    assert_report_table_equals_csv(page, "compare", out / "compare.csv")


def test_help_lists_every_command_with_examples(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == EXIT_OK
    for command in ("validate", "dwell", "plan", "capacity", "compare", "sweep", "schema"):
        assert command in out
    assert "examples:" in out and "exit codes" in out
    for command in ("plan", "capacity", "compare", "dwell", "sweep"):
        code, text, _ = run(capsys, command, "--help")
        assert code == EXIT_OK
        assert "examples:" in text
        for option in ("--out", "--quiet", "--json"):
            assert option in text


def test_usage_error_is_exit_2(capsys):
    code, _, err = run(capsys, "no-such-command")
    assert code == EXIT_BAD_INPUT
    assert "invalid choice" in err


# ---------------------------------------------------------------------------
# the progress display: only on a terminal
# ---------------------------------------------------------------------------


class Terminal(io.StringIO):
    """A text stream that says it is a terminal, the way the command asks (``isatty``)."""

    def isatty(self) -> bool:
        return True


ESC = "\x1b["
HIDE_CURSOR = "\x1b[?25l"  # written when a live progress display starts


@pytest.fixture
def terminal_env(monkeypatch):
    """An ordinary colour terminal: no variable that overrides rich's own tty check."""
    for name in ("FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE", "NO_COLOR"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("TERM", "xterm-256color")
    monkeypatch.setenv("COLUMNS", "120")


@pytest.mark.parametrize(
    ("tty", "options", "shown"),
    [
        (False, {}, False),
        (True, {}, True),
        (True, {"quiet": True}, False),
        (True, {"json_mode": True}, False),
    ],
)
def test_progress_bar_only_on_a_terminal(tty, options, shown, monkeypatch, terminal_env):
    from optimizer.cli.terminal import Ui

    stream = Terminal() if tty else io.StringIO()
    monkeypatch.setattr(sys, "stdout", stream)
    ui = Ui(**options)
    assert ui.show_progress is shown
    with ui.progress("steps") as update:
        update(1, 3, "first item")
    with ui.status("waiting"):
        pass
    text = stream.getvalue()
    if shown:
        assert HIDE_CURSOR in text
        assert "steps: first item" in text and "1/3" in text and "waiting" in text
    else:
        assert text == ""


def test_command_shows_progress_on_a_terminal_and_plain_text_otherwise(
    tmp_path, cache, capsys, monkeypatch, terminal_env, demo_plan, plant
):
    argv = ["dwell", str(plant), "--cache-dir", str(cache)]
    code, piped, _ = run(capsys, *argv, "--out", tmp_path / "piped")
    assert code == EXIT_OK
    # no escape codes, no progress line ("dwell table"; the table's title is "Dwell table")
    assert ESC not in piped and "dwell table" not in piped
    assert "rows," in piped  # the result line is there
    screen = Terminal()
    monkeypatch.setattr(sys, "stdout", screen)
    assert main([*argv, "--out", str(tmp_path / "tty")]) == EXIT_OK
    shown = screen.getvalue()
    assert HIDE_CURSOR in shown and "dwell table" in shown
    assert "rows," in shown


# ---------------------------------------------------------------------------
# the installed command
# ---------------------------------------------------------------------------


def test_console_script_validates_demo():
    exe = Path(sys.executable).with_name("corepace")
    assert exe.exists(), "the corepace console script is not installed in this environment"
    result = subprocess.run(
        [str(exe), "validate", str(DEMO), "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert result.returncode == EXIT_OK, result.stderr
    data = json.loads(result.stdout)
    assert data["valid"] is True and data["products"] >= 6


def test_python_dash_m_reports_bad_input(tmp_path):
    result = subprocess.run(
        [sys.executable, "-m", "optimizer", "validate", str(broken_demo(tmp_path))],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert result.returncode == EXIT_BAD_INPUT
    assert len(result.stderr.strip().splitlines()) == 3
    assert "Traceback" not in result.stderr


# ---------------------------------------------------------------------------
# every planned batch and tunnel run re-checked against the thermal layer
# ---------------------------------------------------------------------------


def test_every_planned_batch_and_tunnel_run_meets_its_rules(demo_plan, plant):
    """Re-simulate the plan the user receives (its CSV tables) on a finer grid.

    Each oven line is simulated for its batch dwell at its setting (the
    largest piece, the rules without the safety margin, which the plan must
    meet with room to spare); each tunnel run from the hottest oven exit the
    plan allows for that product and oven setting in that shift (the longest
    batch dwell: in a mixed batch a product stays as long as the slowest one),
    through the shortest and the longest wait before the belt, at the planned
    belt speed.
    """
    from optimizer.dwell import convert, stages
    from optimizer.scenario.models import load_scenario
    from thermal import process

    code, out, _ = demo_plan
    assert code == EXIT_OK
    scenario = load_scenario(plant)
    products = {p.name: p for p in scenario.products}
    ovens = {o.name: o for o in scenario.ovens}
    tunnels = {t.name: t for t in scenario.tunnels}
    batches = pd.read_csv(out / "ovens.csv")
    runs = pd.read_csv(out / "tunnels.csv")
    assert len(batches) and len(runs)

    exit_profile: dict[tuple[str, str, str, str], tuple[float, object]] = {}
    for row in batches.itertuples(index=False):
        setting = next(s for s in ovens[row.oven].settings if s.name == row.setting)
        for name in (n.strip() for n in row.products.split(",")):
            spec = products[name]
            rule = convert.cook_rule(scenario.cook_rule(spec), spec.initial_temperature, 0.0)
            piece = convert.thermal_product(spec, emissivity=setting.emissivity)
            hist, final = process.run_stages(
                piece,
                spec.initial_temperature,
                process.OvenStage(convert.air_setting(setting)),
                row.cook_min * 60.0,
            )
            verdict = rule.check(hist.times, hist.core, hist.surface_max)
            assert verdict.met, f"{row.oven} {row.shift} {name}: {verdict.reason}"
            key = (row.shift, name, row.oven, row.setting)
            if key not in exit_profile or row.cook_min > exit_profile[key][0]:
                exit_profile[key] = (row.cook_min, final)

    for run in runs.itertuples(index=False):
        spec = products[run.product]
        tunnel = tunnels[run.tunnel]
        setting = next(s for s in tunnel.settings if s.name == run.tunnel_setting)
        loading = next(opt for opt in tunnel.loadings if opt.name == run.loading)
        zones = stages.tunnel_zones(tunnel, setting, convert.loading_factor(loading, setting))
        rule = convert.chill_rule(scenario.chill_rule(spec), 0.0)
        _, start = exit_profile[(run.shift, run.product, run.oven, run.oven_setting)]
        residence = tunnel.length / run.belt_speed_m_per_min * 60.0
        for wait in stages.hold_waits(tunnel):
            hist, _ = process.run_stages(
                convert.thermal_product(spec),
                start,
                None,
                0.0,
                stages.transfer_stage(tunnel.transfer, wait),
                zones,
                residence,
            )
            verdict = rule.check(hist.times, hist.core)
            assert verdict.met, (
                f"{run.tunnel} {run.shift} {run.product} wait {wait} min: {verdict.reason}"
            )


def test_out_of_range_warnings_become_one_note_per_kind():
    import warnings

    from optimizer.cli.app import _validity_notes
    from thermal.errors import ValidityWarning

    counts: dict[str, int] = {}
    with _validity_notes(counts), pytest.warns(UserWarning, match="other"):
        warnings.warn(
            "Whitaker sphere: mu/mu_s = 0.93 outside [1, 3.2]", ValidityWarning, stacklevel=1
        )
        warnings.warn(
            "Whitaker sphere: mu/mu_s = 0.89 outside [1, 3.2]", ValidityWarning, stacklevel=1
        )
        warnings.warn("other", UserWarning, stacklevel=1)  # not ours: shown as usual
    assert counts == {"Whitaker sphere: mu/mu_s outside [1, 3.2]": 2}


def test_correlation_out_of_range_reaches_report_json_and_dwell_used(demo_plan):
    """Issue 17, defect 2: the extrapolation note is in all three files, per cell."""
    _, out, _ = demo_plan
    used = pd.read_csv(out / "dwell_used.csv")
    spheres = used[used["product"] == "beef-meatball"]
    assert len(spheres) and spheres["notes"].str.contains("Whitaker sphere").all()
    # folded: one note per correlation and cell, with the range of the ratio
    assert spheres["notes"].str.count("Whitaker sphere").max() == 1
    data = json.loads((out / "plan.json").read_text())
    lines = [m for m in data["messages"] if m.startswith("dwell beef-meatball at ")]
    assert len(lines) == len(spheres) and all("extrapolated" in m for m in lines)
    text = (out / "report.html").read_text(encoding="utf-8")
    for line in lines:
        assert html.escape(line) in text


@pytest.fixture(scope="session")
def scheduled_outputs(tmp_path_factory, cache, plant):
    """The cut-down demo planned, scheduled by the timed scheduler, and written."""
    from optimizer.dwell.table import build_dwell_table
    from optimizer.planning.run import solve_run
    from optimizer.planning.scheduler import schedule_plan
    from optimizer.reporting.plan import write_plan_outputs
    from optimizer.scenario.models import load_scenario

    scenario = load_scenario(plant)
    dwell = build_dwell_table(scenario, cache_dir=cache)
    run = solve_run(str(plant), scenario, dwell)
    schedule = schedule_plan(run.inputs, run.result)
    out = tmp_path_factory.mktemp("scheduled")
    write_plan_outputs(run, out, "corepace plan", schedule=schedule)
    return run, schedule, out


def test_schedule_files_carry_the_timed_schedule(scheduled_outputs):
    """Issue 14 item 6: schedule.csv, its sheet, plan.json, floor sheet and timeline."""
    from optimizer.planning.schedule import SCHEDULE_COLUMNS
    from optimizer.reporting.export import header_text
    from tests._schedule_checker import problems

    run, schedule, out = scheduled_outputs
    assert problems(run.inputs, run.result, schedule) == []
    table = pd.read_csv(out / "schedule.csv")
    assert tuple(table.columns) == SCHEDULE_COLUMNS
    assert set(table["kind"]) <= {"batch", "changeover", "stop", "feed", "belt"}
    assert {"batch", "feed", "belt"} <= set(table["kind"])
    feeds = table[table["kind"] == "feed"]
    assert feeds["kg"].sum() == pytest.approx(schedule.total_kg)
    assert set(feeds["batch"]) <= set(table.loc[table["kind"] == "batch", "batch"])
    sheet = pd.read_excel(out / "plan.xlsx", sheet_name="schedule")
    assert list(sheet.columns) == [header_text(c) for c in SCHEDULE_COLUMNS]
    assert len(sheet) == len(table)
    data = json.loads((out / "plan.json").read_text())
    assert data["schedule"]["columns"] == list(SCHEDULE_COLUMNS)
    assert len(data["schedule"]["rows"]) == len(table)
    assert "floor_sheet.html" in {Path(f).name for f in data["files"]}
    floor = (out / "floor_sheet.html").read_text(encoding="utf-8")
    machines = {(s.shift, b.oven) for s in schedule.shifts for b in s.batches}
    machines |= {(s.shift, t.tunnel) for s in schedule.shifts for t in s.tunnels}
    for shift, machine in machines:
        assert f'data-sheet="{shift} · {machine}"' in floor
    assert floor.count("Where to probe") == floor.count('class="sheet"')
    report = (out / "report.html").read_text(encoding="utf-8")
    assert "The timed schedule (schedule.csv" in report
    assert "One plausible order" not in report
