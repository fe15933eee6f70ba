"""Scenario files: the plant, its products, rules, shifts and orders, validated once.

A scenario is a YAML file that describes a plant once: its batch ovens and
their air settings, its cooling tunnels (zones, loading options, which ovens
feed them), the products (shape and size of the nominal and the largest
piece, composition or measured properties, cook and chill rules), the shifts
of the planning horizon and the orders. :func:`load_scenario` reads it,
converts every dimensional value once (see :mod:`optimizer.scenario.units` for the
unit of plain numbers in each kind of field) and checks everything before
anything is computed or written. All problems are reported together, one
line each, naming the field path and what is accepted::

    products[2].geometry.radius: must be > 0 m, got -0.01 m
    orders[0].product: 'Ham log' is not a product; known: 'Chicken fillet', ...

Units inside a validated :class:`Scenario`: temperatures °C, times minutes,
lengths m, air speeds m/s, belt speeds m/min, masses kg, h W/(m² K),
fractions 0..1 (see :mod:`optimizer.scenario.units`).

Rules come from a small library of named rule sets shipped in
``optimizer/scenario/data/rules.yaml`` (each with its published source; examples to be
checked against the plant's food-safety plan and local codes), from a
``rules:`` section of the scenario, or inline in a product.
"""

from __future__ import annotations

import difflib
import itertools
import math
import re
import types
import typing
from collections.abc import Callable, Iterable, Mapping, Sequence
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Annotated, Any, Literal, Union

import yaml
from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Discriminator,
    Field,
    Tag,
    TypeAdapter,
    ValidationError,
    ValidationInfo,
    WithJsonSchema,
    model_validator,
)
from pydantic_core import PydanticCustomError

from optimizer.scenario.overrides import Change, OverrideError, load_raw
from optimizer.scenario.units import KINDS, UnitParseError, parse_quantity, shown, shown_key

__all__ = [
    "BlockGeometry",
    "ChillRuleSpec",
    "CookRuleSpec",
    "CoolingStep",
    "CylinderGeometry",
    "FiniteCylinderGeometry",
    "FreezeRuleSpec",
    "LethalitySpec",
    "LoadingOption",
    "Objective",
    "Order",
    "Oven",
    "OvenSetting",
    "PhysicsCheck",
    "Product",
    "SafetyMargin",
    "Scenario",
    "ScenarioError",
    "Shift",
    "SlabGeometry",
    "SphereGeometry",
    "TemperatureHold",
    "TransferStage",
    "Tunnel",
    "TunnelSetting",
    "TunnelZone",
    "builtin_rules",
    "dump_scenario",
    "load_scenario",
    "scenario_from_dict",
    "scenario_json_schema",
]


class ScenarioError(ValueError):
    """A scenario has one or more problems; nothing was computed or written.

    Attributes
    ----------
    problems : list of str
        One line per problem: ``field.path: what is wrong and what is accepted``.
    source : str or None
        The file the scenario came from, when known.
    """

    def __init__(self, problems: Sequence[str], source: str | None = None) -> None:
        self.problems = list(problems)
        self.source = source
        where = f" in {source}" if source else ""
        n = len(self.problems)
        head = f"{n} problem{'s' if n != 1 else ''}{where}:"
        super().__init__("\n".join([head, *self.problems]))


# --------------------------------------------------------------------------- units


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _quantity(
    kind: str,
    *,
    gt: float | None = None,
    ge: float | None = None,
    lt: float | None = None,
    le: float | None = None,
) -> Any:
    """An annotated float that reads ``kind`` values and checks bounds.

    Bounds are in the documented unit of ``kind``; violations raise a
    one-line message such as ``must be > 0 m, got -0.01 m``.
    """
    spec = KINDS[kind]
    unit = "" if kind == "fraction" else f" {spec.label}"

    def read(value: Any) -> float:
        try:
            x = parse_quantity(value, kind, field="")
        except UnitParseError as exc:
            raise PydanticCustomError("quantity", "{msg}", {"msg": str(exc)[2:]}) from None
        checks = (
            (gt, x > gt if gt is not None else True, ">"),
            (ge, x >= ge if ge is not None else True, ">="),
            (lt, x < lt if lt is not None else True, "<"),
            (le, x <= le if le is not None else True, "<="),
        )
        failed = [(bound, op) for bound, ok, op in checks if bound is not None and not ok]
        if not failed:
            return x
        if kind == "fraction" and le is None and lt is None:
            msg = f"must be >= {_fmt(ge if ge is not None else 0)} (or a percentage like '10 %'), "
            msg += f"got {value!r}"
        elif kind == "fraction":
            low = f"[{_fmt(ge)}" if ge is not None else f"({_fmt(gt if gt is not None else 0)}"
            high = f"{_fmt(le)}]" if le is not None else f"{_fmt(lt if lt is not None else 1)})"
            msg = f"must be in {low}, {high} (or a percentage like '65 %'), got {shown(value)}"
        else:
            bound, op = failed[0]
            got = (
                f"{shown(value)} = {_fmt(x)}{unit}"
                if isinstance(value, str)
                else f"{_fmt(x)}{unit}"
            )
            msg = f"must be {op} {_fmt(bound)}{unit}, got {got}"
        raise PydanticCustomError("quantity", "{msg}", {"msg": msg})

    bits = []
    for bound, op in ((gt, ">"), (ge, ">="), (lt, "<"), (le, "<=")):
        if bound is not None:
            bits.append(f"{op} {_fmt(bound)}")
    limits = f"; {' and '.join(bits)}" if bits else ""
    schema = {
        "anyOf": [
            {"type": "number"},
            {"type": "string", "description": f"number and unit, e.g. '{spec.example}'"},
        ],
        "description": (
            f"{spec.noun.capitalize()}: a number in {spec.label} or a string with units "
            f"such as '{spec.example}'{limits}"
        ),
    }
    return Annotated[float, BeforeValidator(read), WithJsonSchema(schema)]


MAX_NAME_CHARS = 200
"""Longest name accepted (products, machines, settings, shifts, rule sets) [characters]."""

_TEXT_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
"""Control characters refused in free text (tab, line feed and carriage return pass)."""

_NAME_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")
"""Control characters refused in names (names are one line of text)."""


def _control_problem(value: str, pattern: re.Pattern[str]) -> str | None:
    found = pattern.search(value)
    if found is None:
        return None
    return (
        f"must not contain control characters, got {found.group()!r} at character "
        f"{found.start() + 1} of {shown(value)}"
    )


def name_problem(value: Any) -> str | None:
    """Why ``value`` is not a name (non-empty one-line text, at most :data:`MAX_NAME_CHARS`)."""
    if not isinstance(value, str) or not value.strip():
        return f"must be a non-empty name (text), got {shown(value)}"
    text = value.strip()
    if len(text) > MAX_NAME_CHARS:
        return f"must be a name of at most {MAX_NAME_CHARS} characters, got {len(text):,}"
    return _control_problem(text, _NAME_CONTROL)


def text_problem(value: Any) -> str | None:
    """Why ``value`` is not free text (text without control characters but tab and newlines)."""
    if not isinstance(value, str):
        return f"expected text, got {shown(value)}"
    return _control_problem(value, _TEXT_CONTROL)


def _name_check(value: Any) -> str:
    problem = name_problem(value)
    if problem is not None:
        raise PydanticCustomError("name", "{msg}", {"msg": problem})
    return value.strip()


def _text_check(value: Any) -> str:
    problem = text_problem(value)
    if problem is not None:
        raise PydanticCustomError("name", "{msg}", {"msg": problem})
    return value


Name = Annotated[
    str,
    BeforeValidator(_name_check),
    WithJsonSchema(
        {
            "type": "string",
            "minLength": 1,
            "maxLength": MAX_NAME_CHARS,
            "description": "A name (non-empty text on one line)",
        }
    ),
]

Text = Annotated[
    str,
    BeforeValidator(_text_check),
    WithJsonSchema({"type": "string", "description": "Free text (no control characters)"}),
]

Temperature = _quantity("temperature", gt=-273.15)
TemperatureDifference = _quantity("temperature_difference", ge=0.0)
Minutes = _quantity("time_min", ge=0.0)
PositiveMinutes = _quantity("time_min", gt=0.0)
Length = _quantity("length", gt=0.0)
AirSpeed = _quantity("air_speed", ge=0.0)
BeltSpeed = _quantity("belt_speed", ge=0.0)
PositiveBeltSpeed = _quantity("belt_speed", gt=0.0)
Mass = _quantity("mass", ge=0.0)
PositiveMass = _quantity("mass", gt=0.0)
AreaDensity = _quantity("area_density", gt=0.0)
HeatTransferCoefficient = _quantity("heat_transfer_coefficient", gt=0.0)
Conductivity = _quantity("conductivity", gt=0.0)
Density = _quantity("density", gt=0.0)
SpecificHeat = _quantity("specific_heat", gt=0.0)
SpecificEnergy = _quantity("specific_energy", ge=0.0)
Fraction = _quantity("fraction", ge=0.0, le=1.0)
Share = _quantity("fraction", ge=0.0)
"""A non-negative ratio that may pass 1 (``0.1``, ``'10 %'``, ``'150 %'``)."""


