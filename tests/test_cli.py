"""End-to-end tests of the ``corepace`` command.

Most tests call :func:`optimizer.cli.main` in-process (fast); one runs the
installed console script in a subprocess.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from optimizer.cli import EXIT_BAD_INPUT, EXIT_OK, main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.yaml"


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def tree(path: Path) -> list[str]:
    return sorted(str(p.relative_to(path)) for p in path.rglob("*")) if path.exists() else []


def test_help_lists_every_command_with_examples(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == EXIT_OK
    for command in ("validate", "dwell", "schema"):
        assert command in out
    assert "examples:" in out
    assert "exit codes" in out


def test_usage_error_is_exit_2(capsys):
    code, _, err = run(capsys, "no-such-command")
    assert code == EXIT_BAD_INPUT
    assert "invalid choice" in err


def test_missing_scenario_file_is_one_line_exit_2_and_writes_nothing(capsys, tmp_path):
    out = tmp_path / "out"
    code, _, err = run(capsys, "dwell", tmp_path / "absent.yaml", "--out", out)
    assert code == EXIT_BAD_INPUT
    assert err.strip().splitlines() == [f"{tmp_path / 'absent.yaml'}: no such file"]
    assert "Traceback" not in err
    assert not out.exists()


def test_bad_input_with_json_gives_parseable_problems(capsys, tmp_path):
    code, stdout, err = run(capsys, "validate", tmp_path, "--json")
    assert code == EXIT_BAD_INPUT
    data = json.loads(stdout)
    assert data["status"] == "bad_input"
    assert data["problems"] == err.strip().splitlines()
    assert "is a directory" in data["problems"][0]


def test_console_script_runs(tmp_path):
    exe = Path(sys.executable).with_name("corepace")
    if not exe.exists():
        pytest.skip("console script not installed in this environment")
    result = subprocess.run(
        [str(exe), "validate", str(tmp_path / "absent.yaml")],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == EXIT_BAD_INPUT
    assert result.stderr.strip() == f"{tmp_path / 'absent.yaml'}: no such file"
