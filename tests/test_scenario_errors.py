"""Bad scenario input: one line per problem naming the field and what is accepted.

Each case starts from the shipped demo scenario and breaks one thing. The
library check asserts the exact line ``load_scenario`` reports. The command
line check runs ``corepace dwell`` and ``corepace plan`` (the commands that
write output and the dwell-table cache) on every case and asserts exit code
2, one stderr line per problem naming the field, no traceback, and that
nothing was written: not in ``--out``, not in ``--cache-dir``, not in the
working directory (where the default output would go) and not in the default
cache directory.
"""

from __future__ import annotations

import copy
import re
from pathlib import Path
from typing import Any

import pytest
import yaml

from optimizer.cli.app import main
from optimizer.dwell.checks import checked_scenario_from_dict as scenario_from_dict
from optimizer.dwell.checks import load_checked_scenario as load_scenario
from optimizer.scenario.models import ScenarioError

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DEMO = yaml.safe_load((CONFIGS / "demo.yaml").read_text(encoding="utf-8"))


def _set(path: str, value: Any):
    def change(data: dict) -> None:
        node: Any = data
        keys = [int(k) if k.isdigit() else k for k in path.split("/")]
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = value

    return change


def _drop(path: str):
    def change(data: dict) -> None:
        node: Any = data
        keys = [int(k) if k.isdigit() else k for k in path.split("/")]
        for k in keys[:-1]:
            node = node[k]
        del node[keys[-1]]

    return change