def _plain_number(*, gt: float | None = None, ge: float | None = None) -> Any:
    """An annotated float without units (a count-free ratio or a price)."""

    def read(value: Any) -> float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise PydanticCustomError(
                "number", "{msg}", {"msg": f"expected a plain number, got {shown(value)}"}
            )
        x = float(value)
        if not math.isfinite(x):
            raise PydanticCustomError(
                "number", "{msg}", {"msg": f"must be a finite number, got {shown(value)}"}
            )
        if gt is not None and not x > gt:
            raise PydanticCustomError(
                "number", "{msg}", {"msg": f"must be > {_fmt(gt)}, got {_fmt(x)}"}
            )
        if ge is not None and not x >= ge:
            raise PydanticCustomError(
                "number", "{msg}", {"msg": f"must be >= {_fmt(ge)}, got {_fmt(x)}"}
            )
        return x

    return Annotated[float, BeforeValidator(read)]


def _whole_number(ge: int, le: int) -> Any:
    def read(value: Any) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or not ge <= value <= le:
            raise PydanticCustomError(
                "count",
                "{msg}",
                {"msg": f"must be a whole number from {ge} to {le:,}, got {shown(value)}"},
            )
        return int(value)

    schema = {"type": "integer", "minimum": ge, "maximum": le}
    return Annotated[int, BeforeValidator(read), WithJsonSchema(schema)]


MAX_TRAYS = 10_000
"""Most tray or rack positions an oven batch may have [-]."""

MAX_ITEMS: dict[str, int] = {
    "ovens": 100,
    "tunnels": 50,
    "products": 1000,
    "shifts": 1000,
    "orders": 10_000,
    "rules": 1000,
}
"""Most entries of each scenario section (far above any plant; bounds the work)."""

MAX_PARTS = 100
"""Most entries of a list inside an item (settings, zones, loadings, stops, steps)."""


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)


def _problem(msg: str) -> PydanticCustomError:
    return PydanticCustomError("scenario", "{msg}", {"msg": msg})


# ------------------------------------------------------------------------- air / stages


class _AirMixin(_Model):
    """Air over the product: either an air speed (h from correlations) or a measured h."""

    air_temperature: Temperature = Field(description="Air temperature [°C].")
    air_speed: AirSpeed | None = Field(
        None, description="Air speed over the product [m/s]; give this or measured_h."
    )
    measured_h: HeatTransferCoefficient | None = Field(
        None,
        description=(
            "Measured surface heat-transfer coefficient [W/(m² K)], radiation included; "
            "given instead of air_speed."
        ),
    )
    measured_h_source: str | None = Field(
        None,
        max_length=1000,
        description=(
            "Where measured_h comes from, for the record (e.g. the probe-log calibration "
            "that produced it: log file and its sha256, fit interval, date of the run); "
            "only with measured_h."
        ),
    )
    relative_humidity: Fraction | None = Field(
        None,
        description=(
            "Relative humidity of the air [-], 0..1 or '65 %' (above 100 °C at most "
            "p/p_sat; give dew_point for hot humid ovens)."
        ),
    )
    dew_point: Temperature | None = Field(
        None, description="Dew point of the air [°C]; an alternative to relative_humidity."
    )

    @model_validator(mode="after")
    def _speed_or_h(self) -> _AirMixin:
        if self.relative_humidity is not None and self.dew_point is not None:
            raise _problem("give relative_humidity or dew_point, not both")
        if self.dew_point is not None and self.dew_point > self.air_temperature:
            raise _problem(
                f"dew_point: must be <= the air temperature ({_fmt(self.air_temperature)} °C), "
                f"got {_fmt(self.dew_point)} °C"
            )
        if self.measured_h_source is not None and self.measured_h is None:
            raise _problem("measured_h_source: is only accepted with measured_h")
        if (self.air_speed is None) == (self.measured_h is None):
            raise _problem(
                "give exactly one of air_speed (e.g. '2.5 m/s') or measured_h "
                "(e.g. '25 W/m**2/K')"
                + (", not both" if self.air_speed is not None else "; neither was given")
            )
        return self


class OvenSetting(_AirMixin):
    """One air setting of a batch oven (a batch runs one setting)."""

    name: Name = Field(description="Setting name, unique within the oven.")
    wall_temperature: Temperature | None = Field(
        None, description="Oven wall temperature for radiation [°C]; default the air temperature."
    )
    emissivity: Fraction | None = Field(
        None,
        description=(
            "Emissivity used for radiation in this setting [-]; overrides the product's "
            "(0 ignores radiation, e.g. in steam)."
        ),
    )

    @property
    def hottest_temperature(self) -> float:
        """Highest of air and wall temperature [°C] (the most the core can approach)."""
        if self.wall_temperature is None:
            return self.air_temperature
        return max(self.air_temperature, self.wall_temperature)


class Oven(_Model):
    """A batch oven (rack oven, cook chamber or smokehouse)."""

    name: Name = Field(description="Oven name, unique among ovens and tunnels.")
    trays: _whole_number(1, MAX_TRAYS) = Field(
        description=f"Tray or rack positions per batch [-], 1 to {MAX_TRAYS:,}."
    )
    capacity: PositiveMass = Field(description="Most product per batch [kg].")
    load_time: Minutes = Field(0.0, description="Minutes to load one batch [min].")
    unload_time: Minutes = Field(0.0, description="Minutes to unload one batch [min].")
    changeover: Minutes = Field(0.0, description="Minutes to change the air setting [min].")
    settings: list[OvenSetting] = Field(
        min_length=1, max_length=MAX_PARTS, description="Air settings, at least one."
    )


class TransferStage(_AirMixin):
    """The wait between oven unload and belt entry (hot hold), in still or moving air."""

    duration: Minutes = Field(
        description="Minutes a batch waits in this air before the belt [min]."
    )


class TunnelZone(_AirMixin):
    """One zone of a tunnel setting; give either a length share or a length."""

    name: Name | None = Field(None, description="Optional zone label.")
    length_fraction: Fraction | None = Field(
        None, description="Share of the tunnel length [-], 0..1."
    )
    length: Length | None = Field(None, description="Zone length [m].")

    @model_validator(mode="after")
    def _share_or_length(self) -> TunnelZone:
        if (self.length_fraction is None) == (self.length is None):
            raise _problem(
                "give exactly one of length_fraction (e.g. 0.5) or length (e.g. '6 m')"
                + (", not both" if self.length is not None else "; neither was given")
            )
        if self.length_fraction is not None and self.length_fraction <= 0:
            raise _problem(f"length_fraction: must be > 0, got {self.length_fraction}")
        return self


class TunnelSetting(_Model):
    """One air setting of a tunnel: the zones the belt carries product through."""

    name: Name = Field(description="Setting name, unique within the tunnel.")
    zones: list[TunnelZone] = Field(
        min_length=1, max_length=MAX_PARTS, description="Zones from belt entry to exit."
    )

    @property
    def coldest_temperature(self) -> float:
        """Coldest zone air temperature [°C]."""
        return min(z.air_temperature for z in self.zones)


class LoadingOption(_Model):
    """A way of loading the belt, with its effect on the surface coefficient."""

    name: Name = Field(description="Loading name, unique within the tunnel.")
    coverage: _quantity("fraction", gt=0.0, le=1.0) = Field(
        description="Fraction of the belt area covered [-], in (0, 1] or '80 %'."
    )
    h_factor: _plain_number(gt=0.0) | None = Field(
        None,
        description=(
            "Factor on the surface coefficient h for this loading [-], calibrated from "
            "probe logs of the loaded belt (it also multiplies a zone's measured_h); "
            "default: 1 in a tunnel setting whose zones all give measured_h (taken as "
            "measured on this loading), else estimated from the coverage as 1 - 0.5 x "
            "coverage (thermal.convection.coverage_loading_factor); either default is an "
            "assumption listed in every report."
        ),
    )


class Tunnel(_Model):
    """A continuous cooling (chill or freeze) tunnel."""

    name: Name = Field(description="Tunnel name, unique among ovens and tunnels.")
    length: Length = Field(description="Belt length in the cold zone [m].")
    belt_width: Length = Field(description="Usable belt width [m].")
    belt_speed_min: BeltSpeed = Field(description="Slowest belt speed [m/min].")
    belt_speed_max: PositiveBeltSpeed = Field(description="Fastest belt speed [m/min].")
    fed_by: list[Name] = Field(
        min_length=1, max_length=MAX_ITEMS["ovens"], description="Names of the ovens that feed it."
    )
    hot_hold_max: PositiveMinutes | None = Field(
        None,
        description="Longest a cooked batch may wait between oven exit and belt entry [min].",
    )
    transfer: TransferStage | None = Field(
        None,
        description=(
            "Air and minutes of the wait between oven and belt used in the chill "
            "calculation; default: no wait."
        ),
    )
    changeover: Minutes = Field(0.0, description="Minutes lost changing to another run [min].")
    loadings: list[LoadingOption] = Field(
        min_length=1, max_length=MAX_PARTS, description="Belt loading options."
    )
    settings: list[TunnelSetting] = Field(
        min_length=1, max_length=MAX_PARTS, description="Air settings."
    )

    def zone_fractions(self, setting: TunnelSetting) -> list[float]:
        """Length share of each zone of ``setting`` [-] (lengths divided by the tunnel length)."""
        return [
            z.length_fraction if z.length_fraction is not None else z.length / self.length
            for z in setting.zones
        ]


