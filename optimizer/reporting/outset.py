"""A run's ``--out`` folder written as one set: checked, locked, staged, then swapped in.

:func:`output_set` is entered before the long work (dwell table, solve):

* it checks that ``--out`` can be written (its parent is created when
  missing and a staging folder is made in it), so a run that cannot save
  its results stops before it computes them;
* it locks ``--out`` (``.<name>.lock`` beside it, ``flock``), so a second
  run on the same folder is refused at once instead of interleaving;
* it removes what a killed earlier run left (staging folders beside
  ``--out``, temporary files inside it).

The files are written into the staging folder ``.<name>.tmp-XXXX`` beside
``--out``; when the block ends without an error the staging folder and
``--out`` swap places (one ``renameat2(RENAME_EXCHANGE)`` on Linux, two
renames elsewhere) and the old set is removed. ``--out`` therefore holds the
files of one run or of the other, never a mix; an error or Ctrl-C leaves it
as it was. Files in ``--out`` that corepace did not write (not listed in
the set's ``.corepace-set.json``) are carried over into the new set.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import json
import os
import shutil
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path

from optimizer.reporting.export import OutputError

__all__ = ["MANIFEST", "output_set"]

MANIFEST = ".corepace-set.json"
"""File in every output set listing the files corepace wrote there."""

_RENAME_EXCHANGE = 2
_AT_FDCWD = -100


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths in one step (Linux ``renameat2``); False when not available here."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    done = fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE)
    if done == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP):
        return False
    raise OSError(code, os.strerror(code), str(b))


@contextlib.contextmanager
def _locked(lock_path: Path, target: Path) -> Iterator[None]:
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not POSIX: no lock
        yield
        return
    try:
        fd = os.open(lock_path, os.O_RDWR | os.O_CREAT, 0o644)
    except OSError as exc:
        raise OutputError(f"--out {target}: cannot be written ({exc.strerror})") from exc
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            raise OutputError(
                f"--out {target}: another corepace run is writing there now; wait for it "
                "or give another --out"
            ) from None
        yield
    finally:
        os.close(fd)  # releases the lock; the lock file stays (removing it would race)


def _clean_stale(parent: Path, name: str, target: Path) -> None:
    """Remove what killed runs left: staging and old sets beside, temporary files inside."""
    for leftover in parent.glob(f".{name}.tmp-*"):
        shutil.rmtree(leftover, ignore_errors=True)
    for leftover in parent.glob(f".{name}.old-*"):
        shutil.rmtree(leftover, ignore_errors=True)
    if target.is_dir():
        for leftover in target.glob(".*.tmp"):
            with contextlib.suppress(OSError):
                leftover.unlink()


def _ours(target: Path) -> set[str]:
    """Names corepace wrote in ``target`` (from its manifest; empty when none)."""
    try:
        names = json.loads((target / MANIFEST).read_text(encoding="utf-8"))["files"]
    except (OSError, ValueError, KeyError, TypeError):
        return set()
    return {str(n) for n in names if isinstance(n, str)}


def _carry_over(old: Path, new: Path) -> None:
    """Link the entries of ``old`` that corepace did not write and the new set lacks."""
    ours = _ours(old) | {MANIFEST}
    for entry in old.iterdir():
        if entry.name in ours or (new / entry.name).exists():
            continue
        if entry.is_dir() and not entry.is_symlink():
            shutil.copytree(entry, new / entry.name, symlinks=True, copy_function=os.link)
        else:
            try:
                os.link(entry, new / entry.name, follow_symlinks=False)
            except OSError:
                shutil.copy2(entry, new / entry.name, follow_symlinks=False)


def _swap(staging: Path, target: Path) -> None:
    written = sorted(p.name for p in staging.iterdir())
    (staging / MANIFEST).write_text(json.dumps({"files": written}), encoding="utf-8")
    if not target.exists():
        os.replace(staging, target)
        return
    _carry_over(target, staging)
    if _exchange(staging, target):
        shutil.rmtree(staging, ignore_errors=True)  # now the old set
        return
    old = Path(tempfile.mkdtemp(prefix=f".{target.name}.old-", dir=target.parent))
    old.rmdir()
    os.replace(target, old)
    os.replace(staging, target)
    shutil.rmtree(old, ignore_errors=True)


@contextlib.contextmanager
def output_set(target: str | os.PathLike[str]) -> Iterator[Path]:
    """Check and lock ``--out``, give a staging folder to write in, then swap it in.

    Parameters
    ----------
    target : str or path-like
        The ``--out`` folder (created when missing).

    Yields
    ------
    pathlib.Path
        The staging folder: write the run's files here.

    Raises
    ------
    OutputError
        When ``--out`` is a file, cannot be created or written, or another
        run holds its lock. Raised on entering, before any work.
    """
    out = Path(target).expanduser()
    if out.exists() and not out.is_dir():
        raise OutputError(f"--out {out}: exists and is not a directory; give a directory path")
    parent = out.absolute().parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"--out {out}: cannot create the directory ({exc.strerror})") from exc
    if out.exists() and not os.access(out, os.W_OK | os.X_OK):
        raise OutputError(f"--out {out}: cannot be written (permission denied)")
    with _locked(parent / f".{out.name}.lock", out):
        _clean_stale(parent, out.name, out)
        try:
            staging = Path(tempfile.mkdtemp(prefix=f".{out.name}.tmp-", dir=parent))
        except OSError as exc:
            raise OutputError(f"--out {out}: cannot be written ({exc.strerror})") from exc
        try:
            os.chmod(staging, 0o777 & ~_umask())
            yield staging
            _swap(staging, out)
        finally:
            shutil.rmtree(staging, ignore_errors=True)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
