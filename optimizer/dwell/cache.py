"""The dwell table's disk cache: one JSON file per cell and per table, by input hash.

Files are named by the SHA-256 of a canonical JSON of every input a cell
depends on and a salt (:func:`physics_salt`) made of :data:`CACHE_VERSION` and
a hash of the physics source code, so a change to the physics or to the
conversions recomputes everything, and a changed input only its cells.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from pathlib import Path
from typing import Any

__all__ = [
    "CACHE_VERSION",
    "canonical_json",
    "dwell_cache_key",
    "physics_salt",
    "read_entry",
    "write_entry",
]

CACHE_VERSION = "corepace-dwell-1"
"""Bumped whenever the meaning of a cached cell changes."""


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


def read_entry(cache: Path | None, name: str) -> Any:
    """The JSON entry ``name`` of the cache directory; None when absent, unreadable or off."""
    if cache is None:
        return None
    path = cache / name
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def write_entry(cache: Path | None, name: str, data: Any) -> None:
    """Write the JSON entry ``name`` atomically (temporary file, then rename); no-op when off."""
    if cache is None:
        return
    cache.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{name}.", dir=cache)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(data, fh, allow_nan=True)
        os.replace(tmp, cache / name)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