# ------------------------------------------------------------------------------ rules


class TemperatureHold(_Model):
    """Core at or above ``core_temperature`` for at least ``hold`` minutes."""

    core_temperature: Temperature = Field(description="Core temperature to reach [°C].")
    hold: Minutes = Field(0.0, description="Minutes the core must stay at or above it [min].")


class LethalitySpec(_Model):
    """A log-reduction requirement computed from the core history (F-value / D-value)."""

    organism: Name = Field(description="Target organism, e.g. 'Salmonella'.")
    log_reduction: _plain_number(gt=0.0) = Field(description="Log10 reductions required [-].")
    d_ref: PositiveMinutes = Field(description="D-value at the reference temperature [min].")
    t_ref: Temperature = Field(description="Reference temperature [°C].")
    z: _quantity("temperature_difference", gt=0.0) = Field(description="z-value [K].")


class _RuleBase(_Model):
    source: Name = Field(description="Published source of the rule (code, section, edition).")
    note: Text = Field("", description="Free text shown in reports.")


class CookRuleSpec(_RuleBase):
    """A cook rule: a core temperature (and hold), alternatives, and/or a lethality target.

    All groups given must be met; of ``alternatives`` any one is enough.
    """

    kind: Literal["cook"] = "cook"
    core_temperature: Temperature | None = Field(
        None, description="Core temperature to reach [°C] (shorthand for one alternative)."
    )
    hold: Minutes = Field(0.0, description="Hold at core_temperature [min].")
    alternatives: list[TemperatureHold] = Field(
        default_factory=list,
        max_length=MAX_PARTS,
        description="Time–temperature alternatives; any one suffices.",
    )
    lethality: LethalitySpec | None = Field(None, description="Log-reduction requirement.")

    @model_validator(mode="after")
    def _something(self) -> CookRuleSpec:
        if self.core_temperature is None and not self.alternatives and self.lethality is None:
            raise _problem(
                "a cook rule needs core_temperature, alternatives or lethality; none was given"
            )
        if self.core_temperature is not None and self.alternatives:
            raise _problem("give core_temperature (with hold) or alternatives, not both")
        if self.core_temperature is None and self.hold:
            raise _problem("hold: given without core_temperature")
        return self

    @property
    def holds(self) -> list[TemperatureHold]:
        """The time–temperature alternatives (``core_temperature`` as a one-item list)."""
        if self.core_temperature is not None:
            return [TemperatureHold(core_temperature=self.core_temperature, hold=self.hold)]
        return list(self.alternatives)

    @property
    def lowest_target(self) -> float | None:
        """Lowest core temperature any alternative asks for [°C] (None for lethality only)."""
        holds = self.holds
        return min(h.core_temperature for h in holds) if holds else None


class CoolingStep(_Model):
    """Core must fall from ``from`` to ``to`` within ``within`` minutes.

    The clock starts when the core first falls to the ``from`` temperature
    (or at oven exit when it is already below).
    """

    start: Temperature = Field(alias="from", description="Temperature the clock starts at [°C].")
    end: Temperature = Field(alias="to", description="Temperature to reach [°C].")
    within: PositiveMinutes = Field(description="Minutes allowed from the start [min].")

    @model_validator(mode="after")
    def _falls(self) -> CoolingStep:
        if not self.end < self.start:
            raise _problem(
                f"to: must be below from ({_fmt(self.start)} °C), got {_fmt(self.end)} °C"
            )
        return self


class ChillRuleSpec(_RuleBase):
    """A chill rule: cooling steps and/or a core temperature at tunnel exit."""

    kind: Literal["chill"] = "chill"
    steps: list[CoolingStep] = Field(
        default_factory=list, max_length=MAX_PARTS, description="Cooling steps."
    )
    exit_core_temperature: Temperature | None = Field(
        None,
        description="Core temperature at tunnel exit [°C]; default the last step's 'to'.",
    )

    @model_validator(mode="after")
    def _something(self) -> ChillRuleSpec:
        if not self.steps and self.exit_core_temperature is None:
            raise _problem("a chill rule needs steps or exit_core_temperature; none was given")
        return self

    @property
    def target(self) -> float:
        """Core temperature the tunnel must reach [°C]."""
        if self.exit_core_temperature is not None:
            return self.exit_core_temperature
        return min(s.end for s in self.steps)


class FreezeRuleSpec(_RuleBase):
    """A freeze rule: core at or below ``core_temperature`` at tunnel exit."""

    kind: Literal["freeze"] = "freeze"
    core_temperature: Temperature = Field(description="Core temperature at tunnel exit [°C].")
    within: PositiveMinutes | None = Field(
        None, description="Optional most minutes from oven exit to reach it [min]."
    )

    @property
    def target(self) -> float:
        """Core temperature the tunnel must reach [°C]."""
        return self.core_temperature


def _rule_tag(value: Any) -> str | None:
    if isinstance(value, str):
        return "<name>"
    if isinstance(value, CookRuleSpec):
        return "<cook>"
    if isinstance(value, ChillRuleSpec):
        return "<chill>"
    if isinstance(value, FreezeRuleSpec):
        return "<freeze>"
    if isinstance(value, Mapping):
        kind = value.get("kind")
        if kind in ("cook", "chill", "freeze"):
            return f"<{kind}>"
    return None


_RULE_KIND_MESSAGE = (
    "expected a rule set name (text) or an inline rule with kind: cook, chill or freeze"
)

RuleSpec = Annotated[
    Annotated[CookRuleSpec, Tag("<cook>")]
    | Annotated[ChillRuleSpec, Tag("<chill>")]
    | Annotated[FreezeRuleSpec, Tag("<freeze>")],
    Discriminator(
        lambda v: None if isinstance(v, str) else _rule_tag(v),
        custom_error_type="rule",
        custom_error_message="expected an inline rule with kind: cook, chill or freeze",
    ),
]
"""A rule set: cook, chill or freeze (chosen by its ``kind`` field)."""

CookRuleRef = Annotated[
    Annotated[Name, Tag("<name>")] | Annotated[CookRuleSpec, Tag("<cook>")],
    Discriminator(
        lambda v: _rule_tag(v) if _rule_tag(v) in ("<name>", "<cook>") else None,
        custom_error_type="rule",
        custom_error_message="expected a cook rule set name or an inline rule with kind: cook",
    ),
]
ChillRuleRef = Annotated[
    Annotated[Name, Tag("<name>")]
    | Annotated[ChillRuleSpec, Tag("<chill>")]
    | Annotated[FreezeRuleSpec, Tag("<freeze>")],
    Discriminator(
        lambda v: _rule_tag(v) if _rule_tag(v) != "<cook>" else None,
        custom_error_type="rule",
        custom_error_message=(
            "expected a chill or freeze rule set name or an inline rule with kind: chill or freeze"
        ),
    ),
]


@lru_cache(maxsize=1)
def _builtin_rules_raw() -> dict[str, Any]:
    text = (
        resources.files("optimizer.scenario")
        .joinpath("data/rules.yaml")
        .read_text(encoding="utf-8")
    )
    data = yaml.safe_load(text)
    return dict(data["rules"])


def builtin_rules() -> dict[str, CookRuleSpec | ChillRuleSpec | FreezeRuleSpec]:
    """The named rule sets shipped in ``optimizer/scenario/data/rules.yaml``.

    These are examples with their published sources; check them against the
    plant's food-safety plan and local codes before use.

    Returns
    -------
    dict
        Rule set name -> validated rule (cook, chill or freeze).
    """
    return dict(_builtin_rules_validated())


@lru_cache(maxsize=1)
def _builtin_rules_validated() -> dict[str, CookRuleSpec | ChillRuleSpec | FreezeRuleSpec]:
    adapter = TypeAdapter(RuleSpec)
    return {name: adapter.validate_python(spec) for name, spec in _builtin_rules_raw().items()}


# ---------------------------------------------------------------------------- geometry


