"""Issue 17's defects, each with the check that failed before its fix.

What a new user ran into when trying the outputs: money not in the
scenario's currency, notes only on stderr, percentages refused, stray
columns, raw codes on screens. Each test names the defect it guards.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.scenario.models import ScenarioError, load_scenario

CONFIGS = Path(__file__).resolve().parent.parent / "configs"


def _demo_with(tmp_path: Path, **top) -> Path:
    data = yaml.safe_load((CONFIGS / "demo.yaml").read_text(encoding="utf-8"))
    data.update(top)
    path = tmp_path / "demo-changed.yaml"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    return path


# -- defect 3: fractions accept percentages, as the README says ------------------


@pytest.mark.parametrize(("given", "expected"), [("10 %", 0.10), (0.10, 0.10), ("150 %", 1.5)])
def test_safety_margin_time_fraction_takes_a_percentage(tmp_path, given, expected):
    path = _demo_with(tmp_path, safety_margin={"time_fraction": given, "core_temperature": "0.5 K"})
    assert load_scenario(path).safety_margin.time_fraction == pytest.approx(expected)


def test_a_negative_time_fraction_is_refused_naming_the_field(tmp_path):
    path = _demo_with(tmp_path, safety_margin={"time_fraction": "-5 %"})
    with pytest.raises(ScenarioError) as err:
        load_scenario(path)
    text = str(err.value)
    assert "safety_margin.time_fraction" in text
    assert "percentage like '10 %'" in text


# -- defect 1: money in the scenario's currency -------------------------------------


def test_most_value_plan_is_in_the_scenario_currency():
    import dataclasses

    from optimizer.planning.inputs import Objective, SolveOptions
    from optimizer.planning.solve import plan
    from tests._planner_cases import one_line

    inputs = dataclasses.replace(one_line(objective=Objective.MOST_VALUE), currency="EUR")
    result = plan(inputs, SolveOptions(time_limit_s=20))
    assert result.objective_unit == "EUR"
    kg = plan(one_line(objective=Objective.MOST_KG), SolveOptions(time_limit_s=20))
    assert kg.objective_unit == "kg"


def test_the_scenario_currency_reaches_the_planner_inputs():
    import pandas as pd

    from optimizer.planning.adapter import plan_inputs
    from optimizer.planning.inputs import DWELL_COLUMNS

    scenario = load_scenario(CONFIGS / "demo.yaml")
    assert scenario.currency == "EUR"
    inputs = plan_inputs(scenario, pd.DataFrame(columns=list(DWELL_COLUMNS)))
    assert inputs.currency == "EUR"


# -- defect 12: spreadsheets people can read ------------------------------------------


def test_workbook_sheets_have_units_formats_frozen_headers_and_widths(tmp_path):
    import openpyxl
    import pandas as pd

    from optimizer.reporting import export

    table = pd.DataFrame(
        {
            "product": ["chicken-fillet", "ham-log"],
            "cook_min": [25.856829780708765, 101.5],
            "belt_speed_m_per_min": [0.14687621904509623, 0.2],
            "kg": [975.1439457764636, 1500.0],
            "used_min": [412.53, 480.0],
            "batches": [3, 12],
            "utilisation": [0.9731, 1.0],
        }
    )
    path = export.write_xlsx(tmp_path / "t.xlsx", {"t": table})
    ws = openpyxl.load_workbook(path)["t"]
    headers = [c.value for c in ws[1]]
    assert headers == [
        "product",
        "cook [min]",
        "belt speed [m/min]",
        "kg",
        "used [min]",
        "batches",
        "utilisation [%]",
    ]
    assert ws.freeze_panes == "A2"
    row = {h: c for h, c in zip(headers, ws[2], strict=True)}
    # full values kept (openpyxl writes 16 significant digits; Excel shows 15), shown rounded
    assert row["cook [min]"].value == pytest.approx(25.856829780708765, rel=1e-15)
    # dwell minutes and belt speeds are never shown rounded to nearest (could show a
    # dwell short or a belt fast): their cells keep the general format
    assert row["cook [min]"].number_format == "General"
    assert row["belt speed [m/min]"].number_format == "General"
    assert row["used [min]"].number_format == "#,##0.0"
    assert row["kg"].number_format == "#,##0"  # 1000 kg and more: whole kg
    assert row["batches"].number_format == "#,##0"
    assert row["utilisation [%]"].number_format == "0.0%" and row["utilisation [%]"].value == 0.9731
    # widths fit the shown text, not 18-character raw floats
    width = ws.column_dimensions["E"].width
    assert len("used [min]") + 2 <= width < 18


def test_totals_are_long_form_with_unplanned_products_shown(tmp_path):
    from optimizer.planning.inputs import Objective, OrderData, SolveOptions
    from optimizer.planning.results import kg_table, plan_tables, totals_table
    from optimizer.planning.solve import plan
    from tests._planner_cases import one_line

    # B is worth nothing, optional: the plan leaves it out; A fills the shift
    inputs = one_line(
        products={
            "A": (10.0, 50.0, 1.0, {"value_per_kg": 5.0}),
            "B": (10.0, 50.0, 1.0, {"value_per_kg": 0.0}),
        },
        orders=[OrderData("A"), OrderData("B")],
        n_shifts=2,
        objective=Objective.MOST_VALUE,
    )
    result = plan(inputs, SolveOptions(time_limit_s=20))
    long = kg_table(result, inputs)
    assert list(long.columns) == ["product", "shift", "kg", "note"]
    assert len(long) == 4  # 2 products × 2 shifts, one observation per row
    b = long[long["product"] == "B"]
    assert (b["kg"] == 0).all()
    assert b["note"].iloc[0].startswith("not made: no minimum order")
    assert "index" not in plan_tables(result, inputs)["totals"].columns
    wide = totals_table(result, inputs)
    assert wide.loc["B", "total"] == 0 and wide.loc["A", "total"] == pytest.approx(result.total_kg)


# -- defect 6: no stray "index" column in the tables of a run without a plan ---------


def _timed_out():
    from optimizer.planning.inputs import Objective
    from optimizer.planning.results import PlanResult, SolveStatus

    return PlanResult(
        SolveStatus.NO_SOLUTION_IN_TIME,
        Objective.MOST_VALUE,
        None,
        "EUR",
        None,
        None,
        "highs",
        0.1,
        0.5,
        0.0,
        ("mon", "tue"),
    )


def _report_of(result) -> str:
    from optimizer.planning.results import plan_tables
    from optimizer.reporting.html import RunInfo, plan_report

    info = RunInfo("s.yaml", "0" * 64, "0.1", "2026-01-01 00:00", "Test plant")
    return plan_report(result, None, plan_tables(result), info=info)


def test_tables_of_a_run_without_a_plan_have_no_index_column():
    from optimizer.planning.results import plan_tables

    result = _timed_out()
    for name, table in plan_tables(result).items():
        assert "index" not in [str(c) for c in table.columns], name
        assert table.empty, name
    assert 'data-column="index"' not in _report_of(result)


# -- defect 7: the schema accepts valid files, ships with the package ----------------


def _validator():
    import jsonschema  # reference validator (tests only)

    from optimizer.scenario.models import scenario_json_schema

    schema = scenario_json_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.mark.parametrize("name", ["demo.yaml", "large.yaml"])
def test_shipped_scenarios_pass_the_schema_and_name_it_in_a_modeline(name):
    path = CONFIGS / name
    errors = [e.message for e in _validator().iter_errors(yaml.safe_load(path.read_text()))]
    assert errors == []
    first = path.read_text(encoding="utf-8").splitlines()[0]
    assert first.startswith("# yaml-language-server: $schema=")
    target = (path.parent / first.split("$schema=", 1)[1]).resolve()
    assert target.is_file(), target


def test_an_extending_file_passes_the_schema_and_a_partial_base_does_not(tmp_path):
    v = _validator()
    child = {
        "extends": "demo.yaml",
        "changes": [
            {"set": "tunnels.chill-tunnel.length", "value": "30 m"},
            {"add": "ovens", "copy_of": "rack-oven-1", "value": {"name": "rack-oven-3"}},
            {"add": "tunnels.chill-tunnel.fed_by", "value": "rack-oven-3"},
        ],
        "objective": "most_kg",
    }
    assert [e.message for e in v.iter_errors(child)] == []
    # it also loads, so the schema and the loader agree on it
    path = tmp_path / "child.yaml"
    path.write_text(yaml.safe_dump({**child, "extends": str(CONFIGS / "demo.yaml")}))
    assert load_scenario(path).tunnel("chill-tunnel").length == 30.0
    # without extends the sections are required, and changes need extends
    errors = [e.message for e in v.iter_errors({"changes": child["changes"]})]
    assert "'ovens' is a required property" in errors
    assert "'extends' is a dependency of 'changes'" in errors


def test_the_shipped_schema_file_is_the_current_schema():
    import json

    from optimizer.scenario.models import scenario_json_schema

    shipped = Path(__file__).resolve().parents[1] / "optimizer/scenario/data/scenario.schema.json"
    assert json.loads(shipped.read_text(encoding="utf-8")) == json.loads(
        json.dumps(scenario_json_schema())
    ), "run `corepace schema --out optimizer/scenario/data`"


# -- defect 10: plot labels never collide ------------------------------------------------


def _ham_log_like(rule_labels=None, stage_cuts=(55.0, 63.0, 148.0), t_end=275.0):
    """A history shaped like the demo's ham log: long chill windows, a short transfer."""
    import numpy as np

    from optimizer.dwell.histories import CurveSet, RuleMark, Stage

    t = np.linspace(0.0, t_end, 400)
    core = 4 + 93 * np.exp(-(((t - 76) / 45) ** 2))
    surface = 4 + 140 * np.exp(-(((t - 55) / 30) ** 2))
    cuts = [0.0, *stage_cuts, t_end]
    names = ["oven", "transfer", "zone 1", "zone 2", "zone 3"]
    stages = [
        Stage(names[i], cuts[i], cuts[i + 1], (180, 18, -4, -8, -8)[i])
        for i in range(len(cuts) - 1)
    ]
    labels = rule_labels or [
        "core ≤ 26.7 °C within 90 min of 54.4 °C",
        "core ≤ 4.4 °C within 300 min of 26.7 °C",
        "cook: core ≥ 63 °C (lowest of 4 options)",
    ]
    marks = [
        RuleMark(labels[0], 26.7, 130.0, 220.0, 178.0),
        RuleMark(labels[1 % len(labels)], 4.4, 180.0, 478.0, 255.0),
        RuleMark(labels[2 % len(labels)], 63.0, None, None, 15.0),
    ]
    return CurveSet(
        "ham-log — rack-oven-1/roast-180 → chill-tunnel/chill-minus-8/full",
        t,
        core,
        surface,
        stages,
        marks,
        (core + surface) / 2,
    )


