"""Worker processes end when their parent is killed (no orphans).

``corepace dwell`` (its pool of cell workers) and ``corepace sweep`` (its
pool of plan workers) are started as real processes, killed with SIGKILL
once their workers run, and every worker must then end by itself. Before
the workers asked for it, they lived on under PID 1, writing cache cells.

The waits below are bounds against hanging, generous for a loaded machine;
no speed is asserted.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.skipif(
    not Path("/proc/self/stat").exists(), reason="reads the process table from /proc"
)

STARTED_WITHIN_S = 300.0
"""Longest wait for the workers to start [s] (a bound against hanging)."""

ENDED_WITHIN_S = 60.0
"""Longest wait for the orphaned workers to end [s] (a bound against hanging)."""


def _stat(pid: int) -> tuple[str, int] | None:
    """(state, parent pid) of a process, None when it is gone."""
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    fields = text.rsplit(")", 1)[1].split()
    return fields[0], int(fields[1])


def _alive(pid: int) -> bool:
    stat = _stat(pid)
    return stat is not None and stat[0] not in ("Z", "X")


def _children(pid: int) -> list[int]:
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            stat = _stat(int(entry.name))
            if stat is not None and stat[1] == pid and stat[0] not in ("Z", "X"):
                out.append(int(entry.name))
    return out


def _descendants(pid: int) -> list[int]:
    found, todo = [], [pid]
    while todo:
        for child in _children(todo.pop()):
            found.append(child)
            todo.append(child)
    return found


def _wait_for(condition, within: float, what: str):
    deadline = time.monotonic() + within
    while time.monotonic() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.2)
    raise AssertionError(f"{what} within {within:g} s")


def _kill_parent_and_check_workers(argv: list[str], tmp_path: Path, workers: int) -> None:
    env = {**os.environ, "PYTHONPATH": str(ROOT), "XDG_CACHE_HOME": str(tmp_path / "xdg")}
    parent = subprocess.Popen(
        [sys.executable, "-m", "optimizer", *argv],
        cwd=tmp_path,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    found: list[int] = []
    try:
        found = _wait_for(
            lambda: (d := _descendants(parent.pid)) and len(d) >= workers and d,
            STARTED_WITHIN_S,
            f"{workers} worker processes did not start",
        )
        assert parent.poll() is None, "the command ended before it could be killed"
        parent.send_signal(signal.SIGKILL)
        parent.wait()
        _wait_for(
            lambda: not any(_alive(pid) for pid in found),
            ENDED_WITHIN_S,
            f"orphaned workers {[p for p in found if _alive(p)]} did not end",
        )
    finally:
        if parent.poll() is None:
            parent.kill()
            parent.wait()
        for pid in found:  # never leave anything behind, whatever the outcome
            if _alive(pid):
                os.kill(pid, signal.SIGKILL)


def test_dwell_workers_end_with_a_killed_command(tmp_path):
    argv = ["dwell", str(ROOT / "configs" / "demo.yaml"), "--cache-dir", str(tmp_path / "c")]
    _kill_parent_and_check_workers(argv, tmp_path, workers=2)


def test_sweep_workers_end_with_a_killed_command(tmp_path):
    study = ROOT / "configs" / "study_tunnel.yaml"
    argv = ["sweep", str(study), "--workers", "2", "--out", str(tmp_path / "out"),
            "--cache-dir", str(tmp_path / "c")]  # fmt: skip
    _kill_parent_and_check_workers(argv, tmp_path, workers=2)