# (id, change, expected line, other lines allowed)
CASES = [
    (
        "wrong-dimension",
        _set("ovens/0/settings/1/air_temperature", "3 m/s"),
        "ovens[0].settings[1].air_temperature: expected a temperature like '175 degC' or a "
        "number in °C, got '3 m/s'",
    ),
    (
        "negative-size",
        _set("products/2/geometry/diameter", -0.01),
        "products[2].geometry.diameter: must be > 0 m, got -0.01 m",
    ),
    (
        "negative-size-with-unit",
        _set("products/2/geometry/diameter", "-10 mm"),
        "products[2].geometry.diameter: must be > 0 m, got '-10 mm' = -0.01 m",
    ),
    (
        "unparseable-number",
        _set("products/0/geometry/thickness", "22 mm x"),
        "products[0].geometry.thickness: expected a length like '28 mm' or a number in m, "
        "got '22 mm x'",
    ),
    (
        "order-unknown-product",
        _set("orders/0/product", "chicken-filet"),
        "orders[0].product: 'chicken-filet' is not a product; known: 'beef-meatball', "
        "'beef-patty', 'chicken-fillet', 'ham-log', 'lasagne-tray', 'pork-sausage', "
        "'salmon-portion', 'veg-dumpling'",
    ),
    (
        "order-unknown-shift",
        _set("orders/0/due_shift", "wed-early"),
        "orders[0].due_shift: 'wed-early' is not a shift; known: 'mon-early', 'mon-late', "
        "'tue-early'",
    ),
    (
        "tunnel-fed-by-missing-oven",
        _set("tunnels/0/fed_by", ["rack-oven-1", "cook-chamber-2", "oven-3"]),
        "tunnels[0].fed_by[2]: 'oven-3' is not an oven; known: 'cook-chamber-2', 'rack-oven-1'",
    ),
    (
        "cook-target-below-initial",
        _set("products/0/initial_temperature", "80 degC"),
        "products[0].cook_rule: cook target 74.5 °C (margin included) must be above the "
        "initial temperature 80 °C",
    ),
    (
        "chill-target-at-or-below-tunnel-air",
        _set(
            "products/0/chill_rule",
            {"kind": "chill", "source": "test", "exit_core_temperature": "-9 degC"},
        ),
        "products[0].chill_rule: chill target -9.5 °C is at or below the air of every tunnel "
        "setting (coldest -8 °C); physically unreachable",
    ),
    (
        "duplicate-product-name",
        _set("products/7/name", "salmon-portion"),
        "products[7].name: 'salmon-portion' is already used by products[5]; names must be unique",
    ),
    (
        "duplicate-setting-name",
        _set("ovens/0/settings/1/name", "roast-180"),
        "ovens[0].settings[1].name: 'roast-180' is already used by ovens[0].settings[0]; "
        "names must be unique",
    ),
    (
        "min-above-max",
        _set("orders/1/min_kg", "3 t"),
        "orders[1].min_kg: must be <= max_kg (2000 kg), got 3000 kg",
    ),
    (
        "unknown-rule-set",
        _set("products/1/cook_rule", "fda-poultry"),
        "products[1].cook_rule: 'fda-poultry' is not a known cook rule set (did you mean "
        "'fda-food-code-2022-poultry'?); known: 'brambleford-ready-meal-75', "
        "'fda-food-code-2022-comminuted', 'fda-food-code-2022-poultry', "
        "'fda-food-code-2022-whole-muscle', 'fsis-appendix-a-salmonella-6.5log'",
    ),
    (
        "rule-of-the-wrong-kind",
        _set("products/0/cook_rule", "fda-food-code-2022-cooling"),
        "products[0].cook_rule: 'fda-food-code-2022-cooling' is a chill rule set, expected a "
        "cook rule set; known: 'brambleford-ready-meal-75', 'fda-food-code-2022-comminuted', "
        "'fda-food-code-2022-poultry', 'fda-food-code-2022-whole-muscle', "
        "'fsis-appendix-a-salmonella-6.5log'",
    ),
    (
        "belt-min-above-max",
        _set("tunnels/0/belt_speed_min", "3 m/min"),
        "tunnels[0].belt_speed_min: must be <= belt_speed_max (2 m/min), got 3 m/min",
    ),
    (
        "unknown-field",
        _set("ovens/0/settings/0/speed", 3),
        "ovens[0].settings[0].speed: unknown field (did you mean 'air_speed'?); accepted "
        "fields: air_temperature, air_speed, measured_h, measured_h_source, relative_humidity, "
        "dew_point, name, wall_temperature, emissivity",
    ),
    (
        "missing-field",
        _drop("products/0/kg_per_tray"),
        "products[0].kg_per_tray: required field is missing",
    ),
    (
        "unknown-shape",
        _set("products/0/geometry/shape", "cube"),
        "products[0].geometry.shape: must be one of 'slab', 'cylinder', 'sphere', "
        "'finite_cylinder', 'block', got 'cube'",
    ),
    (
        "composition-sum",
        _set("products/0/composition/water", 0.5),
        "products[0].composition: mass fractions must add up to 1 (±0.001), got 0.75",
    ),
    (
        "fractional-tray-count",
        _set("ovens/0/trays", 2.5),
        "ovens[0].trays: must be a whole number from 1 to 10,000, got 2.5",
    ),
    (
        "humidity-as-percent-number",
        _set("ovens/1/settings/0/relative_humidity", 95),
        "ovens[1].settings[0].relative_humidity: must be in [0, 1] (or a percentage like "
        "'65 %'), got 95",
    ),
    (
        "dew-point-above-air",
        _set("ovens/0/settings/0/dew_point", "190 degC"),
        "ovens[0].settings[0].dew_point: must be <= the air temperature (180 °C), got 190 °C",
    ),
    (
        "zero-coverage",
        _set("tunnels/0/loadings/0/coverage", 0),
        "tunnels[0].loadings[0].coverage: must be in (0, 1] (or a percentage like '65 %'), got 0",
    ),
    (
        "zones-do-not-cover-the-tunnel",
        _set("tunnels/0/settings/1/zones/0/length_fraction", 0.3),
        "tunnels[0].settings[1].zones: zone shares must cover the tunnel length 34 m exactly, "
        "got 30.6 m (0.9 of it)",
    ),
    (
        "speed-and-measured-h",
        _set("ovens/1/settings/0/air_speed", 2),
        "ovens[1].settings[0]: give exactly one of air_speed (e.g. '2.5 m/s') or measured_h "
        "(e.g. '25 W/m**2/K'), not both",
    ),
    (
        "cooling-step-upwards",
        _set(
            "products/0/chill_rule",
            {"kind": "chill", "source": "x", "steps": [{"from": 21, "to": 57, "within": 60}]},
        ),
        "products[0].chill_rule.steps[0].to: must be below from (21 °C), got 57 °C",
    ),
    (
        "shift-unknown-machine",
        _set("shifts/0/machines", {"oven-9": 300}),
        "shifts[0].machines.oven-9: 'oven-9' is not an oven or tunnel; known: 'chill-tunnel', "
        "'cook-chamber-2', 'rack-oven-1'",
    ),
    (
        "largest-smaller-than-nominal",
        _set("products/0/geometry/largest", {"thickness": "10 mm"}),
        "products[0].geometry.largest.thickness: must be >= the nominal thickness 0.022 m "
        "(plan for the largest piece), got 0.01 m",
    ),
    (
        "radius-and-diameter",
        _set("products/3/geometry/radius", "40 mm"),
        "products[3].geometry: give exactly one of radius or diameter (e.g. '14 mm'), not both",
    ),
    (
        "unknown-top-level-field",
        _set("ovenz", []),
        "ovenz: unknown field (did you mean 'ovens'?); accepted fields: plant, description, "
        "currency, ovens, tunnels, products, shifts, orders, rules, objective, safety_margin, "
        "back_to_back",
    ),
    (
        "unknown-objective",
        _set("objective", "fastest"),
        "objective.kind: must be one of 'most_kg', 'most_value', 'soonest' or 'least_energy', "
        "got 'fastest'",
    ),
    (
        "shadowing-a-shipped-rule",
        _set(
            "rules/fda-food-code-2022-poultry",
            {"kind": "cook", "source": "x", "core_temperature": 70},
        ),
        "rules.fda-food-code-2022-poultry: this name is a shipped rule set; choose another "
        "name for a plant rule",
    ),
    (
        "hold-without-temperature",
        _set(
            "rules/brambleford-ready-meal-75",
            {
                "kind": "cook",
                "source": "x",
                "hold": "1 min",
                "lethality": {"organism": "L", "log_reduction": 5, "d_ref": 1, "t_ref": 70, "z": 7},
            },
        ),
        "rules.brambleford-ready-meal-75.hold: given without core_temperature",
    ),
    (
        "empty-cook-rule",
        _set("products/0/cook_rule", {"kind": "cook", "source": "x"}),
        "products[0].cook_rule: a cook rule needs core_temperature, alternatives or lethality; "
        "none was given",
    ),
    (
        "conductivity-wrong-unit",
        _set("products/5/properties/conductivity", "0.46 W/m"),
        "products[5].properties.conductivity: expected a conductivity like '0.45 W/m/K' or a "
        "number in W/(m K), got '0.46 W/m'",
    ),
    (
        "transfer-longer-than-hot-hold",
        _set("tunnels/0/transfer/duration", "45 min"),
        "tunnels[0].transfer.duration: must be <= hot_hold_max (30 min), got 45 min",
    ),
    (
        "stops-exceed-shift",
        _set("shifts/1/stops/0/minutes", "9 h"),
        "shifts[1].stops: stops of 'chill-tunnel' (540 min) exceed its available minutes",
    ),
    (
        "stop-start-past-shift",
        _set("shifts/1/stops/0/start", "450 min"),
        "shifts[1].stops[0].start: the stop ends at 495 min, after its machine's 480 min in "
        "the shift",
    ),
    (
        "fixed-stops-overlap",
        _set(
            "shifts/0/stops",
            [
                {"minutes": 30, "start": 0, "reason": "cleaning"},
                {"minutes": 10, "machine": "rack-oven-1", "start": 20, "reason": "seal"},
            ],
        ),
        "shifts[0].stops[1].start: overlaps another stop of 'rack-oven-1' (which ends at 30 min)",
    ),
    (
        "section-not-a-list",
        _set("shifts", {"name": "mon"}),
        "shifts: expected a list, got dict",
    ),
    (
        "zone-air-warming-along-the-tunnel",
        _set("tunnels/0/settings/0/zones/1/air_temperature", "5 degC"),
        "tunnels[0].settings[0].zones[1].air_temperature: must not be warmer than zones[0] "
        "(2 °C) — zone air must not get warmer along the tunnel, got 5 °C",
    ),
    (
        "humidity-air-cannot-hold",
        _set(
            "ovens/0/settings/0",
            {
                "name": "roast-180",
                "air_temperature": "180 degC",
                "air_speed": "4 m/s",
                "relative_humidity": "30 %",
            },
        ),
        "ovens[0].settings[0].relative_humidity: the saturation pressure exceeds the total "
        "pressure here, so at most 0.101 is possible (pure steam), got 0.3",
    ),
    (
        "empty-name",
        _set("ovens/0/name", "  "),
        "ovens[0].name: must be a non-empty name (text), got '  '",
    ),
]


