"""Units at the edge: parse scenario values once, into the documented unit.

Every dimensional field of a scenario file takes either a plain number, read
in that field's documented unit, or a string with a unit (``"72 degC"``,
``"160 degF"``, ``"45 min"``, ``"2.5 m/s"``, ``"28 mm"``). This module turns
both into a plain ``float`` in the documented unit, using :mod:`pint`, and
nothing downstream ever sees a unit again.

Conventions (documented here once, used by every scenario field):

========================  ====================  =================================
kind                      unit of plain numbers  examples accepted
========================  ====================  =================================
``temperature``           °C                     ``72``, ``"72 degC"``, ``"160 degF"``, ``"345 K"``
``temperature_difference``  K (= °C difference)  ``10``, ``"10 K"``, ``"18 delta_degF"``
``time_min``              min                    ``45``, ``"45 min"``, ``"1.5 h"``, ``"90 s"``
``length``                m                      ``0.028``, ``"28 mm"``, ``"12 m"``
``air_speed``             m/s                    ``2.5``, ``"2.5 m/s"``, ``"500 ft/min"``
``belt_speed``            m/min                  ``1.2``, ``"1.2 m/min"``, ``"0.02 m/s"``
``mass``                  kg                     ``150``, ``"150 kg"``, ``"300 lb"``
``area_density``          kg/m²                  ``8``, ``"8 kg/m**2"``
``heat_transfer_coefficient``  W/(m² K)          ``25``, ``"25 W/m**2/K"``
``conductivity``          W/(m K)                ``0.45``, ``"0.45 W/m/K"``
``density``               kg/m³                  ``1050``, ``"1050 kg/m**3"``
``specific_heat``         J/(kg K)               ``3500``, ``"3.5 kJ/kg/K"``
``specific_energy``       J/kg                   ``250000``, ``"250 kJ/kg"``
``fraction``              - (0..1)               ``0.65``, ``"65 %"``
========================  ====================  =================================

Times are minutes in the scenario (what a planner reads on a shift sheet)
and seconds inside :mod:`thermal`; :func:`minutes_to_seconds` is the one
place that converts. Temperatures are °C everywhere because the physics works
with differences.

A string whose unit has the wrong dimension is refused with a one-line
message naming the field, the accepted forms and what was given, e.g.
``ovens[0].settings[1].air_temperature: expected a temperature like
'175 degC' or a number in °C, got '3 m/s'``.
"""

from __future__ import annotations

import math
import re
import reprlib
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import pint

__all__ = [
    "KINDS",
    "UnitKind",
    "UnitParseError",
    "minutes_to_seconds",
    "parse_quantity",
    "seconds_to_minutes",
]


class UnitParseError(ValueError):
    """A scenario value could not be read as a quantity of the expected kind."""


@dataclass(frozen=True)
class UnitKind:
    """One kind of dimensional value accepted in a scenario file.

    Attributes
    ----------
    name : str
        Key of the kind (``"temperature"``, ``"time_min"``, ...).
    unit : str
        pint unit that plain numbers are read in and results are given in.
    label : str
        The unit as printed in messages (``"°C"``, ``"min"``, ...).
    noun : str
        What the value is, for messages ("a temperature", "a time").
    example : str
        An example string with a unit, for messages.
    """

    name: str
    unit: str
    label: str
    noun: str
    example: str


KINDS: dict[str, UnitKind] = {
    k.name: k
    for k in (
        UnitKind("temperature", "degC", "°C", "a temperature", "175 degC"),
        UnitKind("temperature_difference", "kelvin", "K", "a temperature difference", "10 K"),
        UnitKind("time_min", "minute", "min", "a time", "45 min"),
        UnitKind("length", "meter", "m", "a length", "28 mm"),
        UnitKind("air_speed", "meter / second", "m/s", "an air speed", "2.5 m/s"),
        UnitKind("belt_speed", "meter / minute", "m/min", "a belt speed", "1.2 m/min"),
        UnitKind("mass", "kilogram", "kg", "a mass", "150 kg"),
        UnitKind("area_density", "kilogram / meter ** 2", "kg/m²", "a mass per area", "8 kg/m**2"),
        UnitKind(
            "heat_transfer_coefficient",
            "watt / meter ** 2 / kelvin",
            "W/(m² K)",
            "a heat-transfer coefficient",
            "25 W/m**2/K",
        ),
        UnitKind(
            "conductivity", "watt / meter / kelvin", "W/(m K)", "a conductivity", "0.45 W/m/K"
        ),
        UnitKind("density", "kilogram / meter ** 3", "kg/m³", "a density", "1050 kg/m**3"),
        UnitKind(
            "specific_heat",
            "joule / kilogram / kelvin",
            "J/(kg K)",
            "a specific heat",
            "3.5 kJ/kg/K",
        ),
        UnitKind("specific_energy", "joule / kilogram", "J/kg", "an energy per kg", "250 kJ/kg"),
        UnitKind("fraction", "dimensionless", "- (0..1)", "a fraction", "65 %"),
    )
}
"""Registry of accepted kinds, keyed by name."""

_NUMBER_AND_UNIT = re.compile(
    r"^\s*(?P<number>[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?P<unit>.*?)\s*$"
)
_OFFSET_TO_DELTA = {
    "degree_Celsius": "delta_degree_Celsius",
    "degree_Fahrenheit": "delta_degree_Fahrenheit",
    "degree_Rankine": "degree_Rankine",
    "degree_Reaumur": "delta_degree_Reaumur",
}


@lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    ureg = pint.UnitRegistry()
    # "°C" and "°F" written with the degree sign are common in plant documents.
    ureg.define("@alias degree_Celsius = °C")
    ureg.define("@alias degree_Fahrenheit = °F")
    return ureg


MAX_QUANTITY_CHARS = 200
"""Longest text read as a number with a unit [characters]."""

ECHO_CHARS = 60
"""About how many characters of a given value an error message repeats."""

_ECHO = reprlib.Repr()
_ECHO.maxstring = ECHO_CHARS
_ECHO.maxother = ECHO_CHARS
_ECHO.maxlong = 24
_ECHO.maxlevel = 3
_ECHO.maxlist = _ECHO.maxtuple = _ECHO.maxdict = _ECHO.maxset = 4


def shown(value: Any) -> str:
    """A value as an error message repeats it: its repr, cut to about :data:`ECHO_CHARS`.

    Deep or long values are elided (``[[[...]]]``, ``'abc...xyz'``), so a
    message never carries more than a few dozen characters of what was given.
    """
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 256:
        return f"an integer of about {int(value.bit_length() * 0.30103)} digits"
    text = _ECHO.repr(value)
    return text if len(text) <= 2 * ECHO_CHARS else text[: 2 * ECHO_CHARS - 3] + "..."


def shown_key(key: Any) -> str:
    """A mapping key as a field path repeats it: its text, cut to about :data:`ECHO_CHARS`."""
    text = str(key)
    return text if len(text) <= ECHO_CHARS else text[: ECHO_CHARS - 3] + "..."


def _accepted(field: str, kind: UnitKind, given: Any) -> UnitParseError:
    return UnitParseError(
        f"{field}: expected {kind.noun} like '{kind.example}' or a number in {kind.label}, "
        f"got {shown(given)}"
    )


@lru_cache(maxsize=512)
def _parsed_unit(text: str, difference: bool) -> pint.Unit | None:
    """The pint unit ``text`` names (as a difference when ``difference``); None when none.

    Cached: a scenario names a handful of units many times over.
    """
    ureg = _registry()
    try:
        unit = ureg.parse_units(text)
    except Exception:  # pint raises a variety of parser errors on garbage
        return None
    if difference:
        # A difference written in degC/degF means a difference of that size.
        names = [str(name) for name in unit._units]
        if len(names) == 1 and names[0] in _OFFSET_TO_DELTA:
            unit = ureg.parse_units(_OFFSET_TO_DELTA[names[0]])
    return unit


def parse_quantity(value: Any, kind: str, field: str = "value") -> float:
    """Read a scenario value as a float in the documented unit of ``kind``.

    Parameters
    ----------
    value : float or int or str
        A plain number (read in the unit of ``kind``) or a string made of a
        number and a unit (``"72 degC"``, ``"28 mm"``, ``"65 %"``).
    kind : str
        A key of :data:`KINDS`.
    field : str
        Field path used in error messages (``"ovens[0].settings[1].air_temperature"``).

    Returns
    -------
    float
        The value in the unit of ``kind`` (°C for temperatures, minutes for
        ``time_min``, m for lengths, ...).

    Raises
    ------
    UnitParseError
        When the value is not a finite number, the string cannot be parsed, or
        its unit has another dimension. The message names ``field``, the
        accepted forms and the value given.
    """
    spec = KINDS.get(kind)
    if spec is None:
        raise ValueError(f"kind: must be one of {sorted(KINDS)}, got {kind!r}")
    if isinstance(value, bool):
        raise _accepted(field, spec, value)
    if isinstance(value, int | float):
        try:
            number = float(value)
        except OverflowError:  # an integer beyond the float range
            raise _accepted(field, spec, value) from None
        if not math.isfinite(number):
            raise _accepted(field, spec, value)
        return number
    if not isinstance(value, str):
        raise _accepted(field, spec, value)
    if len(value) > MAX_QUANTITY_CHARS:  # no unit is that long; spare the unit parser
        raise _accepted(field, spec, value)
    match = _NUMBER_AND_UNIT.match(value)
    if match is None:
        raise _accepted(field, spec, value)
    number = float(match.group("number"))
    unit_text = match.group("unit")
    if not math.isfinite(number):
        raise _accepted(field, spec, value)
    if not unit_text:
        return number
    ureg = _registry()
    unit = _parsed_unit(unit_text, kind == "temperature_difference")
    if unit is None:
        raise _accepted(field, spec, value)
    try:
        quantity = ureg.Quantity(number, unit).to(spec.unit)
    except pint.errors.DimensionalityError:
        raise _accepted(field, spec, value) from None
    except pint.errors.OffsetUnitCalculusError:
        raise _accepted(field, spec, value) from None
    result = float(quantity.magnitude)
    if not math.isfinite(result):
        raise _accepted(field, spec, value)
    # drop conversion noise (0.9500000000000001 -> 0.95); 12 digits is far below any
    # measurement's precision
    return float(f"{result:.12g}")


def minutes_to_seconds(minutes: float) -> float:
    """Convert a scenario time [min] to the physics layer's unit [s]."""
    return float(minutes) * 60.0


def seconds_to_minutes(seconds: float) -> float:
    """Convert a physics-layer time [s] to the scenario's unit [min]."""
    return float(seconds) / 60.0
