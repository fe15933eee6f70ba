"""The assumptions register (optimizer.dwell.assumptions) and the loading factor it lists.

Each default is checked both ways: reported when the scenario leaves the
value out, absent once the scenario gives it.
"""

from __future__ import annotations

import copy
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
import yaml

from optimizer.dwell import assumptions as reg
from optimizer.dwell import convert
from optimizer.scenario.models import scenario_from_dict
from thermal.convection import CORRELATIONS

DEMO = Path(__file__).resolve().parents[1] / "configs" / "demo.yaml"
RAW = yaml.safe_load(DEMO.read_text(encoding="utf-8"))


def register(change: Callable[[dict[str, Any]], None] | None = None):
    data = copy.deepcopy(RAW)
    if change is not None:
        change(data)
    return reg.assumptions(scenario_from_dict(data))


def topics(items, topic: str) -> list[str]:
    """The subjects of ``topic``'s items (a merged item names several, comma-separated)."""
    return [
        name.split(" (")[0] for a in items if a.topic == topic for name in a.applies_to.split(", ")
    ]


def _product(data: dict[str, Any], name: str) -> dict[str, Any]:
    return next(p for p in data["products"] if p["name"] == name)


# ------------------------------------------------------------------------ the demo


def test_demo_register_lists_the_loading_assumption_for_both_loadings():
    items = register()
    loading = [a for a in items if a.topic == "loading factor"]
    assert [a.applies_to for a in loading] == ["chill-tunnel / full", "chill-tunnel / spaced"]
    # 1 - 0.5 x coverage: 80 % -> 0.60, 50 % -> 0.75
    assert loading[0].value.startswith("0.60 x") and "80 %" in loading[0].value
    assert loading[1].value.startswith("0.75 x") and "50 %" in loading[1].value
    assert all(a.direction == "shorter" and a.source == "default" for a in loading)
    assert all(a.field.endswith(".h_factor") for a in loading)
    assert "probe logs" in loading[0].note


def test_register_opens_with_what_could_shorten_a_dwell():
    items = register()
    ranks = [reg.DIRECTIONS.index(a.direction) for a in items]
    assert ranks == sorted(ranks)
    assert items[0].direction == "shorter"
    assert {a.direction for a in items} == {"shorter", "unknown"}
    # a default margin adds the safe-side kind, and it sorts last
    with_margin = register(_drop_margin)
    assert with_margin[-1].direction == "longer" and with_margin[-1].topic == "time margin"
    table = reg.assumptions_table(items)
    assert list(table.columns) == list(reg.ASSUMPTION_COLUMNS)
    assert len(table) == len(items) == len(reg.assumption_lines(items))


# ------------------------------------------------------------------- each default both ways


def _give_h_factor(d):
    d["tunnels"][0]["loadings"][0]["h_factor"] = 0.7


def _drop_largest(d):
    _product(d, "chicken-fillet")["geometry"].pop("largest")


def _give_emissivity(d):
    _product(d, "pork-sausage")["emissivity"] = 0.92


def _give_wall(d):
    d["ovens"][0]["settings"][0]["wall_temperature"] = "190 degC"


def _give_freezing_point(d):
    _product(d, "chicken-fillet")["freezing_point"] = "-1.5 degC"


def _give_latent_heat(d):
    _product(d, "salmon-portion")["properties"]["latent_heat"] = "250 kJ/kg"


def _drop_margin(d):
    d.pop("safety_margin")


@pytest.mark.parametrize(
    ("topic", "subject", "default", "given"),
    [
        ("loading factor", "chill-tunnel / full", None, _give_h_factor),
        ("largest piece", "chicken-fillet", _drop_largest, None),
        ("emissivity", "pork-sausage", None, _give_emissivity),
        ("wall temperature", "rack-oven-1 / roast-180", None, _give_wall),
        ("freezing point", "chicken-fillet", None, _give_freezing_point),
        ("latent heat", "salmon-portion", None, _give_latent_heat),
        ("time margin", "every dwell", _drop_margin, None),
        ("temperature margin", "every rule", _drop_margin, None),
    ],
)
def test_each_default_is_reported_when_applied_and_absent_when_given(
    topic, subject, default, given
):
    applied = register(default)
    assert subject in topics(applied, topic)
    replaced = register(given) if given is not None else register()
    assert subject not in topics(replaced, topic)