def test_temperature_plot_labels_clear_of_each_other_and_of_the_curves():
    from optimizer.reporting.html import temperature_figure, text_collisions

    assert text_collisions(temperature_figure(_ham_log_like())) == []


@settings(max_examples=12, deadline=None)
@given(
    cuts=st.lists(st.floats(min_value=1.0, max_value=270.0), min_size=3, max_size=3, unique=True),
    words=st.lists(st.integers(min_value=1, max_value=14), min_size=3, max_size=3),
)
def test_temperature_plot_labels_clear_for_any_stage_split_and_rule_text(cuts, words):
    from optimizer.reporting.html import temperature_figure, text_collisions

    labels = [" ".join(["core ≤ 21 °C"] * n) for n in words]
    fig = temperature_figure(_ham_log_like(labels, tuple(sorted(cuts))))
    assert text_collisions(fig) == []


def test_the_collision_check_sees_labels_across_curves_and_on_each_other():
    import numpy as np
    from matplotlib.figure import Figure

    from optimizer.reporting.html import text_collisions

    fig = Figure(figsize=(4, 3))
    ax = fig.add_subplot(1, 1, 1)
    x = np.linspace(0, 10, 50)
    ax.plot(x, x, label="core")
    ax.text(5, 5, "across the core", ha="center")
    ax.text(1, 8, "first label")
    ax.text(1.2, 8.05, "second label")
    found = text_collisions(fig)
    assert any("'across the core' crosses the line 'core'" in f for f in found)
    assert any("'first label' overlaps 'second label'" in f for f in found)


