"""The dwell table's disk cache: one JSON file per cell and per table, by input hash.

Files are named by the SHA-256 of a canonical JSON of every input a cell
depends on and a salt (:func:`physics_salt`) made of :data:`CACHE_VERSION` and
a hash of the physics source code, so a change to the physics or to the
conversions recomputes everything, and a changed input only its cells.

Each file holds an envelope ``{"entry": CACHE_VERSION, "name": file name,
"digest": ..., "value": ...}``. The digest is the SHA-256 of the file name
(which is the hash of the inputs) and the canonical JSON of the value, so it
covers the inputs and the values both. :func:`read_entry` checks the
envelope, the digest and the shape of the value (a ``check`` the caller
gives); an entry that fails is refused: the file is removed, a one-line
notice says why, and the caller recomputes it. A cache is never trusted
silently.

The digest is not a signature: someone who edits a value and recomputes the
digest gets past it. That is why the plan re-verifies every cell it uses
against the physics (:func:`optimizer.dwell.table.verify_rows`).
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

__all__ = [
    "CACHE_VERSION",
    "canonical_json",
    "dwell_cache_key",
    "entry_digest",
    "physics_salt",
    "read_entry",
    "remove_entry",
    "write_entry",
]

CACHE_VERSION = "corepace-dwell-2"
"""Bumped whenever the meaning or the layout of a cached entry changes."""

MAX_ENTRY_BYTES = 64 * 1024 * 1024
"""Largest cache file read [bytes]; a bigger one is refused as corrupt."""

Check = Callable[[Any], str | None]
"""``check(value)``: why a cached value has the wrong shape, or None when it is sound."""

Notice = Callable[[str], None]
"""``notice(text)``: told, in one line, about each cache entry refused."""


def physics_salt() -> str:
    """Hash of the source code the cached numbers depend on.

    The physics package and the dwell modules that turn a scenario into
    physics inputs and cells (:mod:`optimizer.dwell.convert`,
    :mod:`optimizer.dwell.stages`, :mod:`optimizer.dwell.table`).
    """
    here = Path(__file__).resolve().parent
    root = here.parent.parent
    own = [here / name for name in ("convert.py", "stages.py", "table.py")]
    digest = hashlib.sha256(CACHE_VERSION.encode())
    for path in [*sorted((root / "thermal").glob("*.py")), *own]:
        try:
            digest.update(path.name.encode())
            digest.update(path.read_bytes())
        except OSError:
            continue
    return digest.hexdigest()


def canonical_json(data: Any) -> str:
    """``data`` as JSON with sorted keys and no spaces (the text that is hashed)."""
    return json.dumps(data, sort_keys=True, separators=(",", ":"), allow_nan=True)


def dwell_cache_key(data: Any, salt: str) -> str:
    """SHA-256 of the canonical JSON of ``data`` and ``salt`` (hex)."""
    return hashlib.sha256((salt + canonical_json(data)).encode()).hexdigest()


def entry_digest(name: str, value: Any) -> str:
    """SHA-256 (hex) of an entry's file name (its inputs' hash) and its value."""
    return hashlib.sha256(f"{name}\n{canonical_json(value)}".encode()).hexdigest()


def _refusal(path: Path, name: str, check: Check | None) -> tuple[Any, str | None]:
    """(value, None) for a sound entry, (None, why) for one that must not be used."""
    try:
        if path.stat().st_size > MAX_ENTRY_BYTES:
            return None, f"larger than {MAX_ENTRY_BYTES:,} bytes"
        data = json.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        return None, "not UTF-8 text"
    except ValueError:
        return None, "not valid JSON"
    if not isinstance(data, dict) or set(data) != {"entry", "name", "digest", "value"}:
        return None, "not a corepace cache entry"
    if data["entry"] != CACHE_VERSION:
        return None, f"written by another cache version ({str(data['entry'])[:40]!r})"
    if data["name"] != name:
        return None, "holds the entry of another file"
    value = data["value"]
    try:
        digest = entry_digest(name, value)
    except (TypeError, ValueError):
        return None, "a value that cannot be hashed"
    if data["digest"] != digest:
        return None, "its digest does not match its inputs and values (changed after writing)"
    problem = check(value) if check is not None else None
    if problem is not None:
        return None, problem
    return value, None


def read_entry(
    cache: Path | None, name: str, check: Check | None = None, notice: Notice | None = None
) -> Any:
    """The value of the cache entry ``name``; None when absent, refused or the cache is off.

    Parameters
    ----------
    cache : Path or None
        The cache directory (None: no cache).
    name : str
        File name of the entry (``cook-<key>.json``, ...).
    check : callable, optional
        ``check(value)``: why the value has the wrong shape, or None.
    notice : callable, optional
        ``notice(text)`` when an entry is refused (unreadable, not an entry,
        digest mismatch, wrong shape); the file is removed so that the
        recomputed value replaces it.
    """
    if cache is None:
        return None
    path = cache / name
    try:
        present = path.is_file()
    except OSError:
        present = False
    if not present:
        return None
    try:
        value, why = _refusal(path, name, check)
    except OSError as exc:
        value, why = None, f"unreadable ({exc.strerror or exc})"
    if why is None:
        return value
    remove_entry(cache, name)
    if notice is not None:
        notice(f"dwell cache: refused {name[:20]}... ({why}); recomputed from the physics")
    return None


def write_entry(cache: Path | None, name: str, data: Any) -> None:
    """Write ``data`` as the entry ``name`` atomically (temporary file, then rename).

    No-op when the cache is off.
    """
    if cache is None:
        return
    cache.mkdir(parents=True, exist_ok=True)
    envelope = {
        "entry": CACHE_VERSION,
        "name": name,
        "digest": entry_digest(name, data),
        "value": data,
    }
    fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=cache)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(envelope, fh, allow_nan=True)
        os.replace(tmp, cache / name)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def remove_entry(cache: Path | None, name: str) -> None:
    """Remove the entry ``name`` (nothing when absent or the cache is off)."""
    if cache is None:
        return
    try:
        (cache / name).unlink(missing_ok=True)
    except OSError:
        pass