class _GeometryBase(_Model):
    largest_scale: _plain_number(ge=1.0) | None = Field(
        None,
        description=(
            "Largest piece as a factor on every nominal dimension [-], >= 1; "
            "or give largest with its dimensions."
        ),
    )

    _dims: typing.ClassVar[tuple[str, ...]] = ()

    def nominal(self) -> dict[str, float | None]:
        """Nominal piece dimensions [m] (radius, not diameter, for round shapes)."""
        return {d: getattr(self, d) for d in self._dims}

    def largest_dims(self) -> dict[str, float | None]:
        """Largest piece dimensions [m]: ``largest`` overrides, else nominal × ``largest_scale``."""
        dims = self.nominal()
        largest = getattr(self, "largest", None)
        if largest is not None:
            for d in self._dims:
                value = getattr(largest, d, None)
                if value is not None:
                    dims[d] = value
            return dims
        scale = self.largest_scale or 1.0
        return {d: (v * scale if v is not None else None) for d, v in dims.items()}

    def _check_largest(self) -> None:
        largest = getattr(self, "largest", None)
        if largest is not None and self.largest_scale is not None:
            raise _problem("give largest or largest_scale, not both")
        if largest is None:
            return
        nominal = self.nominal()
        for d in self._dims:
            value = getattr(largest, d, None)
            if value is not None and nominal[d] is not None and value < nominal[d]:
                raise _problem(
                    f"largest.{d}: must be >= the nominal {d} {_fmt(nominal[d])} m "
                    f"(plan for the largest piece), got {_fmt(value)} m"
                )


def _radius(radius: float | None, diameter: float | None) -> float:
    if (radius is None) == (diameter is None):
        raise _problem(
            "give exactly one of radius or diameter (e.g. '14 mm')"
            + (", not both" if radius is not None else "; neither was given")
        )
    return radius if radius is not None else diameter / 2.0


class _SlabLargest(_Model):
    thickness: Length | None = None
    length: Length | None = None
    width: Length | None = None


class SlabGeometry(_GeometryBase):
    """A flat piece (fillet, steak, patty) cooled through its thickness from both faces."""

    shape: Literal["slab"] = "slab"
    thickness: Length = Field(description="Full thickness [m].")
    length: Length = Field(
        description="Plan length along the air flow [m] (sets the convection length)."
    )
    width: Length | None = Field(None, description="Plan width [m]; omit for a wide strip.")
    largest: _SlabLargest | None = Field(None, description="Largest piece dimensions [m].")
    _dims = ("thickness", "length", "width")

    @model_validator(mode="after")
    def _check(self) -> SlabGeometry:
        self._check_largest()
        return self


class _RoundLargest(_Model):
    radius: Length | None = None
    diameter: Length | None = None

    @model_validator(mode="after")
    def _one(self) -> _RoundLargest:
        if self.radius is not None and self.diameter is not None:
            raise _problem("give radius or diameter, not both")
        return self


class _RoundMixin(_GeometryBase):
    radius: Length | None = Field(None, description="Radius [m]; or give diameter.")
    diameter: Length | None = Field(None, description="Diameter [m]; or give radius.")

    def nominal(self) -> dict[str, float | None]:
        dims = super().nominal()
        dims["radius"] = _radius(self.radius, self.diameter)
        return dims

    def largest_dims(self) -> dict[str, float | None]:
        dims = self.nominal()
        largest = getattr(self, "largest", None)
        if largest is not None:
            if largest.diameter is not None:
                dims["radius"] = largest.diameter / 2.0
            elif largest.radius is not None:
                dims["radius"] = largest.radius
            for d in self._dims:
                if d != "radius" and getattr(largest, d, None) is not None:
                    dims[d] = getattr(largest, d)
            return dims
        scale = self.largest_scale or 1.0
        return {d: (v * scale if v is not None else None) for d, v in dims.items()}

    def _check_round(self) -> None:
        _radius(self.radius, self.diameter)
        largest = getattr(self, "largest", None)
        if largest is not None and self.largest_scale is not None:
            raise _problem("give largest or largest_scale, not both")
        if largest is None:
            return
        big, nominal = self.largest_dims(), self.nominal()
        for d in self._dims:
            if big[d] is not None and nominal[d] is not None and big[d] < nominal[d]:
                raise _problem(
                    f"largest.{d}: must be >= the nominal {d} {_fmt(nominal[d])} m "
                    f"(plan for the largest piece), got {_fmt(big[d])} m"
                )


class CylinderGeometry(_RoundMixin):
    """A long round piece (sausage, roll) cooled radially; ends ignored."""

    shape: Literal["cylinder"] = "cylinder"
    largest: _RoundLargest | None = Field(None, description="Largest piece radius or diameter.")
    _dims = ("radius",)

    @model_validator(mode="after")
    def _check(self) -> CylinderGeometry:
        self._check_round()
        return self


class SphereGeometry(_RoundMixin):
    """A ball (meatball, dumpling)."""

    shape: Literal["sphere"] = "sphere"
    largest: _RoundLargest | None = Field(None, description="Largest piece radius or diameter.")
    _dims = ("radius",)

    @model_validator(mode="after")
    def _check(self) -> SphereGeometry:
        self._check_round()
        return self


class _FiniteCylinderLargest(_RoundLargest):
    length: Length | None = None


class FiniteCylinderGeometry(_RoundMixin):
    """A short round piece (ham log, roast) cooled radially and through its ends."""

    shape: Literal["finite_cylinder"] = "finite_cylinder"
    length: Length = Field(description="Length end to end [m].")
    largest: _FiniteCylinderLargest | None = Field(None, description="Largest piece dimensions.")
    _dims = ("radius", "length")

    @model_validator(mode="after")
    def _check(self) -> FiniteCylinderGeometry:
        self._check_round()
        return self


class _BlockLargest(_Model):
    length: Length | None = None
    width: Length | None = None
    height: Length | None = None


class BlockGeometry(_GeometryBase):
    """A brick (tray bake, terrine, meat loaf) cooled through all six faces."""

    shape: Literal["block"] = "block"
    length: Length = Field(description="Length along the air flow [m].")
    width: Length = Field(description="Width [m].")
    height: Length = Field(description="Height [m].")
    largest: _BlockLargest | None = Field(None, description="Largest piece dimensions [m].")
    _dims = ("length", "width", "height")

    @model_validator(mode="after")
    def _check(self) -> BlockGeometry:
        self._check_largest()
        return self


_SHAPES = {
    "slab": SlabGeometry,
    "cylinder": CylinderGeometry,
    "sphere": SphereGeometry,
    "finite_cylinder": FiniteCylinderGeometry,
    "block": BlockGeometry,
}


def _shape_tag(value: Any) -> str | None:
    if isinstance(value, _GeometryBase):
        return f"<{value.shape}>"
    if (
        isinstance(value, Mapping)
        and isinstance(value.get("shape"), str)
        and value["shape"] in _SHAPES
    ):
        return f"<{value['shape']}>"
    return None


Geometry = Annotated[
    Annotated[SlabGeometry, Tag("<slab>")]
    | Annotated[CylinderGeometry, Tag("<cylinder>")]
    | Annotated[SphereGeometry, Tag("<sphere>")]
    | Annotated[FiniteCylinderGeometry, Tag("<finite_cylinder>")]
    | Annotated[BlockGeometry, Tag("<block>")],
    Discriminator(
        _shape_tag,
        custom_error_type="shape",
        custom_error_message=(
            "shape: must be one of 'slab', 'cylinder', 'sphere', 'finite_cylinder', 'block'"
        ),
    ),
]

# ---------------------------------------------------------------------------- products


class Composition(_Model):
    """Mass fractions of the main components [-]; they must add up to 1 (±0.001)."""

    water: Fraction
    protein: Fraction = 0.0
    fat: Fraction = 0.0
    carbohydrate: Fraction = 0.0
    fiber: Fraction = 0.0
    ash: Fraction = 0.0

    @model_validator(mode="after")
    def _sum(self) -> Composition:
        total = self.water + self.protein + self.fat + self.carbohydrate + self.fiber + self.ash
        if abs(total - 1.0) > 1e-3:
            raise _problem(f"mass fractions must add up to 1 (±0.001), got {total:.4g}")
        return self


class ExplicitProperties(_Model):
    """Measured or tabulated properties, constant over temperature."""

    conductivity: Conductivity = Field(description="Thermal conductivity [W/(m K)].")
    density: Density = Field(description="Density [kg/m³].")
    specific_heat: SpecificHeat = Field(description="Specific heat [J/(kg K)].")
    latent_heat: SpecificEnergy = Field(
        0.0, description="Latent heat of freezing [J/kg] (0 when not freezing)."
    )


