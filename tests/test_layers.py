"""The layer contract: each folder of optimizer/ imports only the layers below it.

The contracts live in pyproject.toml (``[tool.importlinter]``) and are
checked with import-linter, the same check ``make lint`` runs. The order is
scenario -> dwell -> (probes) -> planning -> studies -> reporting -> cli, with
thermal below all of them; only the dwell and probes layers import thermal
directly; no two sibling modules or packages import each other in a circle.
The failing cases run the checker on a copy of the source with one bad
import added, so a contract that could never fail would show here.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

LINT = (
    "import sys\n"
    "from importlinter.cli import lint_imports\n"
    "sys.exit(lint_imports(no_cache=True, no_logo=True))\n"
)


def lint(root: Path) -> subprocess.CompletedProcess[str]:
    """Run the contracts of ``root/pyproject.toml`` on the packages under ``root``."""
    return subprocess.run(
        [sys.executable, "-c", LINT],
        cwd=root,
        env={"PYTHONPATH": str(root), "PATH": "/usr/bin:/bin"},
        capture_output=True,
        text=True,
        timeout=300,
    )


@pytest.fixture()
def source_copy(tmp_path: Path) -> Path:
    """optimizer/, thermal/ and pyproject.toml copied into a temporary folder."""
    for package in ("optimizer", "thermal"):
        shutil.copytree(
            ROOT / package, tmp_path / package, ignore=shutil.ignore_patterns("__pycache__")
        )
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    return tmp_path


def test_the_layer_contracts_are_kept():
    done = lint(ROOT)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "3 kept, 0 broken" in done.stdout


def add_import(root: Path, module: str, line: str) -> None:
    path = root.joinpath(*module.split(".")).with_suffix(".py")
    if not path.exists():
        path = root.joinpath(*module.split("."), "__init__.py")
    text = path.read_text(encoding="utf-8")
    path.write_text(text + f"\n\ndef _added():\n    {line}\n", encoding="utf-8")


@pytest.mark.parametrize(
    ("module", "line", "contract", "shown"),
    [
        # a lower layer importing a higher one, lazily inside a function
        (
            "optimizer.scenario.units",
            "import optimizer.cli.app",
            "optimizer layers",
            "optimizer.scenario.units -> optimizer.cli.app",
        ),
        (
            "optimizer.planning.solve",
            "from optimizer.reporting import html",
            "optimizer layers",
            "optimizer.planning.solve -> optimizer.reporting.html",
        ),
        (
            "optimizer.studies.study",
            "from optimizer.cli.common import BadInput",
            "optimizer layers",
            "optimizer.studies.study -> optimizer.cli.common",
        ),
        (
            "thermal.series",
            "import optimizer.dwell.table",
            "optimizer layers",
            "thermal.series -> optimizer.dwell.table",
        ),
        # the physics reached around the dwell layer
        (
            "optimizer.reporting.html",
            "from thermal import process",
            "only the dwell (and probes) layers import thermal directly",
            "optimizer.reporting.html -> thermal.process",
        ),
        # two modules of one layer importing each other
        (
            "optimizer.planning.inputs",
            "from optimizer.planning import results",
            "no import circles",
            "No cycles are allowed in optimizer.planning",
        ),
    ],
)
def test_a_broken_contract_fails_the_check(source_copy, module, line, contract, shown):
    add_import(source_copy, module, line)
    done = lint(source_copy)
    assert done.returncode != 0, done.stdout
    out = " ".join(done.stdout.split())
    assert f"{contract}" in out and "BROKEN" in out, out
    assert shown in out, out
