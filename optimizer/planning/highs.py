"""The HiGHS side of the planner: its start-up banner kept off our stdout."""

from __future__ import annotations

import os
import sys

import highspy

__all__ = ["quiet_solver_banner"]

_BANNER_DONE = False


def quiet_solver_banner() -> None:
    """Let HiGHS print its one-time start-up banner into /dev/null, not our stdout.

    highspy writes a banner straight to file descriptor 1 the first time a
    solver object is created in a process, bypassing ``sys.stdout``; that
    would corrupt ``--json`` output and clutter the summary. Creating the
    first object here, with descriptor 1 pointed at /dev/null, uses the
    banner up. Later solver objects print nothing unless asked to, so later
    calls in the same process return at once.
    """
    global _BANNER_DONE
    if _BANNER_DONE:
        return
    sys.stdout.flush()
    saved = os.dup(1)
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        highspy.Highs()
    finally:
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)
    _BANNER_DONE = True