class Product(_Model):
    """A product: piece shape and size, material, rules and how it is loaded."""

    name: Name = Field(description="Product name, unique.")
    geometry: Geometry = Field(description="Piece shape and dimensions.")
    composition: Composition | None = Field(
        None, description="Mass fractions; give this or properties."
    )
    properties: ExplicitProperties | None = Field(
        None, description="Constant properties; give this or composition."
    )
    freezing_point: Temperature | None = Field(
        None, description="Initial freezing point [°C]; default estimated from composition."
    )
    initial_temperature: Temperature = Field(description="Core temperature entering the oven [°C].")
    cook_rule: CookRuleRef = Field(description="Cook rule set name or an inline cook rule.")
    chill_rule: ChillRuleRef = Field(description="Chill or freeze rule set name or inline rule.")
    kg_per_tray: PositiveMass = Field(description="Product on one oven tray [kg].")
    belt_loading: AreaDensity = Field(description="Product per belt area at full coverage [kg/m²].")
    value_per_kg: _plain_number(ge=0.0) = Field(
        1.0, description="Value per kg in the scenario's currency [currency/kg]."
    )
    emissivity: Fraction = Field(0.9, description="Surface emissivity [-].")
    hot_hold_max: PositiveMinutes | None = Field(
        None, description="Longest wait between oven exit and belt entry for this product [min]."
    )

    @model_validator(mode="after")
    def _material(self) -> Product:
        if (self.composition is None) == (self.properties is None):
            raise _problem(
                "give exactly one of composition (mass fractions) or properties "
                "(conductivity, density, specific_heat)"
                + (", not both" if self.composition is not None else "; neither was given")
            )
        return self


# ------------------------------------------------------------------ shifts and orders


class PlannedStop(_Model):
    """Minutes one machine (or every machine) is not available in a shift."""

    machine: Name | None = Field(None, description="Oven or tunnel name; omit for every machine.")
    minutes: Minutes = Field(description="Minutes lost [min].")
    reason: Text = Field("", description="e.g. cleaning, maintenance.")
    start: Minutes | None = Field(
        None,
        description=("Start from the start of the shift [min]; omit to let the schedule place it."),
    )


class Shift(_Model):
    """A shift of the planning horizon (shifts run in the order listed)."""

    name: Name = Field(description="Shift name, unique.")
    minutes: Minutes = Field(description="Minutes available per machine [min].")
    machines: dict[str, Minutes] = Field(
        default_factory=dict,
        max_length=MAX_ITEMS["ovens"] + MAX_ITEMS["tunnels"],
        description="Per-machine minutes overriding 'minutes' [min].",
    )
    stops: list[PlannedStop] = Field(
        default_factory=list,
        max_length=MAX_PARTS,
        description="Cleaning and planned stops taken off the minutes.",
    )

    def available(self, machine: str) -> float:
        """Minutes ``machine`` is available in this shift, stops taken off [min]."""
        base = self.machines.get(machine, self.minutes)
        lost = sum(s.minutes for s in self.stops if s.machine in (None, machine))
        return base - lost


class Order(_Model):
    """Demand for one product: a minimum by a due shift and a maximum."""

    product: Name = Field(description="Product name.")
    min_kg: Mass = Field(0.0, description="Least to make by the end of due_shift [kg].")
    max_kg: Mass | None = Field(None, description="Most to make [kg]; omit for no limit.")
    due_shift: Name | None = Field(None, description="Shift by whose end min_kg is due.")
    weight: _plain_number(ge=0.0) = Field(1.0, description="Weight in the 'soonest' objective.")
    name: Name | None = Field(None, description="Order label for reports.")


class Objective(_Model):
    """What the plan optimises."""

    kind: Literal["most_kg", "most_value", "soonest", "least_energy"] = Field(
        "most_kg",
        description=(
            "most_kg, most_value, soonest (finish orders soonest) or least_energy "
            "(for a fixed output)."
        ),
    )
    fixed_output: Mass | None = Field(
        None, description="Output the least_energy objective must reach [kg]."
    )

    @model_validator(mode="before")
    @classmethod
    def _bare(cls, data: Any) -> Any:
        return {"kind": data} if isinstance(data, str) else data


class SafetyMargin(_Model):
    """Margins added on top of what the physics says is just enough."""

    time_fraction: Share = Field(
        0.10,
        description="Fraction added to every cook and chill time [-] (0.1 or '10 %' = +10 %).",
    )
    core_temperature: TemperatureDifference = Field(
        0.0,
        description="Kelvin added to cook targets and taken off chill targets [K].",
    )


# ---------------------------------------------------------------------------- scenario


def _fixed_stop_problems(i: int, shift: Shift, machines: list[str]) -> list[str]:
    """Stops with a start time that run past their machine's minutes or overlap."""
    out = []
    for j, stop in enumerate(shift.stops):
        if stop.start is None:
            continue
        span = [shift.machines.get(m, shift.minutes) for m in machines if stop.machine in (None, m)]
        if span and stop.start + stop.minutes > min(span) + 1e-9:
            out.append(
                f"shifts[{i}].stops[{j}].start: the stop ends at "
                f"{_fmt(stop.start + stop.minutes)} min, after its machine's "
                f"{_fmt(min(span))} min in the shift"
            )
    for m in machines:
        fixed = sorted(
            (x.start, x.start + x.minutes, j)
            for j, x in enumerate(shift.stops)
            if x.start is not None and x.machine in (None, m)
        )
        for (_, end, _), (start, _, j) in itertools.pairwise(fixed):
            if start < end - 1e-9:
                out.append(
                    f"shifts[{i}].stops[{j}].start: overlaps another stop of {m!r} "
                    f"(which ends at {_fmt(end)} min)"
                )
                return out
    return out


class Scenario(_Model):
    """A validated plant scenario (use :func:`load_scenario` to read one from a file)."""

    plant: Name = Field(description="Plant name shown in reports.")
    description: Text = Field("", description="Free text.")
    currency: Text = Field("EUR", description="Currency of value_per_kg.")
    ovens: list[Oven] = Field(min_length=1, max_length=MAX_ITEMS["ovens"])
    tunnels: list[Tunnel] = Field(min_length=1, max_length=MAX_ITEMS["tunnels"])
    products: list[Product] = Field(min_length=1, max_length=MAX_ITEMS["products"])
    shifts: list[Shift] = Field(min_length=1, max_length=MAX_ITEMS["shifts"])
    orders: list[Order] = Field(default_factory=list, max_length=MAX_ITEMS["orders"])
    rules: dict[str, RuleSpec] = Field(
        default_factory=dict,
        max_length=MAX_ITEMS["rules"],
        description="Rule sets of this plant, by name.",
    )
    objective: Objective = Field(default_factory=Objective)
    safety_margin: SafetyMargin = Field(default_factory=SafetyMargin)
    back_to_back: bool = Field(
        False,
        description=(
            "Shifts run back to back: a tunnel belt may carry product from one shift "
            "into the next (never past the last shift)."
        ),
    )

    @model_validator(mode="after")
    def _cross(self, info: ValidationInfo) -> Scenario:
        if isinstance(info.context, Mapping) and info.context.get(_CHECKED):
            return self  # scenario_from_dict has just run these checks
        problems = _cross_field_problems(
            {k: list(enumerate(getattr(self, k))) for k in _LIST_SECTIONS},
            self.rules,
            self.objective,
            {},
            self.safety_margin.core_temperature,
        )
        if problems:
            raise _problem("; ".join(problems))
        return self

    # lookups -----------------------------------------------------------------
    def oven(self, name: str) -> Oven:
        """The oven called ``name``."""
        return _find(self.ovens, name, "oven")

    def tunnel(self, name: str) -> Tunnel:
        """The tunnel called ``name``."""
        return _find(self.tunnels, name, "tunnel")

    def product(self, name: str) -> Product:
        """The product called ``name``."""
        return _find(self.products, name, "product")

    def rule_library(self) -> dict[str, CookRuleSpec | ChillRuleSpec | FreezeRuleSpec]:
        """Shipped rule sets plus this scenario's ``rules`` section, by name."""
        return {**builtin_rules(), **self.rules}

    def cook_rule(self, product: Product) -> CookRuleSpec:
        """The cook rule of ``product`` (named rule sets resolved)."""
        ref = product.cook_rule
        rule = self.rule_library()[ref] if isinstance(ref, str) else ref
        assert isinstance(rule, CookRuleSpec)
        return rule

    def chill_rule(self, product: Product) -> ChillRuleSpec | FreezeRuleSpec:
        """The chill or freeze rule of ``product`` (named rule sets resolved)."""
        ref = product.chill_rule
        rule = self.rule_library()[ref] if isinstance(ref, str) else ref
        assert isinstance(rule, ChillRuleSpec | FreezeRuleSpec)
        return rule

    def feeds(self, oven: str) -> list[Tunnel]:
        """Tunnels fed by oven ``oven``, in file order."""
        return [t for t in self.tunnels if oven in t.fed_by]


def _find(items: Iterable[Any], name: str, what: str) -> Any:
    for item in items:
        if item.name == name:
            return item
    raise KeyError(f"unknown {what} {name!r}")


_LIST_SECTIONS = ("ovens", "tunnels", "products", "shifts", "orders")
_CHECKED = "corepace-cross-checked"
_ANY = "\x00any"  # marks a section that failed as a whole: skip reference checks

# ------------------------------------------------------------------ cross-field checks