def test_largest_piece_flagged_by_name_only_where_missing():
    # Every demo product gives largest or largest_scale.
    assert topics(register(), "largest piece") == []
    items = register(_drop_largest)
    (item,) = [a for a in items if a.topic == "largest piece"]
    assert item.applies_to == "chicken-fillet" and item.direction == "shorter"
    assert item.field == "products[0].geometry.largest"


def test_explicit_emissivity_and_properties_are_not_listed():
    items = register()
    # salmon gives emissivity 0.85 and measured properties
    assert "salmon-portion" not in topics(items, "emissivity")
    assert "salmon-portion" not in topics(items, "food properties")
    assert "chicken-fillet" in topics(items, "food properties")


def test_transfer_defaults():
    items = register()
    assert topics(items, "transfer loading") == ["chill-tunnel"]
    assert topics(items, "transfer") == [] and topics(items, "hot hold") == []

    def no_transfer(d):
        d["tunnels"][0].pop("transfer")

    (item,) = [a for a in register(no_transfer) if a.topic == "transfer"]
    assert item.direction == "shorter" and "30 min" in item.value  # the hot-hold limit

    def no_hold(d):
        d["tunnels"][0].pop("hot_hold_max")

    assert topics(register(no_hold), "hot hold") == ["chill-tunnel"]


def test_surface_evaporation_only_for_unsaturated_ovens():
    subjects = topics(register(), "surface evaporation")
    # roast-180 (dew point 45 °C) and cook-150 (dew point 60 °C) are far from
    # saturation; steam-95 at 95 % relative humidity is not listed
    assert subjects == ["rack-oven-1 / roast-180", "rack-oven-1 / cook-150"]


# --------------------------------------------------------------------- the loading factor


def test_loading_factor_is_the_coverage_estimate_unless_calibrated_or_measured():
    scenario = scenario_from_dict(copy.deepcopy(RAW))
    tunnel = scenario.tunnels[0]
    full, spaced = tunnel.loadings
    setting = tunnel.settings[0]
    assert convert.loading_factor(full, setting) == pytest.approx(0.6)
    assert convert.loading_factor(spaced, setting) == pytest.approx(0.75)

    data = copy.deepcopy(RAW)
    for s in data["tunnels"][0]["settings"]:
        for z in s["zones"]:
            z.pop("air_speed")
            z["measured_h"] = "25 W/m**2/K"
    measured = scenario_from_dict(data)
    m_tunnel = measured.tunnels[0]
    # a setting of measured zones only: h taken as measured on the loaded belt
    assert convert.loading_factor(m_tunnel.loadings[0], m_tunnel.settings[0]) == 1.0
    # ... and the register says so, per loading, with the settings concerned
    listed = [a for a in reg.assumptions(measured) if a.topic == "loading factor"]
    assert [a.applies_to for a in listed] == [
        "chill-tunnel / full (chill-0, chill-minus-8)",
        "chill-tunnel / spaced (chill-0, chill-minus-8)",
    ]
    assert all(a.value.startswith("1: the measured_h") for a in listed)
    _give_h_factor(data)
    calibrated = scenario_from_dict(data).tunnels[0]
    assert convert.loading_factor(calibrated.loadings[0], calibrated.settings[0]) == 0.7


# ------------------------------------------------------------------- from the dwell table


def _row(product: str, notes: str) -> dict[str, Any]:
    return {"product": product, "oven": "o", "oven_setting": "s", "notes": notes}