def test_timeline_and_utilisation_plot_labels_do_not_collide():
    import pandas as pd

    from optimizer.reporting.html import (
        schedule_timelines,
        text_collisions,
        timeline_figure,
        utilisation_figure,
    )
    from tests.test_schedule_files import _plant

    bars = schedule_timelines(_plant())["mon"]
    fig = timeline_figure(
        bars, title="Machine timeline, mon", shift_minutes=240, machines=["oven-1", "tun"]
    )
    assert text_collisions(fig) == []
    util = pd.DataFrame(
        {
            "machine": ["rack-oven-1", "rack-oven-1", "chill-tunnel", "chill-tunnel"],
            "shift": ["mon", "tue", "mon", "tue"],
            "utilisation": [0.97, 1.0, 1.0, 0.4],
        }
    )
    assert text_collisions(utilisation_figure(util)) == []


# -- defect 2: physics notes folded per cell ---------------------------------------------


def test_notes_of_a_cell_are_folded_into_one_per_kind():
    from optimizer.planning.run import summarise_notes

    text = (
        "Whitaker sphere: mu/mu_s = 0.903 outside the validity range [1, 3.2]; result "
        "extrapolated; Whitaker sphere: mu/mu_s = 0.8707 outside the validity range [1, 3.2]; "
        "result extrapolated; surface_temperature 55.98 °C is below the dew point 60 °C"
    )
    # the "; " inside a note splits it; the fold keeps every distinct text once
    folded = summarise_notes(
        "Whitaker sphere: mu/mu_s = 0.903 outside the validity range [1, 3.2]; "
        "Whitaker sphere: mu/mu_s = 0.8707 outside the validity range [1, 3.2]; "
        "surface_temperature 55.98 °C is below the dew point 60 °C"
    )
    assert folded == (
        "Whitaker sphere: mu/mu_s = 0.8707–0.903 outside the validity range [1, 3.2]; "
        "surface_temperature 55.98 °C is below the dew point 60 °C"
    )
    assert summarise_notes(text).count("result extrapolated") == 1
    assert summarise_notes(None) == "" and summarise_notes("") == ""