PhysicsCheck = Callable[
    [Sequence[tuple[int, "Oven"]], Sequence[tuple[int, "Tunnel"]], Sequence[tuple[int, "Product"]]],
    list[str],
]
"""``physics(ovens, tunnels, products)``: problems only the physics can judge.

Each argument lists the items that validated with their index in the file;
each problem is one line ``field.path: what is wrong``. The scenario layer
knows no physics: the dwell layer supplies this check
(:func:`optimizer.dwell.checks.physics_problems`).
"""


_QUOTED_NAMES = 12
"""Most names a message lists ("known: ..."); the rest are counted."""


def _quote_list(names: Iterable[str]) -> str:
    names = list(names)
    if not names:
        return "none"
    text = ", ".join(shown(n) for n in names[:_QUOTED_NAMES])
    more = len(names) - _QUOTED_NAMES
    return text + (f" and {more:,} more" if more > 0 else "")


def _cross_field_problems(
    parts: Mapping[str, list[tuple[int, Any]]],
    rules: Mapping[str, Any],
    objective: Objective | None,
    raw_names: Mapping[str, set[str]],
    margin: float = 0.0,
    physics: PhysicsCheck | None = None,
) -> list[str]:
    """Checks that span several fields. ``parts`` holds the items that validated.

    ``raw_names`` holds names of items that failed validation, so they do not
    also show up as "unknown" references. ``physics`` adds the problems only
    the physics can judge (see :data:`PhysicsCheck`).
    """
    out: list[str] = []
    ovens = parts.get("ovens", [])
    tunnels = parts.get("tunnels", [])
    products = parts.get("products", [])
    shifts = parts.get("shifts", [])
    orders = parts.get("orders", [])

    def names(section: str, items: list[tuple[int, Any]]) -> set[str]:
        return {x.name for _, x in items} | set(raw_names.get(section, set()))

    def unknown(name: str, known: set[str]) -> bool:
        return _ANY not in known and name not in known

    # duplicate names
    for section, items in (("ovens", ovens), ("tunnels", tunnels), ("products", products)):
        seen: dict[str, int] = {}
        for i, x in items:
            if x.name in seen:
                out.append(
                    f"{section}[{i}].name: {shown(x.name)} is already used by "
                    f"{section}[{seen[x.name]}]; names must be unique"
                )
            else:
                seen[x.name] = i
    seen = {}
    for i, x in shifts:
        if x.name in seen:
            out.append(
                f"shifts[{i}].name: {shown(x.name)} is already used by shifts[{seen[x.name]}]; "
                "names must be unique"
            )
        seen.setdefault(x.name, i)
    oven_names = {x.name: i for i, x in reversed(ovens)}
    for i, t in tunnels:
        if t.name in oven_names:
            out.append(
                f"tunnels[{i}].name: {shown(t.name)} is also the name of "
                f"ovens[{oven_names[t.name]}]; oven and tunnel names must differ"
            )
    for i, o in ovens:
        _unique(out, f"ovens[{i}].settings", [s.name for s in o.settings])
    for i, t in tunnels:
        _unique(out, f"tunnels[{i}].settings", [s.name for s in t.settings])
        _unique(out, f"tunnels[{i}].loadings", [s.name for s in t.loadings])

    # tunnels: belt speeds, zones, fed_by
    all_ovens = names("ovens", ovens)
    for i, t in tunnels:
        if t.belt_speed_min > t.belt_speed_max:
            out.append(
                f"tunnels[{i}].belt_speed_min: must be <= belt_speed_max "
                f"({_fmt(t.belt_speed_max)} m/min), got {_fmt(t.belt_speed_min)} m/min"
            )
        for j, oven in enumerate(t.fed_by):
            if unknown(oven, all_ovens):
                out.append(
                    f"tunnels[{i}].fed_by[{j}]: {shown(oven)} is not an oven; known: "
                    f"{_quote_list(sorted(all_ovens - {_ANY}))}"
                )
        for k, s in enumerate(t.settings):
            total = sum(t.zone_fractions(s))
            if abs(total - 1.0) > 1e-6:
                out.append(
                    f"tunnels[{i}].settings[{k}].zones: zone shares must cover the tunnel "
                    f"length {_fmt(t.length)} m exactly, got {_fmt(total * t.length)} m "
                    f"({_fmt(total)} of it)"
                )
        if t.transfer is not None and t.hot_hold_max is not None:
            if t.transfer.duration > t.hot_hold_max:
                out.append(
                    f"tunnels[{i}].transfer.duration: must be <= hot_hold_max "
                    f"({_fmt(t.hot_hold_max)} min), got {_fmt(t.transfer.duration)} min"
                )
    fed = {oven for _, t in tunnels for oven in t.fed_by}
    if tunnels and len(tunnels) == len(parts.get("tunnels", [])) and not raw_names.get("tunnels"):
        for i, o in ovens:
            if o.name not in fed:
                out.append(
                    f"ovens[{i}]: {shown(o.name)} feeds no tunnel; list it in a tunnel's fed_by"
                )

    for i, t in tunnels:
        for k, st in enumerate(t.settings):
            for j in range(1, len(st.zones)):
                before, here = st.zones[j - 1].air_temperature, st.zones[j].air_temperature
                if here > before:
                    out.append(
                        f"tunnels[{i}].settings[{k}].zones[{j}].air_temperature: must not be "
                        f"warmer than zones[{j - 1}] ({_fmt(before)} °C) — zone air must not get "
                        f"warmer along the tunnel, got {_fmt(here)} °C"
                    )
    if physics is not None:
        out.extend(physics(ovens, tunnels, products))

    # products: rules
    library = {**builtin_rules(), **rules}
    cook_names = sorted(n for n, r in library.items() if isinstance(r, CookRuleSpec))
    chill_names = sorted(n for n, r in library.items() if not isinstance(r, CookRuleSpec))
    shipped = set(_builtin_rules_raw())
    for name in rules:
        if name in shipped:
            out.append(
                f"rules.{shown_key(name)}: this name is a shipped rule set; choose another "
                "name for a plant rule"
            )
    oven_settings = [(i, k, s) for i, o in ovens for k, s in enumerate(o.settings)]
    tunnel_settings = [(i, k, s) for i, t in tunnels for k, s in enumerate(t.settings)]
    for i, p in products:
        failed = raw_names.get("rules", set())
        cook = None
        if _ANY in failed:
            continue
        if not (isinstance(p.cook_rule, str) and p.cook_rule in failed):
            cook = _resolve(
                out, f"products[{i}].cook_rule", p.cook_rule, library, "cook", cook_names
            )
        chill = None
        if not (isinstance(p.chill_rule, str) and p.chill_rule in failed):
            chill = _resolve(
                out, f"products[{i}].chill_rule", p.chill_rule, library, "chill", chill_names
            )
        if cook is not None and cook.lowest_target is not None:
            target = cook.lowest_target + margin
            if target <= p.initial_temperature:
                out.append(
                    f"products[{i}].cook_rule: cook target {_fmt(target)} °C (margin included) "
                    f"must be above the initial temperature {_fmt(p.initial_temperature)} °C"
                )
            if oven_settings and all(s.hottest_temperature <= target for _, _, s in oven_settings):
                hottest = max(s.hottest_temperature for _, _, s in oven_settings)
                out.append(
                    f"products[{i}].cook_rule: cook target {_fmt(target)} °C cannot be reached: "
                    f"no oven setting is hotter (hottest {_fmt(hottest)} °C)"
                )
        if chill is not None and tunnel_settings:
            target = chill.target - margin
            if all(s.coldest_temperature >= target for _, _, s in tunnel_settings):
                coldest = min(s.coldest_temperature for _, _, s in tunnel_settings)
                out.append(
                    f"products[{i}].chill_rule: chill target {_fmt(target)} °C is at or below "
                    f"the air of every tunnel setting (coldest {_fmt(coldest)} °C); "
                    "physically unreachable"
                )

    # shifts
    machines = all_ovens | names("tunnels", tunnels)
    for i, s in shifts:
        for m in s.machines:
            if unknown(m, machines):
                out.append(
                    f"shifts[{i}].machines.{m}: {shown(m)} is not an oven or tunnel; known: "
                    f"{_quote_list(sorted(machines - {_ANY}))}"
                )
        for j, stop in enumerate(s.stops):
            if stop.machine is not None and unknown(stop.machine, machines):
                out.append(
                    f"shifts[{i}].stops[{j}].machine: {shown(stop.machine)} is not an oven or "
                    f"tunnel; known: {_quote_list(sorted(machines))}"
                )
        for m in sorted(machines - {_ANY}):
            if s.available(m) < 0:
                out.append(
                    f"shifts[{i}].stops: stops of {shown(m)} ({_fmt(s.minutes - s.available(m))} "
                    f"min) exceed its available minutes"
                )
                break
        out.extend(_fixed_stop_problems(i, s, sorted(machines - {_ANY})))

    # orders
    product_names = names("products", products)
    shift_names = names("shifts", shifts)
    first_order: dict[tuple[str, str | None], int] = {}
    for i, o in orders:
        j = first_order.setdefault((o.product, o.due_shift), i)
        if j != i:
            due = f"due_shift {shown(o.due_shift)}" if o.due_shift else "no due_shift"
            out.append(
                f"orders[{i}]: the same product {shown(o.product)} with {due} as orders[{j}]; "
                "give one order per product and due shift (merge their min_kg and max_kg)"
            )
        if unknown(o.product, product_names):
            out.append(
                f"orders[{i}].product: {shown(o.product)} is not a product; known: "
                f"{_quote_list(sorted(product_names - {_ANY}))}"
            )
        if o.max_kg is not None and o.min_kg > o.max_kg:
            out.append(
                f"orders[{i}].min_kg: must be <= max_kg ({_fmt(o.max_kg)} kg), "
                f"got {_fmt(o.min_kg)} kg"
            )
        if o.due_shift is not None and unknown(o.due_shift, shift_names):
            out.append(
                f"orders[{i}].due_shift: {shown(o.due_shift)} is not a shift; known: "
                f"{_quote_list(s.name for _, s in shifts)}"
            )
    if objective is not None and objective.kind == "most_value":
        fields_set = [(i, p) for i, p in products if "value_per_kg" not in p.model_fields_set]
        for i, _ in fields_set:
            out.append(f"products[{i}].value_per_kg: required when objective.kind is most_value")
    return out


