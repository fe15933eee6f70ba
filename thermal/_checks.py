"""Small argument checks used across the physics layer.

Each check converts its argument to a float ``numpy`` array and raises
:class:`thermal.errors.ThermalInputError` with a one-line message naming the
argument and the accepted domain.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from thermal.errors import ThermalInputError

ABSOLUTE_ZERO_C = -273.15
"""Absolute zero [°C]."""


def _describe(values: NDArray[np.float64]) -> str:
    flat = values.ravel()
    return repr(float(flat[0])) if flat.size == 1 else f"array of shape {values.shape}"


def as_float_array(name: str, value: ArrayLike, *, allow_inf: bool = False) -> NDArray[np.float64]:
    """Return ``value`` as a float array, refusing NaN (and inf unless allowed)."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ThermalInputError(
            f"{name}: must be a number or array of numbers, got {value!r}"
        ) from None
    if np.isnan(arr).any():
        raise ThermalInputError(f"{name}: must not be NaN")
    if not allow_inf and np.isinf(arr).any():
        raise ThermalInputError(f"{name}: must be finite, got {_describe(arr[np.isinf(arr)])}")
    return arr


def nonnegative(name: str, value: ArrayLike, *, allow_inf: bool = False) -> NDArray[np.float64]:
    """Check ``value >= 0`` (NaN refused)."""
    arr = as_float_array(name, value, allow_inf=allow_inf)
    if (arr < 0).any():
        raise ThermalInputError(f"{name}: must be >= 0, got {_describe(arr[arr < 0])}")
    return arr


def positive(name: str, value: ArrayLike, *, allow_inf: bool = False) -> NDArray[np.float64]:
    """Check ``value > 0`` (NaN refused)."""
    arr = as_float_array(name, value, allow_inf=allow_inf)
    if (arr <= 0).any():
        raise ThermalInputError(f"{name}: must be > 0, got {_describe(arr[arr <= 0])}")
    return arr


def in_range(name: str, value: ArrayLike, low: float, high: float) -> NDArray[np.float64]:
    """Check ``low <= value <= high`` (NaN refused)."""
    arr = as_float_array(name, value, allow_inf=np.isinf(low) or np.isinf(high))
    bad = (arr < low) | (arr > high)
    if bad.any():
        raise ThermalInputError(f"{name}: must be in [{low}, {high}], got {_describe(arr[bad])}")
    return arr


def temperature_c(name: str, value: ArrayLike) -> NDArray[np.float64]:
    """Check a temperature in °C is finite and above absolute zero."""
    arr = as_float_array(name, value)
    bad = arr <= ABSOLUTE_ZERO_C
    if bad.any():
        raise ThermalInputError(
            f"{name}: must be above absolute zero (-273.15 °C), got {_describe(arr[bad])} °C"
        )
    return arr