# -- defect 5: a time limit hit before any plan is not "infeasible" -------------------


def test_time_limit_before_any_plan_says_so_and_how_to_raise_it():
    from optimizer.planning.results import summary_text

    result = _timed_out()
    page = _report_of(result)
    text = summary_text(result)
    for words in (page, text):
        assert "time limit ran out" in words
        assert "--time-limit" in words
        assert "infeasible" not in words.lower()
        assert "no_solution_in_time" not in words
    assert "What does not fit" not in page and "no diagnosis available" not in page


# -- defect 11: smaller items ----------------------------------------------------------


def test_every_config_named_in_help_and_readme_exists_and_loads():
    import re

    root = Path(__file__).resolve().parents[1]
    texts = [p.read_text(encoding="utf-8") for p in (root / "optimizer" / "cli").glob("*.py")]
    texts.append((root / "README.md").read_text(encoding="utf-8"))
    named = {m for t in texts for m in re.findall(r"configs/[\w.-]+\.yaml", t)}
    assert "configs/demo-longer-tunnel.yaml" in named
    for name in sorted(named):
        assert (root / name).is_file(), name
        if not name.startswith("configs/study"):
            load_scenario(root / name)
    assert (
        load_scenario(root / "configs/demo-longer-tunnel.yaml").tunnel("chill-tunnel").length == 30
    )


def test_readme_lists_every_exit_code():
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    part = text.split("Exit codes:", 1)[1][:600]
    for code in ("0 done", "1 no plan", "2 bad input", "3 internal error"):
        assert code in part


def test_validate_counts_in_words(capsys):
    from optimizer.cli.app import main

    assert main(["validate", str(CONFIGS / "demo.yaml")]) == 0
    out = capsys.readouterr().out
    assert "1 tunnel," in out and "1 tunnels" not in out and "2 ovens" in out


def test_codes_are_shown_in_words_and_kept_in_files():
    from optimizer.reporting.cells import CODE_WORDS, cell_text

    assert cell_text("chill_binding", "exit_core_max") == "core temperature at the tunnel exit"
    assert cell_text("status", "feasible_with_gap") == "feasible, not proven optimal"
    assert cell_text("product", "chicken-fillet") == "chicken-fillet"
    assert cell_text("field", "hold") == "hold"  # only code columns are translated
    assert all("_" not in words for words in CODE_WORDS.values())


def test_report_tables_show_binding_clauses_in_words_and_keep_the_code():
    import pandas as pd

    from optimizer.reporting.html import HtmlReport

    report = HtmlReport("t")
    report.section("s")
    report.table("dwell_used", pd.DataFrame({"chill_binding": ["exit_core_max"]}))
    page = report.render()
    assert 'data-value="exit_core_max">core temperature at the tunnel exit<' in page