def _unique(out: list[str], where: str, names: list[str]) -> None:
    seen: dict[str, int] = {}
    for j, n in enumerate(names):
        if n in seen:
            out.append(
                f"{where}[{j}].name: {shown(n)} is already used by {where}[{seen[n]}]; "
                "names must be unique"
            )
        seen.setdefault(n, j)


def _raw_rule_problems(
    items: Sequence[tuple[int, Mapping[str, Any]]],
    rules: Mapping[str, Any],
    failed: set[str],
) -> list[str]:
    """Unknown rule set names of products that did not validate (raw mappings)."""
    out: list[str] = []
    library = {**builtin_rules(), **rules}
    names = {
        "cook": sorted(n for n, r in library.items() if isinstance(r, CookRuleSpec)),
        "chill": sorted(n for n, r in library.items() if not isinstance(r, CookRuleSpec)),
    }
    for i, item in items:
        for kind in ("cook", "chill"):
            ref = item.get(f"{kind}_rule")
            if isinstance(ref, str) and ref not in failed:
                _resolve(out, f"products[{i}].{kind}_rule", ref, library, kind, names[kind])
    return out


def _resolve(
    out: list[str],
    where: str,
    ref: Any,
    library: Mapping[str, Any],
    kind: str,
    accepted: list[str],
) -> Any:
    if not isinstance(ref, str):
        return ref
    rule = library.get(ref)
    if rule is None:
        close = difflib.get_close_matches(ref, accepted, n=1, cutoff=0.5)
        hint = f" (did you mean {shown(close[0])}?)" if close else ""
        out.append(
            f"{where}: {shown(ref)} is not a known {kind} rule set{hint}; "
            f"known: {_quote_list(accepted)}"
        )
        return None
    wrong = isinstance(rule, CookRuleSpec) != (kind == "cook")
    if wrong:
        out.append(
            f"{where}: {shown(ref)} is a {rule.kind} rule set, expected a {kind} rule set; "
            f"known: {_quote_list(accepted)}"
        )
        return None
    return rule


# -------------------------------------------------------------------- error messages


def _loc_path(loc: Sequence[Any]) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif isinstance(part, str) and part.startswith("<") and part.endswith(">"):
            continue  # union tag, not a field
        else:
            out += ("." if out else "") + shown_key(part)
    return out


def _unwrap(annotation: Any) -> list[Any]:
    """The model classes (or containers) an annotation may hold."""
    origin = typing.get_origin(annotation)
    if origin is Annotated:
        return _unwrap(typing.get_args(annotation)[0])
    if origin in (Union, types.UnionType):
        out: list[Any] = []
        for arg in typing.get_args(annotation):
            out.extend(_unwrap(arg))
        return out
    return [annotation]


def _model_at(root: type[BaseModel], loc: Sequence[Any]) -> type[BaseModel] | None:
    """The model class that holds the last element of ``loc``."""
    current: list[Any] = [root]
    for part in loc[:-1]:
        nxt: list[Any] = []
        if isinstance(part, str) and part.startswith("<"):
            tag = part.strip("<>")
            nxt = [c for c in current if _kind_of(c) == tag] or current
            current = nxt
            continue
        for c in current:
            origin = typing.get_origin(c)
            if isinstance(part, int) and origin is list:
                nxt.extend(_unwrap(typing.get_args(c)[0]))
            elif origin is dict:
                nxt.extend(_unwrap(typing.get_args(c)[1]))
            elif isinstance(c, type) and issubclass(c, BaseModel):
                fields = {f.alias or n: f for n, f in c.model_fields.items()}
                if part in fields:
                    nxt.extend(_unwrap(fields[part].annotation))
        current = nxt
    models = [c for c in current if isinstance(c, type) and issubclass(c, BaseModel)]
    return models[0] if len(models) == 1 else None


def _kind_of(cls: Any) -> str | None:
    if isinstance(cls, type) and issubclass(cls, BaseModel):
        for key in ("shape", "kind"):
            field = cls.model_fields.get(key)
            if field is not None and isinstance(field.default, str):
                return field.default
    return None


_FIELD_HEAD = re.compile(r"^([a-z_]+(?:\.[a-z_]+)*): ")


