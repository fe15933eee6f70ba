"""Where a result came from: tool version, input hashes and the time stamp of a report."""

from __future__ import annotations

import hashlib
import json
import os
from datetime import UTC, datetime
from importlib import metadata

from optimizer.scenario.models import Scenario, scenario_to_dict

__all__ = ["file_sha256", "made_at", "resolved_sha256", "tool_version"]


def tool_version() -> str:
    """Installed version of corepace (``"unknown"`` when not installed)."""
    try:
        return metadata.version("corepace")
    except metadata.PackageNotFoundError:
        return "unknown"


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes, as hex.

    Parameters
    ----------
    path : str or path-like
        File to hash (read only).

    Returns
    -------
    str
        64 hex digits.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 16), b""):
            digest.update(block)
    return digest.hexdigest()


def resolved_sha256(scenario: Scenario) -> str:
    """SHA-256 of a validated scenario's content, after ``extends`` and ``--set``.

    The scenario is written as canonical JSON (sorted keys, documented units)
    and hashed, so two runs of the same plant data give the same hash
    whatever file layout or overrides produced it.
    """
    text = json.dumps(scenario_to_dict(scenario), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def made_at() -> str:
    """The time written into reports (UTC).

    ``SOURCE_DATE_EPOCH`` (seconds since 1970, the reproducible-builds
    convention) replaces the clock when set, so a report regenerated from the
    same inputs is byte-for-byte the same file.
    """
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    when = datetime.fromtimestamp(int(epoch), UTC) if epoch.isdigit() else datetime.now(UTC)
    return when.strftime("%Y-%m-%d %H:%M UTC")
