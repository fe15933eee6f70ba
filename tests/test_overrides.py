"""Dotted-path overrides and scenario files that extend a base scenario."""

from __future__ import annotations

import pytest
import yaml

from optimizer.scenario.overrides import (
    Change,
    OverrideError,
    apply_changes,
    load_raw,
    parse_assignment,
)

BASE = {
    "name": "plant",
    "tunnels": [{"name": "main", "length": "18 m", "settings": [{"name": "cold", "t": -2}]}],
    "ovens": [{"name": "oven-1", "trays": 20}, {"name": "oven-2", "trays": 24}],
}


def test_parse_assignment_reads_yaml_values():
    assert parse_assignment("tunnels.main.length=24 m") == Change("tunnels.main.length", "24 m")
    assert parse_assignment("ovens.oven-1.trays=30") == Change("ovens.oven-1.trays", 30)
    assert parse_assignment("a.b=[1, 2]").value == [1, 2]


@pytest.mark.parametrize("text", ["tunnels.main.length", "=3", ""])
def test_parse_assignment_rejects_missing_parts(text):
    with pytest.raises(OverrideError, match="PATH=VALUE"):
        parse_assignment(text)


def test_apply_changes_by_name_and_index_without_touching_input():
    out = apply_changes(
        BASE,
        [
            Change("tunnels.main.length", "24 m"),
            Change("ovens.1.trays", 30),
            Change("tunnels.main.settings.cold.t", -5),
        ],
    )
    assert out["tunnels"][0]["length"] == "24 m"
    assert out["ovens"][1]["trays"] == 30
    assert out["tunnels"][0]["settings"][0]["t"] == -5
    assert BASE["tunnels"][0]["length"] == "18 m"
    assert BASE["ovens"][1]["trays"] == 24


def test_apply_changes_can_add_a_new_last_key():
    out = apply_changes(BASE, [Change("ovens.oven-1.changeover", "10 min")])
    assert out["ovens"][0]["changeover"] == "10 min"


def test_unknown_item_names_the_accepted_names():
    with pytest.raises(
        OverrideError, match=r"tunnels\.spiral: no item named 'spiral'; accepted: main"
    ):
        apply_changes(BASE, [Change("tunnels.spiral.length", "3 m")])


def test_unknown_field_lists_fields_present():
    with pytest.raises(OverrideError, match=r"tunnel: no field 'tunnel' here; fields present"):
        apply_changes(BASE, [Change("tunnel.main.length", "3 m")])


def test_extends_chain_resolves_in_order(tmp_path):
    (tmp_path / "base.yaml").write_text(yaml.safe_dump(BASE))
    (tmp_path / "mid.yaml").write_text(
        yaml.safe_dump(
            {"extends": "base.yaml", "changes": [{"set": "tunnels.main.length", "value": "20 m"}]}
        )
    )
    (tmp_path / "top.yaml").write_text(
        yaml.safe_dump(
            {"extends": "mid.yaml", "changes": {"ovens.oven-2.trays": 40}, "name": "what-if"}
        )
    )
    raw = load_raw(tmp_path / "top.yaml", [Change("tunnels.main.length", "24 m")])
    assert raw["tunnels"][0]["length"] == "24 m"
    assert raw["ovens"][1]["trays"] == 40
    assert raw["name"] == "what-if"
    assert "extends" not in raw and "changes" not in raw


def test_extends_cycle_is_reported(tmp_path):
    (tmp_path / "a.yaml").write_text("extends: b.yaml\n")
    (tmp_path / "b.yaml").write_text("extends: a.yaml\n")
    with pytest.raises(OverrideError, match="cycle"):
        load_raw(tmp_path / "a.yaml")


def test_changes_without_extends_and_bad_yaml(tmp_path):
    (tmp_path / "c.yaml").write_text("changes: {a: 1}\nname: x\n")
    with pytest.raises(OverrideError, match="without 'extends'"):
        load_raw(tmp_path / "c.yaml")
    (tmp_path / "d.yaml").write_text("name: [unclosed\n")
    with pytest.raises(OverrideError, match=r"line \d+: not valid YAML"):
        load_raw(tmp_path / "d.yaml")
    with pytest.raises(OverrideError, match="cannot read file"):
        load_raw(tmp_path / "missing.yaml")
