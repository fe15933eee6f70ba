"""Table cells as text, shared by the HTML report and the terminal (no plotting here)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd

from optimizer.planning.rounding import (
    MINUTES_DECIMALS,
    SPEED_DECIMALS,
    minutes_up,
    safe_rounding,
    speed_down,
)

__all__ = [
    "COLUMN_LABELS",
    "column_decimals",
    "display_decimals",
    "exact_text",
    "format_cell",
    "is_missing",
    "is_number",
]

COLUMN_LABELS = {
    "cook_min": "cook [min]",
    "cycle_min": "cycle [min]",
    "minutes": "minutes",
    "kg": "kg",
    "belt_speed_m_per_min": "belt speed [m/min]",
    "max_belt_speed_m_per_min": "fastest belt [m/min]",
    "oven_setting": "oven setting",
    "tunnel_setting": "tunnel setting",
    "used_min": "used [min]",
    "changeover_min": "changeover [min]",
    "available_min": "available [min]",
    "utilisation": "utilisation",
    "per_hour": "per extra hour",
    "chill_min": "chill [min]",
    "heat_in_kj_per_kg": "heat in [kJ/kg]",
    "heat_out_kj_per_kg": "heat out [kJ/kg]",
    "total_slack": "total slack",
    "smallest_slack": "smallest slack",
}


def is_number(value: Any) -> bool:
    """True for an int or float cell (numpy too), False for booleans."""
    return isinstance(value, int | float | np.integer | np.floating) and not isinstance(
        value, bool | np.bool_
    )


def is_missing(value: Any) -> bool:
    """True for None, pandas NA/NaT and NaN."""
    if value is None or value is pd.NA or value is pd.NaT:
        return True
    return isinstance(value, float | np.floating) and math.isnan(float(value))


def column_decimals(values: pd.Series) -> int:
    """Decimals to show for a numeric column: none for whole numbers, fewer for large ones."""
    numbers = pd.to_numeric(values, errors="coerce").astype(float)
    finite = numbers[np.isfinite(numbers)]
    if finite.empty:
        return 1
    if np.allclose(finite, np.round(finite)):
        return 0
    peak = float(np.max(np.abs(finite)))
    if peak >= 1000:
        return 0
    if peak >= 10:
        return 1
    if peak >= 0.1:
        return 2
    return 4


def display_decimals(column: str, values: pd.Series) -> int:
    """Decimals to show for a column: the safe-rounding resolution for dwell
    minutes and belt speeds (:mod:`optimizer.planning.rounding`, as on the
    floor sheet), else :func:`column_decimals`."""
    direction = safe_rounding(str(column))
    if direction == "up":
        return MINUTES_DECIMALS
    if direction == "down":
        return SPEED_DECIMALS
    return column_decimals(values)


def format_cell(value: Any, decimals: int = 2, rounding: str | None = None) -> str:
    """Readable text for one table cell.

    Parameters
    ----------
    value : Any
        Cell value.
    decimals : int
        Decimals for floats.
    rounding : {"up", "down", None}
        Safe-side rounding of a float (:func:`optimizer.planning.rounding.safe_rounding`
        of its column): ``"up"`` for minutes a product must stay, ``"down"``
        for belt speeds; None rounds to nearest.

    Returns
    -------
    str
        ``"–"`` for missing values, ``"yes"``/``"no"`` for booleans, numbers
        with thousands separators, everything else as ``str``.
    """
    if is_missing(value):
        return "–"
    if isinstance(value, bool | np.bool_):
        return "yes" if value else "no"
    if isinstance(value, int | np.integer):
        return f"{int(value):,}"
    if isinstance(value, float | np.floating):
        number = float(value)
        if math.isinf(number):
            return "∞" if number > 0 else "−∞"
        if rounding == "up":
            number = minutes_up(number, decimals)
        elif rounding == "down":
            number = speed_down(number, decimals)
        return f"{number:,.{decimals}f}"
    return str(value)


def exact_text(value: Any) -> str:
    """Full-precision text of a cell for the ``data-value`` attribute."""
    if is_missing(value):
        return ""
    if isinstance(value, bool | np.bool_):
        return "true" if value else "false"
    if isinstance(value, int | np.integer):
        return str(int(value))
    if isinstance(value, float | np.floating):
        return repr(float(value))
    return str(value)