# -- defect 4: validate lists every problem in one pass -------------------------------


def test_validate_lists_every_problem_with_what_a_shape_needs():
    from optimizer.scenario.models import scenario_from_dict

    data = yaml.safe_load((CONFIGS / "demo.yaml").read_text(encoding="utf-8"))
    del data["products"][0]["geometry"]["length"]
    data["products"][0]["cook_rule"] = "fda-poultry-typo"
    data["products"][1]["cook_rule"] = "nope-rule"
    with pytest.raises(ScenarioError) as err:
        scenario_from_dict(data, "hand-written.yaml")
    lines = str(err.value).splitlines()[1:]
    assert "products[0].geometry.length: required field is missing; a slab needs " in (
        "\n".join(lines)
    )
    assert any(line.startswith("products[0].cook_rule: 'fda-poultry-typo'") for line in lines)
    assert any("did you mean 'fda-food-code-2022-poultry'" in line for line in lines)
    assert any(line.startswith("products[1].cook_rule: 'nope-rule'") for line in lines)


def test_rules_command_lists_shipped_rules_and_rule_fields(capsys):
    import json

    from optimizer.cli.app import main
    from optimizer.scenario.models import builtin_rules

    assert main(["rules", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [r["name"] for r in data["rules"]] == sorted(builtin_rules())
    assert all(r["source"] and r["requirement"] for r in data["rules"])
    fields = {(f["kind"], f["field"]) for f in data["fields"]}
    assert {("cook", "core_temperature"), ("chill", "steps"), ("freeze", "within")} <= fields
    assert all(f["meaning"] for f in data["fields"])


def test_loadings_that_cool_alike_are_named_once():
    import pandas as pd

    from optimizer.planning.run import alike_loadings

    def rows(spaced_factor):
        return pd.DataFrame(
            [
                {
                    "product": p,
                    "oven": "o",
                    "oven_setting": "s",
                    "tunnel": "t",
                    "tunnel_setting": "c",
                    "loading": ld,
                    "chill_min": m * (spaced_factor if ld == "spaced" else 1),
                }
                for p, m in (("A", 30.0), ("B", 55.0))
                for ld in ("full", "spaced")
            ]
        )

    notes = alike_loadings(rows(1.0))
    assert len(notes) == 1 and "full, spaced of t cool alike" in notes[0]
    assert alike_loadings(rows(0.8)) == []


# -- first screen: the plan in plain sentences -------------------------------------------


def test_explanation_names_the_bottleneck_orders_unmade_products_and_small_batches():
    import dataclasses

    from optimizer.planning.inputs import Objective, OrderData, SolveOptions
    from optimizer.planning.results import kg_table
    from optimizer.planning.solve import plan
    from optimizer.reporting.explain import not_made_notes, plan_explanation
    from tests._planner_cases import one_line

    # A must make 200 kg and is worth little; C is optional and worth nothing;
    # B fills the rest. The belt takes 10 kg/m2 x 1 m x 1 m/min = 10 kg/min and
    # the hot hold is 5 min, so a batch of B cannot be more than about 50 kg.
    inputs = one_line(
        products={
            "A": (10.0, 50.0, 1.0, {"value_per_kg": 1.0}),
            "B": (10.0, 40.0, 1.0, {"value_per_kg": 5.0, "hot_hold_min": 5.0}),
            "C": (10.0, 40.0, 1.0, {"value_per_kg": 0.0}),
        },
        orders=[OrderData("A", min_kg=200.0), OrderData("B"), OrderData("C")],
        objective=Objective.MOST_VALUE,
    )
    inputs = dataclasses.replace(inputs, currency="EUR")
    result = plan(inputs, SolveOptions(time_limit_s=30))
    assert result.status.has_plan
    lines = plan_explanation(result, inputs, not_made_notes(kg_table(result, inputs)))
    text = "\n".join(lines)
    assert "limits the plan" in lines[0] and "EUR" in lines[0]
    a = next(line for line in lines if line.startswith("A: "))
    assert "order minimum" in a and "on oven-1 at hot" in a
    c = next(line for line in lines if line.startswith("C: "))
    assert "not made" in c and "no minimum order" in c
    assert "hot hold" in text and "B" in text
    assert "_" not in text.replace("hot_hold", "")  # no raw codes
