"""A cheap top-level point function for executor tests (importable by workers)."""

from __future__ import annotations

import math

from optimizer.studies.execute import SweepPoint


def square_point(point: SweepPoint) -> dict:
    """Return a row computed from the point's changes only."""
    values = {c.path: c.value for c in point.changes}
    x = float(values.get("x", 0.0))
    y = float(values.get("y", 0.0))
    return {"index": point.index, "label": point.label, "f": x * x + math.sin(y)}
