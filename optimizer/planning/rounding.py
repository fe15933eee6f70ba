"""Rounding on the safe side, wherever a person reads a number to act on.

A dwell shown shorter than computed, or a belt speed shown faster than the
fastest safe one, can send undercooked or warm product out when someone sets
the machine from the printed figure. Every figure shown to be acted on goes
through these helpers, so the floor sheet, the report tables, the terminal
and the XLSX files agree:

* cook dwells, chill residences and other minutes a product must stay in a
  machine round **up** (:func:`minutes_up`);
* belt speeds round **down** and never above the exact maximum
  (:func:`speed_down`);
* counts bounded by a capacity (trays per batch) round **down**
  (:func:`count_down`).

The rounding is exact: a value is rounded from the shortest decimal that
reads back as the same float (so 25.6 min shows as 25.6, not 25.7), and the
shown figure, read back as a float, is never below the exact minutes, nor a
shown speed above the exact speed, not even by a float's last bit.
"""

from __future__ import annotations

import math
from decimal import ROUND_CEILING, ROUND_FLOOR, Decimal, localcontext

__all__ = [
    "MINUTES_DECIMALS",
    "SPEED_DECIMALS",
    "XLSX_MINUTES_FORMAT",
    "XLSX_SPEED_FORMAT",
    "count_down",
    "format_minutes",
    "format_speed",
    "minutes_up",
    "safe_rounding",
    "speed_down",
]

MINUTES_DECIMALS = 0
"""Decimals of minutes shown to be acted on: whole minutes, as on the floor sheet."""

SPEED_DECIMALS = 2
"""Decimals of belt speeds shown in m/min."""

XLSX_MINUTES_FORMAT = "0"
"""Excel number format matching :data:`MINUTES_DECIMALS` (for values already rounded up)."""

XLSX_SPEED_FORMAT = "0.00"
"""Excel number format matching :data:`SPEED_DECIMALS` (for values already rounded down)."""

_UP_COLUMNS = ("cook_min", "chill_min", "dwell_min", "residence_min")
_DOWN_COLUMNS = ("belt_speed_m_per_min", "max_belt_speed_m_per_min")


def _rounded(value: float, decimals: int, mode: str) -> float:
    number = float(value)
    if not math.isfinite(number):
        return number
    with localcontext() as ctx:
        ctx.prec = 400  # room for any float's digits at any decimals asked
        step = Decimal(1).scaleb(-int(decimals))
        # repr is the shortest decimal that reads back as the same float; rounding
        # it and reading back is monotone, so up stays >= and down stays <= the float
        return float(Decimal(repr(number)).quantize(step, rounding=mode))


def minutes_up(minutes: float, decimals: int = MINUTES_DECIMALS) -> float:
    """Minutes rounded up to ``decimals`` [min]: never below ``minutes``.

    Parameters
    ----------
    minutes : float
        Exact minutes (a cook dwell, a chill residence) [min]; NaN and
        infinities are returned as they are.
    decimals : int
        Decimals kept.

    Returns
    -------
    float
        The smallest number with ``decimals`` decimals that is >= ``minutes``.
    """
    return _rounded(minutes, decimals, ROUND_CEILING)


def speed_down(speed: float, decimals: int = SPEED_DECIMALS) -> float:
    """Belt speed rounded down to ``decimals`` [m/min]: never above ``speed``.

    Parameters
    ----------
    speed : float
        Exact speed, e.g. the fastest belt speed that gives the residence [m/min].
    decimals : int
        Decimals kept.

    Returns
    -------
    float
        The largest number with ``decimals`` decimals that is <= ``speed``.
    """
    return _rounded(speed, decimals, ROUND_FLOOR)


def count_down(count: float) -> int:
    """A count bounded by a capacity, rounded down (trays per batch) [-].

    A value within 1e-9 above a whole number (a float that should be whole)
    is taken as that number; it is never rounded up past it.
    """
    number = float(count)
    if not math.isfinite(number):
        raise ValueError(f"count: must be a finite number, got {count!r}")
    return math.floor(number + 1e-9)


def format_minutes(minutes: float, decimals: int = MINUTES_DECIMALS) -> str:
    """Minutes as text, rounded up (``"—"`` when not a finite number)."""
    value = minutes_up(minutes, decimals)
    return f"{value:.{decimals}f}" if math.isfinite(value) else "—"


def format_speed(speed: float, decimals: int = SPEED_DECIMALS) -> str:
    """A belt speed as text, rounded down (``"—"`` when not a finite number)."""
    value = speed_down(speed, decimals)
    return f"{value:.{decimals}f}" if math.isfinite(value) else "—"


def safe_rounding(column: str) -> str | None:
    """Which way a table column rounds when shown: ``"up"``, ``"down"`` or None.

    Minutes of a dwell or residence (``cook_min``, ``chill_min``, ...) round
    up; belt speeds (``belt_speed_m_per_min``, ``max_belt_speed_m_per_min``)
    round down; other columns round to nearest.
    """
    if column in _UP_COLUMNS:
        return "up"
    if column in _DOWN_COLUMNS:
        return "down"
    return None
