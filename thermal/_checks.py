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

_ABOVE_ABSOLUTE_ZERO = "above absolute zero (-273.15 °C)"


def _describe(values: NDArray[np.float64]) -> str:
    flat = values.ravel()
    return repr(float(flat[0])) if flat.size == 1 else f"array of shape {values.shape}"


def _describe_nan(values: NDArray[np.float64]) -> str:
    return "nan" if values.ndim == 0 else f"nan in an array of shape {values.shape}"


def _or_inf(domain: str, allow_inf: bool) -> str:
    return f"{domain} (or inf)" if allow_inf else domain


def as_float_array(
    name: str, value: ArrayLike, *, allow_inf: bool = False, accepted: str | None = None
) -> NDArray[np.float64]:
    """Return ``value`` as a float array, refusing NaN (and inf unless allowed).

    Parameters
    ----------
    name : str
        Argument name, first word of every message.
    value : array_like
        The argument.
    allow_inf : bool, optional
        Accept ``inf`` and ``-inf``.
    accepted : str, optional
        The accepted domain as the caller's own range message words it after
        "must be" (e.g. ``">= 0 (or inf)"``), so that the NaN message states
        it too; default ``"a finite number"`` (``"a number (or inf)"`` with
        ``allow_inf``).

    Returns
    -------
    ndarray
        ``value`` as float.
    """
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ThermalInputError(
            f"{name}: must be a number or array of numbers, got {value!r}"
        ) from None
    if accepted is None:
        accepted = "a number (or inf)" if allow_inf else "a finite number"
    if np.isnan(arr).any():
        raise ThermalInputError(f"{name}: must be {accepted}, got {_describe_nan(arr)}")
    if not allow_inf and np.isinf(arr).any():
        raise ThermalInputError(f"{name}: must be finite, got {_describe(arr[np.isinf(arr)])}")
    return arr


def nonnegative(name: str, value: ArrayLike, *, allow_inf: bool = False) -> NDArray[np.float64]:
    """Check ``value >= 0`` (NaN refused)."""
    domain = _or_inf(">= 0", allow_inf)
    arr = as_float_array(name, value, allow_inf=allow_inf, accepted=domain)
    if (arr < 0).any():
        raise ThermalInputError(f"{name}: must be {domain}, got {_describe(arr[arr < 0])}")
    return arr


def positive(name: str, value: ArrayLike, *, allow_inf: bool = False) -> NDArray[np.float64]:
    """Check ``value > 0`` (NaN refused)."""
    domain = _or_inf("> 0", allow_inf)
    arr = as_float_array(name, value, allow_inf=allow_inf, accepted=domain)
    if (arr <= 0).any():
        raise ThermalInputError(f"{name}: must be {domain}, got {_describe(arr[arr <= 0])}")
    return arr


def in_range(name: str, value: ArrayLike, low: float, high: float) -> NDArray[np.float64]:
    """Check ``low <= value <= high`` (NaN refused)."""
    domain = f"in [{low}, {high}]"
    arr = as_float_array(
        name, value, allow_inf=bool(np.isinf(low) or np.isinf(high)), accepted=domain
    )
    bad = (arr < low) | (arr > high)
    if bad.any():
        raise ThermalInputError(f"{name}: must be {domain}, got {_describe(arr[bad])}")
    return arr


def temperature_c(name: str, value: ArrayLike) -> NDArray[np.float64]:
    """Check a temperature in °C is finite and above absolute zero."""
    arr = as_float_array(name, value, accepted=_ABOVE_ABSOLUTE_ZERO)
    bad = arr <= ABSOLUTE_ZERO_C
    if bad.any():
        raise ThermalInputError(
            f"{name}: must be {_ABOVE_ABSOLUTE_ZERO}, got {_describe(arr[bad])} °C"
        )
    return arr
