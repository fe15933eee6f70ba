"""``validate`` refuses what ``dwell`` and ``plan`` would refuse, naming the scenario field.

Each case runs the ``corepace`` command in-process on the demo scenario with
one change. Before these checks ``validate`` passed the first two cases
(which only ``plan`` refused, the second without naming the file or the
field), passed duplicate orders (whose minimums then added up), exited 3 on
a list given as a shape, and echoed names of any length and with NUL bytes.
Every refusal must be exit 2 with one line per problem, no traceback and
nothing written.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from tests.test_bad_input_files import DEMO_TEXT, ROOT, demo_with, run

EXIT_OK, EXIT_BAD_INPUT = 0, 2


def demo_data() -> dict:
    return yaml.safe_load(DEMO_TEXT)


def refused(capsys, tmp_path: Path, text: str, command: str = "validate") -> list[str]:
    """Problem lines of ``command`` on ``text``: exit 2, no traceback, nothing written."""
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    out, cache = tmp_path / "out", tmp_path / "cache"
    extra = [] if command == "validate" else ["--out", out, "--cache-dir", cache]
    code, stdout, stderr = run(capsys, command, path, *extra)
    assert code == EXIT_BAD_INPUT, stdout + stderr
    assert "Traceback" not in stdout + stderr and "internal error" not in stderr
    assert not out.exists() and not cache.exists()
    lines = [line for line in stderr.splitlines() if line.strip()]
    assert lines and all(line.startswith(f"{path}: ") for line in lines), lines
    return [line.removeprefix(f"{path}: ") for line in lines]


H_FACTOR = ("        coverage: 80 %\n", "        coverage: 80 %\n        h_factor: 2.0\n")
HUGE_LENGTH = ("thickness: 22 mm, length: 160 mm", "thickness: 22 mm, length: 1e308")


@pytest.mark.parametrize("command", ["validate", "plan"])
def test_loading_factor_out_of_range_names_the_loading(capsys, tmp_path, command):
    lines = refused(capsys, tmp_path, demo_with(*H_FACTOR), command)
    assert lines == ["tunnels[0].loadings[0].h_factor: must be in (0, 1.5], got 2.0"]


@pytest.mark.parametrize("command", ["validate", "plan"])
def test_piece_the_correlations_cannot_take_names_the_geometry(capsys, tmp_path, command):
    lines = refused(capsys, tmp_path, demo_with(*HUGE_LENGTH), command)
    assert len(lines) == 1
    assert lines[0].startswith("products[0].geometry: with ovens[0].settings[0] ('roast-180')")
    assert "reynolds: must be finite, got inf" in lines[0]


def test_air_beyond_the_property_model_names_the_air_temperature(capsys, tmp_path):
    text = demo_with("air_temperature: 150 degC", "air_temperature: 1e30")
    lines = refused(capsys, tmp_path, text)
    assert len(lines) == 1
    assert lines[0].startswith("ovens[0].settings[1].air_temperature: the air property model")
    text = demo_with("air_temperature: -8 degC", "air_temperature: -150 degC")
    (line,) = refused(capsys, tmp_path, text)
    assert line.startswith("tunnels[0].settings[1].zones[1].air_temperature: ")
    assert "no viscosity" in line


def test_one_bad_air_setting_for_every_product_names_the_setting(capsys, tmp_path):
    # 1e9 m/s over any piece is past the correlations: the setting, not the products
    text = demo_with("air_speed: 3 m/s\n", "air_speed: 1e300 m/s\n")
    lines = refused(capsys, tmp_path, text)
    assert lines[0].startswith("ovens[0].settings[1]: ") and "(for every product)" in lines[0]


def test_duplicate_orders_are_refused(capsys, tmp_path):
    data = demo_data()
    data["orders"].append(dict(data["orders"][0], min_kg="10 kg", max_kg="20 kg"))
    data["orders"].append(dict(data["orders"][1]))
    lines = refused(capsys, tmp_path, yaml.safe_dump(data))
    n = len(data["orders"])
    first = data["orders"][0]
    assert lines == [
        f"orders[{n - 2}]: the same product '{first['product']}' with due_shift "
        f"'{first['due_shift']}' as "
        "orders[0]; give one order per product and due shift (merge their min_kg and max_kg)",
        f"orders[{n - 1}]: the same product 'pork-sausage' with no due_shift as orders[1]; "
        "give one order per product and due shift (merge their min_kg and max_kg)",
    ]


def test_same_product_due_in_two_shifts_is_accepted(capsys, tmp_path):
    data = demo_data()
    first = data["orders"][0]
    other = next(s["name"] for s in data["shifts"] if s["name"] != first.get("due_shift"))
    data["orders"].append(dict(first, due_shift=other))
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(data), encoding="utf-8")
    code, out, err = run(capsys, "validate", path)
    assert code == EXIT_OK, out + err


@pytest.mark.parametrize("shape", [["cylinder"], {"a": 1}])
def test_shape_given_as_a_list_or_mapping(capsys, tmp_path, shape):
    data = demo_data()
    data["products"][1]["geometry"]["shape"] = shape
    (line,) = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert line.startswith("products[1].geometry.shape: must be one of 'slab', 'cylinder'")
    assert line.endswith(f"got {shape!r}")


def test_name_with_a_nul_byte_is_refused(capsys, tmp_path):
    data = demo_data()
    data["products"][0]["name"] = "chicken\x00fillet"
    lines = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert lines[0] == (
        "products[0].name: must not contain control characters, got '\\x00' at character 8 "
        "of 'chicken\\x00fillet'"
    )


def test_free_text_with_control_characters_is_refused(capsys, tmp_path):
    data = demo_data()
    data["description"] = "line one\nline two\ttabbed"  # newlines and tabs are text
    data["shifts"][0]["stops"][0]["reason"] = "wash\x07"
    (line,) = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert line.startswith("shifts[0].stops[0].reason: must not contain control characters")


def test_long_names_are_refused_and_cut_in_messages(capsys, tmp_path):
    data = demo_data()
    data["products"][0]["name"] = "p" * 5000
    data["orders"][1]["product"] = "q" * 150  # a name, but not a product
    lines = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert "products[0].name: must be a name of at most 200 characters, got 5,000" in lines
    unknown = next(line for line in lines if line.startswith("orders[1].product: "))
    assert "is not a product" in unknown and "q" * 70 not in unknown
    assert all(len(line) < 400 for line in lines)


def test_known_names_are_listed_up_to_a_dozen(capsys, tmp_path):
    data = demo_data()
    base = data["products"][0]
    data["products"] += [dict(base, name=f"extra-{i:02d}") for i in range(20)]
    data["orders"][0]["product"] = "nothing-like-it"
    (line,) = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert line.startswith("orders[0].product: 'nothing-like-it' is not a product; known: ")
    assert line.endswith(" and 16 more")


def test_counts_are_capped(capsys, tmp_path):
    data = demo_data()
    data["ovens"][0]["trays"] = 10**30
    data["tunnels"][0]["loadings"] = [{"name": f"l{i}", "coverage": 0.5} for i in range(101)]
    lines = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert lines[:2] == [
        "ovens[0].trays: must be a whole number from 1 to 10,000, got 1000000000...00000000000",
        "tunnels[0].loadings: at most 100 entries, got 101",
    ]
    data = demo_data()
    data["shifts"] = [dict(data["shifts"][1], name=f"s{i}") for i in range(1001)]
    lines = refused(capsys, tmp_path, yaml.safe_dump(data))
    assert "shifts: at most 1,000 entries, got 1,001" in lines


def test_demo_and_large_scenarios_still_validate(capsys):
    for name in ("demo.yaml", "large.yaml"):
        code, out, err = run(capsys, "validate", ROOT / "configs" / name)
        assert code == EXIT_OK, out + err
        assert not err.strip(), err
