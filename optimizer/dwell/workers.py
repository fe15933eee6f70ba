"""Worker processes that end when the process that started them ends.

The dwell table's worker pool and the studies' process pool start worker
processes; if the command is killed (``kill -9``, a closed terminal) they
must not live on as orphans, writing cache cells and holding the caller's
output open. :func:`die_with_parent` is the pools' initializer: on Linux
the kernel sends the worker SIGKILL when its parent ends
(``prctl(PR_SET_PDEATHSIG)``); elsewhere, or if that call fails, a thread
watches the parent and ends the worker when it is gone.
"""

from __future__ import annotations

import ctypes
import os
import signal
import sys
import threading
import time

__all__ = ["die_with_parent", "pool_initializer"]

_PR_SET_PDEATHSIG = 1
"""``prctl`` option: the signal a process gets when its parent ends (Linux)."""

WATCH_SECONDS = 0.5
"""How often the fallback watch looks for the parent [s]."""


def _parent_death_signal() -> bool:
    """Ask the Linux kernel for SIGKILL when the parent ends; False when not possible."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        return libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0) == 0
    except (OSError, AttributeError):
        return False


def _watch(parent: int) -> None:
    def run() -> None:
        while os.getppid() == parent:
            time.sleep(WATCH_SECONDS)
        os._exit(1)

    threading.Thread(target=run, name="corepace-parent-watch", daemon=True).start()


def die_with_parent(parent: int) -> None:
    """End this process when the process ``parent`` (its parent) ends.

    Parameters
    ----------
    parent : int
        Process id of the parent, taken in the parent before the worker
        starts (so a parent that ended in between is noticed).
    """
    if not _parent_death_signal():
        _watch(parent)
    if os.getppid() != parent:  # the parent ended before the signal was asked for
        os._exit(1)


def pool_initializer() -> tuple[object, tuple[int]]:
    """``(initializer, initargs)`` for a process pool whose workers die with this process."""
    return die_with_parent, (os.getpid(),)
