"""``plan --out`` holds one whole run or the previous one, never a mix.

Before: a ``kill -9`` while the report was written left a
``.tunnels.csv.XXXX.tmp`` for good and a new ovens.csv beside the old
plan.json; two runs on one folder interleaved; an unwritable ``--out`` was
found only after the dwell table and the solve.
"""

from __future__ import annotations

import fcntl
import hashlib
import os
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

from optimizer.cli import main
from tests.test_fuzz_scenarios import small_demo

ROOT = Path(__file__).resolve().parents[1]
EXIT_OK, EXIT_BAD_INPUT = 0, 2


@pytest.fixture(scope="module")
def small(tmp_path_factory) -> tuple[Path, Path]:
    """The small demo scenario and a dwell cache shared by this module's runs."""
    folder = tmp_path_factory.mktemp("small")
    path = folder / "small.yaml"
    path.write_text(yaml.safe_dump(small_demo()), encoding="utf-8")
    return path, folder / "cache"


def _plan(capsys, scenario: Path, cache: Path, out: Path) -> tuple[int, str]:
    code = main(["plan", str(scenario), "--quiet", "--out", str(out), "--cache-dir", str(cache)])
    return code, capsys.readouterr().err


def _digests(folder: Path) -> dict[str, str]:
    return {
        p.name: hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.iterdir())
        if p.is_file()
    }


def _debris(folder: Path) -> list[str]:
    beside = [p.name for p in folder.parent.iterdir() if p.name.startswith(f".{folder.name}.")]
    inside = [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]
    return sorted(n for n in beside + inside if not n.endswith(".lock"))


def test_a_second_run_on_a_locked_out_is_refused_before_any_work(capsys, small, tmp_path):
    scenario, _ = small
    out, cache = tmp_path / "out", tmp_path / "fresh-cache"
    lock = os.open(tmp_path / ".out.lock", os.O_RDWR | os.O_CREAT)
    try:
        fcntl.flock(lock, fcntl.LOCK_EX | fcntl.LOCK_NB)  # another run holds --out
        code, err = _plan(capsys, scenario, cache, out)
    finally:
        os.close(lock)
    assert code == EXIT_BAD_INPUT
    assert err.strip() == (
        f"--out {out}: another corepace run is writing there now; wait for it or give another --out"
    )
    assert not out.exists() and not cache.exists()  # refused before the dwell table


def test_an_out_that_cannot_be_made_is_refused_before_any_work(capsys, small, tmp_path):
    scenario, _ = small
    (tmp_path / "a-file").write_text("x", encoding="utf-8")
    out, cache = tmp_path / "a-file" / "out", tmp_path / "fresh-cache"
    code, err = _plan(capsys, scenario, cache, out)
    assert code == EXIT_BAD_INPUT and "cannot create the directory" in err
    assert not cache.exists()


def test_interrupted_writing_leaves_the_previous_set(capsys, small, tmp_path, monkeypatch):
    scenario, cache = small
    out = tmp_path / "out"
    assert _plan(capsys, scenario, cache, out)[0] == EXIT_OK
    before = _digests(out)
    from optimizer.reporting import export

    real = export.write_csv
    calls = []

    def interrupted(path, *args, **kwargs):
        calls.append(path)
        if len(calls) == 3:
            raise KeyboardInterrupt  # Ctrl-C after two files of the new set
        return real(path, *args, **kwargs)

    monkeypatch.setattr(export, "write_csv", interrupted)
    code, _ = _plan(capsys, scenario, cache, out)
    assert code == 130 and len(calls) == 3
    assert _digests(out) == before and _debris(out) == []


KILLED_MID_WRITE = """
import os, signal, sys
from optimizer.reporting import export
real, calls = export.write_csv, []
def write_csv(path, *args, **kwargs):
    calls.append(path)
    if len(calls) == 3:
        os.kill(os.getpid(), signal.SIGKILL)
    return real(path, *args, **kwargs)
export.write_csv = write_csv
from optimizer.cli import main
main(sys.argv[1:])
"""


def test_killed_mid_write_then_run_again(capsys, small, tmp_path):
    scenario, cache = small
    out = tmp_path / "out"
    assert _plan(capsys, scenario, cache, out)[0] == EXIT_OK
    before = _digests(out)
    (out / ".tunnels.csv.abc123.tmp").write_text("debris of an older version", encoding="utf-8")
    (out / "my-notes.txt").write_text("not corepace's", encoding="utf-8")
    argv = ["plan", str(scenario), "--quiet", "--out", str(out), "--cache-dir", str(cache)]
    killed = subprocess.run(
        [sys.executable, "-c", KILLED_MID_WRITE, *argv],
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        capture_output=True,
        check=False,
    )
    assert killed.returncode == -9
    after_kill = _digests(out)
    assert {k: v for k, v in after_kill.items() if k in before} == before  # the old set, whole
    assert any(n.startswith(".out.tmp-") for n in _debris(out))  # the killed run's staging
    # the next run cleans up and writes a whole new set; files not corepace's stay
    assert _plan(capsys, scenario, cache, out)[0] == EXIT_OK
    assert _debris(out) == []
    now = _digests(out)
    assert set(now) == set(before) | {"my-notes.txt"}
    assert (out / "my-notes.txt").read_text(encoding="utf-8") == "not corepace's"