def _error_line(root: type[BaseModel], err: Mapping[str, Any], prefix: str = "") -> str:
    loc = tuple(err.get("loc", ()))
    path = _loc_path(loc)
    if prefix:
        path = prefix + ("" if not path or path.startswith("[") else ".") + path
    kind = err.get("type", "")
    given = err.get("input")
    ctx = err.get("ctx") or {}
    if kind in ("quantity", "name", "number", "count", "scenario", "rule", "shape"):
        msg = str(ctx.get("msg", err.get("msg", "")))
        if kind == "shape":
            # keep the path at the geometry; say what was given
            shape = given.get("shape") if isinstance(given, Mapping) else given
            msg = f"{err.get('msg')}, got {shown(shape)}"
        if kind == "rule":
            msg = f"{err.get('msg')}, got {shown(given)}"
        head = _FIELD_HEAD.match(msg)
        if head is not None:
            # "field: message" raised by a model check: move the field into the path
            sub, msg = head.group(1), msg[head.end() :]
            path = f"{path}.{sub}" if path else sub
        return f"{path}: {msg}" if path else msg
    if kind == "missing":
        # a missing dimension: say which dimensions that shape needs
        model = _model_at(root, loc)
        shape = model.model_fields.get("shape") if model is not None else None
        needs = ""
        if shape is not None:
            required = [f.alias or n for n, f in model.model_fields.items() if f.is_required()]
            needs = f"; a {shape.default} needs {', '.join(required)}" if required else ""
        return f"{path}: required field is missing{needs}"
    if kind == "extra_forbidden":
        model = _model_at(root, loc)
        accepted = ""
        hint = ""
        if model is not None:
            names = [f.alias or n for n, f in model.model_fields.items()]
            accepted = f"; accepted fields: {', '.join(names)}"
            close = difflib.get_close_matches(str(loc[-1]), names, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
        return f"{path}: unknown field{hint}{accepted}"
    if kind == "literal_error":
        return f"{path}: must be one of {ctx.get('expected', '')}, got {shown(given)}"
    if kind in ("list_type",):
        return f"{path}: expected a list, got {shown(given)}"
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return f"{path}: expected a mapping of fields, got {shown(given)}"
    if kind in ("string_type",):
        return f"{path}: expected text, got {shown(given)}"
    if kind == "too_long":
        return f"{path}: at most {ctx.get('max_length')} entries, got {ctx.get('actual_length')}"
    if kind == "too_short":
        return f"{path}: needs at least {ctx.get('min_length', 1)} entry, got none"
    if kind == "value_error":
        msg = str(err.get("msg", "")).removeprefix("Value error, ")
        return f"{path}: {msg}"
    return f"{path}: {err.get('msg', 'invalid')}, got {shown(given)}"


def _errors_of(root: type[BaseModel], exc: ValidationError, prefix: str = "") -> list[str]:
    lines = []
    for err in exc.errors(include_url=False):
        line = _error_line(root, err, prefix)
        if line not in lines:
            lines.append(line)
    return lines


# ---------------------------------------------------------------------------- loading


def _raw_name(item: Any) -> str | None:
    if isinstance(item, Mapping) and isinstance(item.get("name"), str):
        return item["name"].strip()
    return None


def scenario_from_dict(
    data: Any, source: str | None = None, *, physics: PhysicsCheck | None = None
) -> Scenario:
    """Validate a raw scenario mapping (as read from YAML) into a :class:`Scenario`.

    Every section and list item is validated separately so that all problems
    are reported together; then the cross-field checks run on what validated.

    Parameters
    ----------
    data : mapping
        Raw scenario, values with or without units.
    source : str, optional
        Where ``data`` came from, for the error message.
    physics : PhysicsCheck, optional
        Checks only the physics can judge, run with the cross-field checks
        (:func:`optimizer.dwell.checks.physics_problems`; the dwell layer's
        :func:`optimizer.dwell.checks.load_checked_scenario` passes it).

    Raises
    ------
    ScenarioError
        Carrying one line per problem (``field.path: what is accepted``).
    """
    if not isinstance(data, Mapping):
        raise ScenarioError(
            [f"scenario: must be a mapping of fields, got {type(data).__name__}"], source
        )
    problems: list[str] = []
    fields = Scenario.model_fields
    for key in data:
        if key not in fields:
            close = difflib.get_close_matches(str(key), list(fields), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problems.append(f"{key}: unknown field{hint}; accepted fields: {', '.join(fields)}")
    for key, field in fields.items():
        if field.is_required() and key not in data:
            problems.append(f"{key}: required field is missing")

    parts: dict[str, list[tuple[int, Any]]] = {}
    raw_names: dict[str, set[str]] = {}
    failed_products: list[tuple[int, Mapping[str, Any]]] = []
    models: dict[str, type[BaseModel]] = {
        "ovens": Oven,
        "tunnels": Tunnel,
        "products": Product,
        "shifts": Shift,
        "orders": Order,
    }
    for section, model in models.items():
        raw = data.get(section, [])
        if raw is None:
            raw = []
        if not isinstance(raw, list):
            problems.append(f"{section}: expected a list, got {type(raw).__name__}")
            raw_names[section] = {_ANY}
            continue
        if not raw and fields[section].is_required():
            problems.append(f"{section}: needs at least 1 entry, got none")
        if len(raw) > MAX_ITEMS[section]:
            problems.append(f"{section}: at most {MAX_ITEMS[section]:,} entries, got {len(raw):,}")
            raw_names[section] = {_ANY}
            continue
        good: list[tuple[int, Any]] = []
        for i, item in enumerate(raw):
            try:
                good.append((i, model.model_validate(item)))
            except ValidationError as exc:
                problems.extend(_errors_of(model, exc, f"{section}[{i}]"))
                name = _raw_name(item)
                if name:
                    raw_names.setdefault(section, set()).add(name)
                if section == "products" and isinstance(item, Mapping):
                    failed_products.append((i, item))
        parts[section] = good

    rules: dict[str, Any] = {}
    raw_rules = data.get("rules", {}) or {}
    if not isinstance(raw_rules, Mapping):
        problems.append(
            f"rules: expected a mapping of rule set name to rule, got {shown(raw_rules)}"
        )
    elif len(raw_rules) > MAX_ITEMS["rules"]:
        problems.append(f"rules: at most {MAX_ITEMS['rules']:,} entries, got {len(raw_rules):,}")
        raw_names["rules"] = {_ANY}
    else:
        adapter = TypeAdapter(RuleSpec)
        for name, spec in raw_rules.items():
            problem = name_problem(name)
            if problem is not None:
                problems.append(f"rules.{shown_key(name)}: the rule set name {problem}")
                continue
            try:
                rules[str(name)] = adapter.validate_python(spec)
            except ValidationError as exc:
                raw_names.setdefault("rules", set()).add(str(name))
                for err in exc.errors(include_url=False):
                    problems.append(_error_line(CookRuleSpec, err, f"rules.{shown_key(name)}"))

    objective: Objective | None = None
    margin = 0.0
    for key, model in (("objective", Objective), ("safety_margin", SafetyMargin)):
        if key in data:
            try:
                value = model.model_validate(data[key])
            except ValidationError as exc:
                problems.extend(_errors_of(model, exc, key))
                continue
            if isinstance(value, Objective):
                objective = value
            elif isinstance(value, SafetyMargin):
                margin = value.core_temperature
    if "plant" in data and name_problem(data["plant"]) is not None:
        problems.append(f"plant: {name_problem(data['plant'])}")
    for key in ("description", "currency"):
        if key in data and text_problem(data[key]) is not None:
            problems.append(f"{key}: {text_problem(data[key])}")

    problems.extend(_cross_field_problems(parts, rules, objective, raw_names, margin, physics))
    # a product that failed its own checks still gets its rule names checked, so one
    # pass lists every problem
    problems.extend(_raw_rule_problems(failed_products, rules, raw_names.get("rules", set())))
    if problems:
        raise ScenarioError(problems, source)
    try:
        return Scenario.model_validate(dict(data), context={_CHECKED: True})
    except ValidationError as exc:  # anything the per-section pass could not see
        raise ScenarioError(_errors_of(Scenario, exc), source) from None


def load_scenario(
    path: str | Path, changes: Iterable[Change] = (), *, physics: PhysicsCheck | None = None
) -> Scenario:
    """Read and validate a scenario file.

    ``extends`` chains and ``changes`` (see :mod:`optimizer.scenario.overrides`) are
    resolved first; then every value is converted and checked.

    Parameters
    ----------
    path : str or Path
        Scenario YAML file.
    changes : iterable of optimizer.scenario.overrides.Change
        Dotted-path changes applied after the file (``--set``).
    physics : PhysicsCheck, optional
        Checks only the physics can judge (see :func:`scenario_from_dict`).

    Returns
    -------
    Scenario
        The validated scenario (temperatures °C, times min, lengths m, ...).

    Raises
    ------
    ScenarioError
        All problems at once, one line each; nothing has been computed or written.
    """
    try:
        raw = load_raw(path, changes)
    except OverrideError as exc:
        raise ScenarioError([str(exc)], str(path)) from None
    return scenario_from_dict(raw, str(path), physics=physics)


def scenario_to_dict(scenario: Scenario) -> dict[str, Any]:
    """The scenario as plain data in documented units (numbers without units).

    Loading the result again gives an equal :class:`Scenario`.
    """
    return _name_first(scenario.model_dump(mode="json", by_alias=True, exclude_none=True))


def _name_first(node: Any) -> Any:
    if isinstance(node, dict):
        keys = sorted(node, key=lambda k: k != "name")
        return {k: _name_first(node[k]) for k in keys}
    if isinstance(node, list):
        return [_name_first(x) for x in node]
    return node


def dump_scenario(scenario: Scenario, path: str | Path) -> None:
    """Write ``scenario`` as YAML (numbers in documented units).

    See :mod:`optimizer.scenario.units` for the unit of each kind of field.

    Parameters
    ----------
    scenario : Scenario
        A validated scenario.
    path : str or Path
        File to write (written to a temporary name first, then renamed).
    """
    path = Path(path)
    text = yaml.safe_dump(scenario_to_dict(scenario), sort_keys=False, allow_unicode=True)
    tmp = path.with_name(f".{path.name}.tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(path)


def scenario_json_schema() -> dict[str, Any]:
    """JSON Schema of scenario files, for editors (``corepace schema``).

    Returns
    -------
    dict
        A JSON Schema (draft 2020-12) describing every field, its unit and
        accepted forms.
    """
    schema = Scenario.model_json_schema(by_alias=True)
    schema["title"] = "corepace scenario"
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema.setdefault(
        "description",
        "A plant scenario for corepace. Numbers are in each field's documented unit; strings "
        "with units ('72 degC', '45 min', '2.5 m/s') are converted on loading.",
    )
    defs = schema["$defs"]
    # `objective: most_value` is the short form of `objective: {kind: most_value}`
    objective = defs["Objective"]
    defs["Objective"] = {
        "description": objective.get("description", ""),
        "anyOf": [
            {
                "type": "string",
                "enum": objective["properties"]["kind"]["enum"],
                "description": "The objective's kind alone.",
            },
            objective,
        ],
    }
    # a file that extends another needs none of the sections: they come from its base
    props = schema["properties"]
    props["extends"] = {
        "type": "string",
        "minLength": 1,
        "description": "Scenario file this one starts from (path relative to this file); "
        "sections given here replace the base's, then `changes` apply.",
    }
    props["changes"] = {
        "type": "array",
        "description": "Changes applied to the base scenario, in order (needs `extends`).",
        "items": {
            "oneOf": [
                {
                    "type": "object",
                    "properties": {
                        "set": {
                            "type": "string",
                            "description": "Dotted path, e.g. 'tunnels.chill-tunnel.length'.",
                        },
                        "value": {"description": "New value, with units as in the file."},
                    },
                    "required": ["set", "value"],
                    "additionalProperties": False,
                },
                {
                    "type": "object",
                    "properties": {
                        "add": {"type": "string", "description": "Dotted path of a list."},
                        "copy_of": {"type": "string", "description": "Item to copy, by name."},
                        "value": {"description": "The item, or the fields that differ."},
                    },
                    "required": ["add"],
                    "anyOf": [{"required": ["value"]}, {"required": ["copy_of"]}],
                    "additionalProperties": False,
                },
            ]
        },
    }
    required = schema.pop("required", [])
    schema["if"] = {"required": ["extends"]}
    schema["else"] = {"required": required}
    schema["dependentRequired"] = {"changes": ["extends"]}
    return schema
