"""Bad input at the file level: bytes, nesting, sizes, special files, huge values.

Each case runs the ``corepace`` command in-process and must give exit 2,
one line per problem naming the field (or the file and line), no
traceback, and nothing written under ``--out``. Before these checks each
case below exited 3 (internal error), hung, or grew without bound.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from optimizer.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO_TEXT = (ROOT / "configs" / "demo.yaml").read_text(encoding="utf-8")
EXIT_BAD_INPUT = 2


def run(capsys, *argv: object) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def demo_with(old: str, new: str) -> str:
    assert old in DEMO_TEXT, old
    return DEMO_TEXT.replace(old, new, 1)


def bad(capsys, tmp_path: Path, text: str | bytes, command: str = "validate") -> list[str]:
    """Run ``command`` on a scenario file; assert exit 2, no traceback, nothing written."""
    path = tmp_path / "case.yaml"
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    argv = [command, path] + (["--out", out, "--no-cache"] if command != "validate" else [])
    code, stdout, stderr = run(capsys, *argv)
    assert code == EXIT_BAD_INPUT, stdout + stderr
    assert "Traceback" not in stdout + stderr and "internal error" not in stderr
    assert not out.exists() or not any(out.iterdir())
    lines = [line for line in stderr.splitlines() if line.strip()]
    assert lines
    return lines


def test_non_utf8_scenario_names_the_file_and_line(capsys, tmp_path):
    lines = bad(capsys, tmp_path, b"plant: x\n# caf\xe9\n")
    assert len(lines) == 1
    assert "case.yaml: line 2: byte 0xe9 is not UTF-8 text" in lines[0]


def test_non_utf8_study_file(capsys, tmp_path):
    study = tmp_path / "study.yaml"
    study.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00binary")
    out = tmp_path / "out"
    code, stdout, stderr = run(capsys, "sweep", study, "--out", out, "--serial")
    assert code == EXIT_BAD_INPUT, stdout + stderr
    assert "study.yaml: line 1: byte 0x89 is not UTF-8 text" in stderr
    assert not out.exists()


@pytest.mark.parametrize(
    ("old", "opening", "closing"),
    [
        ("description: Two batch ovens and one cooling tunnel, eight products.", "[", "]"),
        ("    kg_per_tray: 6 kg", "[", "]"),
        ("    kg_per_tray: 6 kg", "{a: ", "}"),
    ],
    ids=["description-lists", "product-field-lists", "product-field-mappings"],
)
def test_deep_nesting_is_refused_with_the_line(capsys, tmp_path, old, opening, closing):
    key = old.split(":")[0]
    lines = bad(capsys, tmp_path, demo_with(old, f"{key}: {opening * 900}1{closing * 900}"))
    assert len(lines) == 1 and "nested deeper than" in lines[0] and ": line " in lines[0]


def test_nesting_through_aliases_is_refused(capsys, tmp_path):
    chain = "".join(f"x{i}: &x{i} [*x{i - 1}]\n" for i in range(1, 200))
    text = demo_with("plant: ", "x0: &x0 [1]\n" + chain + "plant: ")
    lines = bad(capsys, tmp_path, text)
    assert "nested deeper than" in lines[0]


def test_self_referring_alias(capsys, tmp_path):
    text = demo_with(
        "description: Two batch ovens and one cooling tunnel, eight products.",
        "description: &loop [1, *loop]",
    )
    lines = bad(capsys, tmp_path, text)
    assert "an alias refers to a value that contains it" in lines[0]


def test_huge_integer_names_the_field(capsys, tmp_path):
    lines = bad(capsys, tmp_path, demo_with("thickness: 22 mm", "thickness: 1" + "0" * 400))
    assert lines == [
        f"{tmp_path / 'case.yaml'}: products[0].geometry.thickness: expected a length like "
        "'28 mm' or a number in m, got an integer of about 400 digits"
    ]


def test_integer_too_long_for_python_is_refused(capsys, tmp_path):
    # Python refuses to read integers of more than 4300 digits from text.
    lines = bad(capsys, tmp_path, demo_with("thickness: 22 mm", "thickness: " + "9" * 5000))
    assert len(lines) == 1 and "line " in lines[0] and "digits" in lines[0]


def test_alias_bomb_fails_fast_with_a_short_line(capsys, tmp_path):
    # Nine aliases of nine aliases, eight levels deep: 9^8 (43 million) copies.
    bomb = "a0: &a0 [" + ", ".join(['"' + "x" * 40 + '"'] * 9) + "]\n"
    for i in range(1, 9):
        bomb += f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]\n"
    text = demo_with(
        "description: Two batch ovens and one cooling tunnel, eight products.",
        "description: *a8",
    )
    lines = bad(capsys, tmp_path, bomb + text)
    assert len(lines) == 1 and "expands to more than" in lines[0]
    assert len(lines[0]) < 300


def test_messages_echo_only_a_short_part_of_a_value(capsys, tmp_path):
    long_value = "9" * 5 + "x" * 200_000
    lines = bad(capsys, tmp_path, demo_with("thickness: 22 mm", f"thickness: '{long_value}'"))
    assert len(lines) == 1 and "products[0].geometry.thickness" in lines[0]
    assert len(lines[0]) < 400


def test_long_list_value_is_cut_in_the_message(capsys, tmp_path):
    items = ", ".join(["[" * 30 + "1" + "]" * 30] * 2000)
    lines = bad(capsys, tmp_path, demo_with("    kg_per_tray: 6 kg", f"    kg_per_tray: [{items}]"))
    assert len(lines) == 1 and "products[0].kg_per_tray" in lines[0] and len(lines[0]) < 400


def test_extends_dev_zero_is_refused(capsys, tmp_path):
    if not Path("/dev/zero").exists():
        pytest.skip("no /dev/zero here")
    lines = bad(capsys, tmp_path, "extends: /dev/zero\n", command="dwell")
    assert lines == [f"{tmp_path / 'case.yaml'}: /dev/zero: not a regular file; give a YAML file"]


def test_extends_fifo_is_refused_without_blocking(capsys, tmp_path):
    if not hasattr(os, "mkfifo"):
        pytest.skip("no FIFOs here")
    os.mkfifo(tmp_path / "pipe.yaml")
    lines = bad(capsys, tmp_path, "extends: pipe.yaml\n", command="plan")
    assert len(lines) == 1 and "pipe.yaml: not a regular file" in lines[0]


def test_extends_directory_and_oversized_file(capsys, tmp_path):
    (tmp_path / "folder").mkdir()
    lines = bad(capsys, tmp_path, "extends: folder\n")
    assert len(lines) == 1 and "folder: a directory; give a YAML file" in lines[0]
    big = tmp_path / "big.yaml"
    big.write_text("plant: x\n" + "# padding\n" * 500_000, encoding="utf-8")
    lines = bad(capsys, tmp_path, "extends: big.yaml\n")
    assert len(lines) == 1 and "accepted: at most 4 MiB" in lines[0]


def test_set_values_are_bounded_like_files(capsys, tmp_path):
    path = tmp_path / "demo.yaml"
    path.write_text(DEMO_TEXT, encoding="utf-8")
    deep = "[" * 100 + "]" * 100
    code, _, err = run(capsys, "validate", path, "--set", f"description={deep}")
    assert code == EXIT_BAD_INPUT and "Traceback" not in err
    assert "--set description: line 1: lists and mappings nested deeper than" in err
    nine = "[&a [1,1,1,1,1,1,1,1,1], [*a,*a,*a,*a,*a,*a,*a,*a,*a]]"
    code, _, err = run(capsys, "validate", path, "--set", f"description={nine}")
    assert code == EXIT_BAD_INPUT and "description: expected text" in err