def test_dwell_notes_become_assumptions_with_their_direction():
    # The messages are the physics layer's own (thermal.convection).
    (laminar,) = CORRELATIONS["flat_plate_laminar"].out_of_range(Re=2.0e6)
    (ratio,) = CORRELATIONS["sphere_whitaker"].out_of_range(**{"mu/mu_s": 0.9})
    (ratio2,) = CORRELATIONS["sphere_whitaker"].out_of_range(**{"mu/mu_s": 0.85})
    (turbulent,) = CORRELATIONS["flat_plate_turbulent"].out_of_range(Re=1.0e4)
    condensing = (
        "surface_temperature 41.3 °C is below the dew point 60 °C of the air: condensation "
        "on the product is not modelled, so h is underestimated"
    )
    dwell = pd.DataFrame(
        [
            _row("a", f"{laminar}; {ratio}"),
            _row("b", f"{ratio2}; {condensing}"),
            _row("c", turbulent),
            _row("d", ""),
        ]
    )
    items = reg.dwell_assumptions(dwell)
    by_value = {a.value.split(":")[0]: a for a in items if a.topic == "correlation out of range"}
    assert by_value["flat plate, laminar"].direction == "longer"
    assert by_value["flat plate, turbulent from the leading edge"].direction == "shorter"
    whitaker = by_value["Whitaker sphere"]
    assert whitaker.direction == "unknown"
    assert "0.85 to 0.9" in whitaker.value and whitaker.applies_to == "a (o / s), b (o / s)"
    (cond,) = [a for a in items if a.topic == "condensation"]
    assert cond.direction == "longer" and cond.applies_to == "o / s"
    assert reg.dwell_assumptions(pd.DataFrame(columns=["notes"])) == []


# ------------------------------------------------------------------ shown in the outputs

SAMPLE = DEMO.parents[1] / "reports" / "sample"


def test_demo_report_opens_its_assumptions_with_what_could_shorten_a_dwell():
    # reports/sample is the demo's plan as it is now (tests/test_sample_report.py)
    import html as html_lib
    import json
    import re

    text = (SAMPLE / "report.html").read_text(encoding="utf-8")
    body = text[text.index('data-table="assumptions"') :]
    body = body[: body.index("</table>")]
    rows = re.findall(
        r"<tr><td data-value=\"([a-z]+)\">[a-z]+</td><td data-value=\"([^\"]*)\"", body
    )
    directions = [d for d, _ in rows]
    assert directions and directions[0] == "shorter"
    assert directions == sorted(directions, key=reg.DIRECTIONS.index)
    assert [html_lib.unescape(t) for _, t in rows][:2] == ["loading factor", "loading factor"]
    caution = text[text.index('class="caution"') : text.index("</section>")]
    assert "chill-tunnel / full, chill-tunnel / spaced is estimated from the belt coverage" in (
        html_lib.unescape(caution)
    )
    plan = json.loads((SAMPLE / "plan.json").read_text(encoding="utf-8"))
    records = plan["tables"]["assumptions"]
    assert len(records) == len(rows)
    assert records[0]["topic"] == "loading factor" and records[0]["direction"] == "shorter"
    assert (SAMPLE / "assumptions.csv").exists()


def test_caution_names_products_without_a_largest_piece():
    from optimizer.reporting.html import assumption_cautions

    lines = assumption_cautions(reg.assumptions_table(register(_drop_largest)))
    assert any(
        line.startswith("No largest-piece size was given for chicken-fillet:") for line in lines
    )
    assert not any(
        "largest-piece" in line for line in assumption_cautions(reg.assumptions_table(register()))
    )


def test_validate_lists_the_register_as_warnings_and_still_passes(capsys):
    import json

    from optimizer.cli.app import main

    assert main(["validate", str(DEMO)]) == 0
    out = capsys.readouterr()
    lines = out.out.splitlines()
    assert lines[0].startswith(f"{DEMO}: valid (")
    warnings = [line for line in lines if line.startswith("warning: ")]
    assert warnings[0].startswith("warning: loading factor (could shorten the dwell): ")
    assert out.err == ""
    assert main(["validate", str(DEMO), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["valid"] is True
    assert len(data["warnings"]) == len(data["assumptions"]) == len(register())
    assert main(["validate", str(DEMO), "--quiet"]) == 0
    assert "warning" not in capsys.readouterr().out