def _write(tmp_path: Path, change) -> Path:
    data = copy.deepcopy(DEMO)
    change(data)
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return path


def _problems(path: Path) -> list[str]:
    with pytest.raises(ScenarioError) as exc:
        load_scenario(path)
    return exc.value.problems


def test_there_are_at_least_twenty_distinct_cases():
    assert len({c[0] for c in CASES}) == len(CASES) >= 20
    assert len({c[2] for c in CASES}) == len(CASES)


@pytest.mark.parametrize(("case", "change", "line"), CASES, ids=[c[0] for c in CASES])
def test_bad_input_names_the_field(case, change, line, tmp_path):
    problems = _problems(_write(tmp_path, change))
    assert line in problems, "\n".join(problems)
    assert all("\n" not in p for p in problems)


# "<file>: <field path>: <what is accepted, what was given>"
FIELD_LINE = re.compile(r"^bad\.yaml: [A-Za-z_][\w.\[\]\-]*: \S")


@pytest.mark.parametrize("command", ["dwell", "plan"])
@pytest.mark.parametrize(("case", "change", "line"), CASES, ids=[c[0] for c in CASES])
def test_command_line_exits_2_and_writes_nothing(
    command, case, change, line, tmp_path, monkeypatch, capsys
):
    work = tmp_path / "work"
    work.mkdir()
    path = _write(work, change)
    problems = _problems(path)
    # Default output (corepace-out/ under the working directory) and default
    # cache ($XDG_CACHE_HOME) both land inside `work` if anything is written.
    monkeypatch.chdir(work)
    monkeypatch.setenv("XDG_CACHE_HOME", str(work / "xdg-cache"))
    monkeypatch.setenv("HOME", str(work / "home"))
    # matplotlib's own font cache, made on its first import in a fresh process, is the
    # library's and not corepace output: kept outside `work` so the check below does
    # not depend on which test imported matplotlib first
    monkeypatch.setenv("MPLCONFIGDIR", str(tmp_path / "mpl"))
    out, cache = work / "out", work / "cache"
    code = main([command, "bad.yaml", "--out", str(out), "--cache-dir", str(cache)])
    captured = capsys.readouterr()
    assert code == 2
    assert "Traceback" not in captured.err and "Traceback" not in captured.out
    lines = captured.err.splitlines()
    assert lines == [f"bad.yaml: {p}" for p in problems]
    assert f"bad.yaml: {line}" in lines
    bad = [x for x in lines if not FIELD_LINE.match(x)]
    assert not bad, bad
    assert not out.exists() and not cache.exists()
    assert sorted(p.name for p in work.iterdir()) == ["bad.yaml"]


def test_all_problems_are_reported_together(tmp_path):
    data = copy.deepcopy(DEMO)
    for _, change, _ in (CASES[0], CASES[1], CASES[4], CASES[11], CASES[14]):
        change(data)
    with pytest.raises(ScenarioError) as exc:
        scenario_from_dict(data, "demo-broken.yaml")
    expected = {CASES[i][2] for i in (0, 1, 4, 11, 14)}
    assert expected <= set(exc.value.problems)
    assert str(exc.value).startswith(f"{len(exc.value.problems)} problems in demo-broken.yaml:")


def test_a_single_problem_gives_exactly_one_line():
    data = copy.deepcopy(DEMO)
    CASES[0][1](data)
    with pytest.raises(ScenarioError) as exc:
        scenario_from_dict(data)
    assert exc.value.problems == [CASES[0][2]]
