"""Scenario files: units at the edge, shipped rule sets, round trips, adapter."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pandas as pd
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.scenario.models import (
    ChillRuleSpec,
    CookRuleSpec,
    FreezeRuleSpec,
    ScenarioError,
    builtin_rules,
    dump_scenario,
    load_scenario,
    scenario_from_dict,
    scenario_json_schema,
    scenario_to_dict,
)
from optimizer.scenario.units import KINDS, UnitParseError, parse_quantity

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
SCENARIOS = [CONFIGS / "demo.yaml", CONFIGS / "large.yaml"]


# ------------------------------------------------------------------------ units


@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [
        # Source: NIST SP 811 (2008), Appendix B: t/°C = (t/°F - 32)/1.8; T/K = t/°C + 273.15
        ("160 degF", "temperature", (160 - 32) / 1.8),
        ("-40 degF", "temperature", -40.0),
        ("345.15 K", "temperature", 72.0),
        ("72 degC", "temperature", 72.0),
        ("72 °C", "temperature", 72.0),
        # Source: NIST SP 811, Appendix B: a Fahrenheit degree (interval) is 5/9 K
        ("18 delta_degF", "temperature_difference", 10.0),
        ("18 degF", "temperature_difference", 10.0),
        ("1.5 h", "time_min", 90.0),
        ("90 s", "time_min", 1.5),
        ("28 mm", "length", 0.028),
        # Source: NIST SP 811, Appendix B: 1 ft = 0.3048 m exactly, 1 lb = 0.45359237 kg exactly
        ("500 ft/min", "air_speed", 500 * 0.3048 / 60),
        ("300 lb", "mass", 300 * 0.45359237),
        ("0.02 m/s", "belt_speed", 1.2),
        ("3.5 kJ/kg/K", "specific_heat", 3500.0),
        ("25 W/m**2/K", "heat_transfer_coefficient", 25.0),
        ("65 %", "fraction", 0.65),
        ("250 kJ/kg", "specific_energy", 250e3),
        (0.45, "conductivity", 0.45),
        (12, "area_density", 12.0),
    ],
)
def test_parse_quantity_converts_to_the_documented_unit(text, kind, expected):
    assert parse_quantity(text, kind, "f") == pytest.approx(expected, rel=1e-12, abs=1e-12)


@given(st.floats(min_value=-400, max_value=1000, allow_nan=False))
@settings(max_examples=40, deadline=None)
def test_fahrenheit_strings_match_the_defining_formula(x):
    # Source: NIST SP 811 (2008), Appendix B.
    got = parse_quantity(f"{x!r} degF", "temperature", "t")
    assert got == pytest.approx((x - 32) / 1.8, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize(
    ("value", "kind", "message"),
    [
        (
            "3 m/s",
            "temperature",
            "ovens[0].air_temperature: expected a temperature like '175 degC' or a number "
            "in °C, got '3 m/s'",
        ),
        ("45 kg", "time_min", "expected a time like '45 min' or a number in min, got '45 kg'"),
        ("twelve", "length", "expected a length like '28 mm' or a number in m, got 'twelve'"),
        ("1 hour 30 min", "time_min", "got '1 hour 30 min'"),
        (True, "length", "got True"),
        (None, "mass", "got None"),
        (float("nan"), "mass", "got nan"),
        ("inf m", "length", "got 'inf m'"),
    ],
)
def test_parse_quantity_refuses_with_the_field_and_what_is_accepted(value, kind, message):
    with pytest.raises(UnitParseError) as exc:
        parse_quantity(value, kind, "ovens[0].air_temperature")
    assert message in str(exc.value)
    assert str(exc.value).startswith("ovens[0].air_temperature: ")
    assert "\n" not in str(exc.value)


def test_every_kind_example_parses_in_its_own_kind():
    for name, kind in KINDS.items():
        assert math.isfinite(parse_quantity(kind.example, name, name))


# ------------------------------------------------------------------ rule library


def test_shipped_rule_sets_carry_sources_and_expected_limits():
    rules = builtin_rules()
    for name, rule in rules.items():
        assert rule.source.strip(), name
    # Source: US FDA Food Code 2022, 3-401.11(A)(3): poultry 74 °C (165 °F) < 1 s
    poultry = rules["fda-food-code-2022-poultry"]
    assert isinstance(poultry, CookRuleSpec)
    assert poultry.core_temperature == 74.0
    # Source: US FDA Food Code 2022, 3-401.11(A)(1): 63 °C (145 °F) for 15 s
    whole = rules["fda-food-code-2022-whole-muscle"]
    assert (whole.core_temperature, whole.hold) == (63.0, 0.25)
    # Source: US FDA Food Code 2022, 3-401.11(A)(2): 68 °C 17 s; 63 °C 3 min; 66 °C 1 min
    comminuted = {h.core_temperature: h.hold for h in rules["fda-food-code-2022-comminuted"].holds}
    assert comminuted[68.0] == pytest.approx(17 / 60)
    assert comminuted[63.0] == 3.0 and comminuted[66.0] == 1.0
    # Source: US FDA Food Code 2022, 3-501.14(A): 57 → 21 °C in 2 h, → 5 °C in 6 h total
    cooling = rules["fda-food-code-2022-cooling"]
    assert isinstance(cooling, ChillRuleSpec)
    steps = [(s.start, s.end, s.within) for s in cooling.steps]
    assert steps == [(57.0, 21.0, 120.0), (57.0, 5.0, 360.0)]
    assert cooling.target == 5.0
    # Source: USDA FSIS Appendix B (1999): 130 → 80 °F in 1.5 h, 80 → 40 °F in 5 h
    fsis = rules["fsis-appendix-b-chill"]
    steps = [(s.start, s.end, s.within) for s in fsis.steps]
    assert steps[0] == (pytest.approx((130 - 32) / 1.8, abs=0.05), 26.7, 90.0)
    assert steps[1] == (26.7, pytest.approx((40 - 32) / 1.8, abs=0.05), 300.0)
    freeze = rules["freeze-core-minus-18"]
    assert isinstance(freeze, FreezeRuleSpec) and freeze.target == -18.0


def test_appendix_a_lethality_matches_two_rows_of_its_table():
    # Source: USDA FSIS Appendix A (1999), 6.5-log10 Salmonella table: 130 °F (54.4 °C)
    # for 112 min and 145 °F (62.8 °C) for 4 min. The shipped D and z must reproduce both.
    leth = builtin_rules()["fsis-appendix-a-salmonella-6.5log"].lethality
    assert leth is not None
    for temp_c, minutes in ((54.4, 112.0), (62.8, 4.0)):
        d_at = leth.d_ref * 10 ** ((leth.t_ref - temp_c) / leth.z)
        assert leth.log_reduction * d_at == pytest.approx(minutes, rel=0.01)


def test_appendix_a_rule_agrees_with_the_physics_layer_two_point_fit():
    from thermal.rules import LethalityRule

    # Source: USDA FSIS Appendix A (1999), 6.5-log10 Salmonella table rows as above.
    fit = LethalityRule.from_two_points("Salmonella", (62.8, 4 * 60.0), (54.4, 112 * 60.0), 6.5)
    leth = builtin_rules()["fsis-appendix-a-salmonella-6.5log"].lethality
    assert leth.d_ref * 60 == pytest.approx(fit.d_ref, rel=1e-3)
    assert leth.z == pytest.approx(-fit.z if fit.z < 0 else fit.z, rel=2e-3)


# ------------------------------------------------------------------ shipped files


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.name)
def test_shipped_scenarios_load_and_round_trip(path, tmp_path):
    first = load_scenario(path)
    out = tmp_path / "again.yaml"
    dump_scenario(first, out)
    second = load_scenario(out)
    assert second == first
    assert scenario_to_dict(second) == scenario_to_dict(first)
    # plain numbers only after a dump: nothing left to convert
    assert "degC" not in out.read_text(encoding="utf-8")


def test_demo_scenario_matches_the_brief():
    s = load_scenario(CONFIGS / "demo.yaml")
    assert len(s.ovens) == 2 and len(s.tunnels) == 1
    assert 6 <= len(s.products) <= 10
    shapes = {p.geometry.shape for p in s.products}
    assert shapes == {"slab", "cylinder", "sphere", "finite_cylinder", "block"}
    assert len(s.shifts) >= 2 and s.orders


def test_large_scenario_is_larger():
    demo = load_scenario(CONFIGS / "demo.yaml")
    large = load_scenario(CONFIGS / "large.yaml")
    assert len(large.ovens) == 3 and len(large.tunnels) == 2
    assert len(large.products) > len(demo.products)
    kinds = {type(large.chill_rule(p)).__name__ for p in large.products}
    assert {"ChillRuleSpec", "FreezeRuleSpec"} <= kinds


def test_units_in_the_demo_are_converted_once():
    s = load_scenario(CONFIGS / "demo.yaml")
    fillet = s.product("chicken-fillet")
    assert fillet.geometry.thickness == pytest.approx(0.022)
    assert fillet.geometry.largest_dims()["thickness"] == pytest.approx(0.030)
    oven = s.oven("cook-chamber-2")
    assert oven.settings[0].relative_humidity == pytest.approx(0.95)
    assert oven.settings[0].measured_h == 45.0
    tunnel = s.tunnel("chill-tunnel")
    assert tunnel.loadings[0].coverage == pytest.approx(0.8)
    assert tunnel.zone_fractions(tunnel.settings[1]) == pytest.approx([0.4, 0.6])
    meatball = s.product("beef-meatball")
    assert meatball.geometry.largest_dims()["radius"] == pytest.approx(0.015 * 1.15)


def test_shift_minutes_take_off_stops_and_apply_overrides():
    s = load_scenario(CONFIGS / "demo.yaml")
    early, late, tue = s.shifts
    assert early.available("rack-oven-1") == 450.0
    assert early.available("chill-tunnel") == 450.0
    assert late.available("chill-tunnel") == 435.0
    assert late.available("rack-oven-1") == 480.0
    assert tue.available("cook-chamber-2") == 360.0


def test_extends_and_changes_are_resolved_before_validation(tmp_path):
    child = tmp_path / "what-if.yaml"
    child.write_text(
        yaml.safe_dump(
            {
                "extends": str(CONFIGS / "demo.yaml"),
                "changes": [
                    {"set": "tunnels.chill-tunnel.length", "value": "30 m"},
                    {"set": "products.ham-log.geometry.diameter", "value": "84 mm"},
                ],
            }
        ),
        encoding="utf-8",
    )
    s = load_scenario(child)
    assert s.tunnel("chill-tunnel").length == 30.0
    assert s.product("ham-log").geometry.nominal()["radius"] == pytest.approx(0.042)
    tunnel = s.tunnel("chill-tunnel")
    assert tunnel.zone_fractions(tunnel.settings[1]) == pytest.approx([0.4, 0.6])


def test_a_missing_file_is_a_scenario_error(tmp_path):
    with pytest.raises(ScenarioError, match="cannot read file"):
        load_scenario(tmp_path / "nope.yaml")


def test_scenario_from_dict_refuses_a_non_mapping():
    with pytest.raises(ScenarioError, match="scenario: must be a mapping of fields, got list"):
        scenario_from_dict([1, 2])


# ------------------------------------------------------------------------ schema


def test_json_schema_describes_every_section_and_units():
    schema = scenario_json_schema()
    json.dumps(schema)  # serialisable
    assert set(schema["required"]) == {"plant", "ovens", "tunnels", "products", "shifts"}
    for key in ("ovens", "tunnels", "products", "shifts", "orders", "rules", "objective"):
        assert key in schema["properties"]
    text = json.dumps(schema, ensure_ascii=False)
    assert "a number in °C or a string with units" in text
    assert "'28 mm'" in text
    # the cooling step keys appear under their YAML names
    assert '"from"' in text and '"to"' in text


# ----------------------------------------------------------------------- adapter


def _dwell_stub(scenario) -> pd.DataFrame:
    from optimizer.planning.inputs import DWELL_COLUMNS

    return pd.DataFrame(columns=list(DWELL_COLUMNS))


def test_plan_inputs_maps_the_scenario_to_planner_data():
    from optimizer.planning.adapter import plan_inputs
    from optimizer.planning.inputs import Objective

    s = load_scenario(CONFIGS / "demo.yaml")
    inputs = plan_inputs(s, _dwell_stub(s))
    oven = inputs.ovens[0]
    assert oven.name == "rack-oven-1" and oven.load_unload_min == 14.0
    assert oven.settings == ("roast-180", "cook-150")
    tunnel = inputs.tunnels[0]
    assert tunnel.length_m == 34.0 and tunnel.coverage("full") == pytest.approx(0.8)
    assert inputs.objective is Objective.MOST_VALUE
    early, late, tue = inputs.shifts
    assert early.minutes == 450.0 and dict(early.machine_minutes) == {}
    assert late.minutes == 480.0 and late.available("chill-tunnel") == 435.0
    assert tue.available("cook-chamber-2") == 360.0 and tue.available("rack-oven-1") == 480.0
    assert inputs.product("ham-log").hot_hold_min == 30.0
    veg = next(o for o in inputs.orders if o.product == "veg-dumpling")
    assert veg.min_kg == 0.0 and veg.max_kg == 800.0
    sausage = next(o for o in inputs.orders if o.product == "pork-sausage")
    assert sausage.due_shift is None


def test_plan_inputs_without_orders_plans_every_product():
    from optimizer.planning.adapter import plan_inputs

    raw = yaml.safe_load((CONFIGS / "demo.yaml").read_text(encoding="utf-8"))
    raw.pop("orders")
    s = scenario_from_dict(raw)
    inputs = plan_inputs(s, _dwell_stub(s))
    assert [o.product for o in inputs.orders] == [p.name for p in s.products]
    assert all(o.max_kg == math.inf for o in inputs.orders)
