"""What-if studies: one plan per point of a grid or a list of named points.

A *study* file names a base scenario and the changes to try, and optionally
the equipment purchases to price::

    study: Longer and colder tunnel
    base: demo.yaml                    # scenario file, relative to the study file
    shifts_per_week: 15                # for kg per week (default 15)
    points:                            # or grid: (see below), not both
      - name: today
      - name: longer-colder
        changes:
          - {what: tunnel_longer_by, value: 6 m}
          - {what: air_temperature_change, value: -5 K}
    base_point: today                  # default: the first point
    finance: {years: 10, discount_rate: 8 %, weeks_per_year: 50}
    purchases:
      - {name: tunnel extension, point: longer-colder, capital: 250000,
         running_cost_per_year: 12000}

A ``grid`` is a list of axes, each a change with ``values:`` instead of
``value:`` (or a mapping ``dotted.path: [values]``); its points are every
combination, the first axis varying slowest. ``common_changes:`` (a list of
changes) apply to the base before every point's own; ``solver:`` may set
``time_limit`` [s] and ``gap`` [-] for every plan.

Changes
-------
Each change is one of

``{set: PATH, value: V}`` / ``{add: PATH, value: V, copy_of: NAME}``
    A dotted-path change exactly as in scenario files
    (:mod:`optimizer.scenario.overrides`); values keep their units as strings.
``{what: KIND, value: V, ...}``
    A named what-if, worked out against the base scenario:

    ======================== ===================================================
    ``tunnel_length``        belt length of ``machine`` [m] (default: the only
                             tunnel)
    ``tunnel_longer_by``     add this length to the tunnel [m] (may be < 0)
    ``belt_width``           usable belt width of the tunnel [m]
    ``air_temperature``      air temperature of ``machine`` (oven or tunnel;
                             default the only tunnel) at ``setting`` (default:
                             every setting; in a tunnel every zone) [°C]
    ``air_temperature_change`` add this difference to those air temperatures
                             (``-5 K`` is 5 K colder) [K]; an oven setting's
                             wall temperature moves with its air; relative
                             humidity and dew point are kept as written
    ``air_speed``            air speed at those settings/zones [m/s] (refused
                             where a measured h is given)
    ``add_oven``             ``value`` more copies of oven ``copy_of`` (named
                             ``name``, or ``<copy_of>-copy``; ``-1``, ``-2``
                             ... for several), feeding the tunnels the copied
                             oven feeds; its own shift overrides and stops are
                             not copied
    ``shift_pattern``        replace the shifts by the pattern named ``value``
                             in ``shift_patterns:`` (which may also set
                             ``shifts_per_week``)
    ``demand_growth``        multiply every order's ``min_kg`` and ``max_kg``
                             by ``value`` [-]
    ``order_minimums``       multiply every order's ``min_kg`` by ``value``
                             (``0``: no minimums, so the plan shows capacity
                             rather than whether the order book fits) [-]
    ``product_mix``          multiply the orders of each product by its factor:
                             ``value`` is a mapping product → factor or the
                             name of one in ``product_mixes:`` [-]
    ======================== ===================================================

Figures per point
-----------------
Every point is planned from scratch in a worker (:func:`evaluate_point`):
the scenario is rebuilt from the base data and the point's changes, the
dwell table is read from (or added to) the shared on-disk cache, the planner
runs, and the row keeps throughput [kg per shift, kg per week], the value
shipped (kg times each product's ``value_per_kg``), the bottleneck machine
and its shadow price (the marginal value of one more hour on it, in
objective units per hour), the mean utilisation of every machine [-], the
kg of every product and the product heat (heat put into the product in the
ovens plus heat taken out in the tunnels [kWh]; product heat only, not the
machines' metered energy). kg per shift is the horizon's kg over its number
of shifts; kg per week is that times ``shifts_per_week``.

Purchases
---------
Each purchase option names the point that represents the plant with it; its
extra kg per week over the base point times the margin per kg (the option's
or the study's ``margin_per_kg``; when neither is given, the extra *value*
per week from the products' ``value_per_kg``) times ``weeks_per_year`` is
the extra margin per year, and :func:`optimizer.studies.finance.purchase_case` gives
the simple payback and the NPV at the discount rate over ``years``.

CAUTION: every figure is a model estimate for the piece sizes entered; the
cook and chill limits come from the plant's food-safety plan and local codes;
a changed plant (a longer tunnel, colder air) needs its own validation with
calibrated probes in the thickest pieces at the coldest spot before use.
"""

from __future__ import annotations

import copy
import hashlib
import itertools
import json
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import pandas as pd
from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    ValidationError,
    field_validator,
    model_validator,
)
from pydantic_core import PydanticCustomError

from optimizer.scenario.overrides import Change, OverrideError, apply_changes, load_raw
from optimizer.scenario.units import UnitParseError, parse_quantity
from optimizer.studies.execute import ExecMode, SweepPoint, done_indices, new_pool, run_points
from optimizer.studies.finance import PurchaseCase, annual_margin, purchase_case

__all__ = [
    "WHAT_KINDS",
    "Study",
    "StudyError",
    "StudyPoint",
    "StudySpec",
    "SweepResult",
    "axis_numbers",
    "axis_unit",
    "evaluate_point",
    "load_study",
    "plan_row",
    "purchase_table",
    "results_table",
    "run_study",
    "sweep_points",
    "value_text",
    "warm_dwell",
]

DEFAULT_SHIFTS_PER_WEEK = 15.0
"""Shifts a week when the study gives none: three shifts, five days (common practice)."""

WhatKind = Literal[
    "tunnel_length",
    "tunnel_longer_by",
    "belt_width",
    "air_temperature",
    "air_temperature_change",
    "air_speed",
    "add_oven",
    "shift_pattern",
    "demand_growth",
    "order_minimums",
    "product_mix",
]
WHAT_KINDS: tuple[str, ...] = WhatKind.__args__  # type: ignore[attr-defined]
"""The named what-ifs a study may use (see the module notes)."""

# unit kind of each named what-if's value, for parsing and for plot axes
_VALUE_KIND = {
    "tunnel_length": "length",
    "tunnel_longer_by": "length",
    "belt_width": "length",
    "air_temperature": "temperature",
    "air_temperature_change": "temperature_difference",
    "air_speed": "air_speed",
}
_AXIS_UNIT = {
    "length": "m",
    "temperature": "°C",
    "temperature_difference": "K",
    "air_speed": "m/s",
}


class StudyError(ValueError):
    """A study file has one or more problems; nothing was computed or written.

    Attributes
    ----------
    problems : list of str
        One line per problem, naming the field and what is accepted.
    """

    def __init__(self, problems: Sequence[str]) -> None:
        self.problems = [str(p) for p in problems] or ["bad study"]
        super().__init__("\n".join(self.problems))


# ---------------------------------------------------------------------------
# The study file
# ---------------------------------------------------------------------------


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    @model_validator(mode="before")
    @classmethod
    def _known_fields(cls, data: Any) -> Any:
        if isinstance(data, Mapping):
            known = set(cls.model_fields)
            unknown = [str(k) for k in data if k not in known]
            if unknown:
                raise PydanticCustomError(
                    "unknown_field",
                    "{msg}",
                    {
                        "msg": f"unknown field {', '.join(map(repr, unknown))}; accepted: "
                        + ", ".join(cls.model_fields)
                    },
                )
        return data


def _finite(value: Any, what: str = "a number") -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise PydanticCustomError("number", "{msg}", {"msg": f"expected {what}, got {value!r}"})
    return float(value)


class _ChangeFields(_Model):
    """Fields shared by a change and a grid axis."""

    set: str | None = Field(None, description="Dotted path to replace (scenario-file form).")
    add: str | None = Field(None, description="Dotted path of a list to append to.")
    what: WhatKind | None = Field(None, description="A named what-if (see the module notes).")
    copy_of: str | None = Field(None, description="Item to copy (add, add_oven).")
    machine: str | None = Field(None, description="Oven or tunnel name (default: the only tunnel).")
    setting: str | None = Field(None, description="Air setting name (default: every setting).")
    name: str | None = Field(None, description="Name of the added oven (add_oven).")

    def _check_form(self, has_value: bool) -> None:
        forms = [k for k in ("set", "add", "what") if getattr(self, k) is not None]
        if len(forms) != 1:
            raise PydanticCustomError(
                "change",
                "{msg}",
                {"msg": "give exactly one of 'set: PATH', 'add: PATH' or 'what: KIND'"},
            )
        if self.what is None:
            extra = [k for k in ("machine", "setting", "name") if getattr(self, k) is not None]
            if extra:
                raise PydanticCustomError(
                    "change",
                    "{msg}",
                    {"msg": f"{', '.join(extra)}: only accepted with 'what:'"},
                )
            if self.set is not None and self.copy_of is not None:
                raise PydanticCustomError(
                    "change", "{msg}", {"msg": "copy_of: only accepted with 'add' or add_oven"}
                )
        if not has_value and not (self.add is not None and self.copy_of is not None):
            raise PydanticCustomError("change", "{msg}", {"msg": "value: required field"})

    def kind_label(self) -> str:
        """A short readable name of what this change touches."""
        if self.set is not None:
            return self.set
        if self.add is not None:
            return f"{self.add} += "
        parts = [str(self.what)]
        if self.machine:
            parts.append(self.machine)
        if self.setting:
            parts.append(self.setting)
        if self.copy_of:
            parts.append(self.copy_of)
        return " ".join(parts)


class ChangeSpec(_ChangeFields):
    """One change of a named point (see the module notes for the forms)."""

    value: Any = Field(None, description="New value, as written in a scenario file.")

    @model_validator(mode="after")
    def _form(self) -> ChangeSpec:
        self._check_form("value" in self.model_fields_set)
        return self

    def label(self) -> str:
        """``kind=value`` for tables."""
        if self.add is not None:
            return f"{self.add} += {value_text(self.value if self.value is not None else '')}"
        return f"{self.kind_label()}={value_text(self.value)}"


class AxisSpec(_ChangeFields):
    """One axis of a grid: a change with a list of values."""

    values: list[Any] = Field(min_length=1, description="Values to try, in order.")
    label: str | None = Field(None, description="Column name in the results (default: derived).")

    @model_validator(mode="after")
    def _form(self) -> AxisSpec:
        self._check_form(True)
        return self

    def change(self, value: Any) -> ChangeSpec:
        """The change of this axis at ``value``."""
        data = self.model_dump(exclude={"values", "label"}, exclude_none=True)
        return ChangeSpec.model_validate({**data, "value": value})

    def column(self) -> str:
        """Column name of the axis in the results table."""
        return self.label or self.kind_label().strip()


class PointSpec(_Model):
    """A named point: a name and its changes (none = the base scenario)."""

    name: str = Field(min_length=1, description="Point name, unique.")
    changes: list[ChangeSpec] = Field(default_factory=list, description="Changes, in order.")


class ShiftPattern(_Model):
    """A shift pattern for ``what: shift_pattern``."""

    shifts: list[dict[str, Any]] = Field(
        min_length=1, description="Shifts as in a scenario file (name, minutes, stops ...)."
    )
    shifts_per_week: float | None = Field(
        None, gt=0, description="Shifts a week with this pattern (default: the study's)."
    )


class Finance(_Model):
    """Money settings of the purchase comparison."""

    years: int = Field(10, ge=1, description="Years of service [year].")
    discount_rate: float = Field(description="Discount rate per year, 0.08 or '8 %' [-].")
    weeks_per_year: float = Field(
        50.0, gt=0, le=53, description="Production weeks a year [week/year] (common practice: 50)."
    )
    margin_per_kg: float | None = Field(
        None, ge=0, description="Margin per extra kg [currency/kg]; default: product values."
    )

    @field_validator("discount_rate", mode="before")
    @classmethod
    def _rate(cls, value: Any) -> float:
        try:
            rate = parse_quantity(value, "fraction", field="")
        except UnitParseError:
            raise PydanticCustomError(
                "rate",
                "{msg}",
                {"msg": f"expected a fraction such as 0.08 or '8 %', got {value!r}"},
            ) from None
        if not -1.0 < rate < 1.0:
            raise PydanticCustomError(
                "rate", "{msg}", {"msg": f"must be between -100 % and 100 %, got {value!r}"}
            )
        return rate


PointRef = str | dict[str, Any]


class Purchase(_Model):
    """One equipment purchase option."""

    name: str = Field(min_length=1, description="Option name, unique.")
    point: PointRef = Field(
        description="The point with the option: a point name (or label), or for a grid a "
        "mapping axis column → value."
    )
    capital: float = Field(ge=0, description="Purchase and installation cost [currency].")
    running_cost_per_year: float = Field(
        0.0, description="Extra running cost a year (energy, maintenance) [currency/year]."
    )
    margin_per_kg: float | None = Field(
        None, ge=0, description="Margin per extra kg [currency/kg]; default: the study's."
    )

    @field_validator("capital", "running_cost_per_year", mode="before")
    @classmethod
    def _money(cls, value: Any) -> float:
        return _finite(value, "a plain number in the scenario's currency")


class SolverSettings(_Model):
    """Planner options for every point (command-line options override them)."""

    time_limit: float | None = Field(None, gt=0, description="Limit per solve [s].")
    gap: float | None = Field(None, ge=0, lt=1, description="Relative MIP gap [-].")


class StudySpec(_Model):
    """A study file, as validated (before the changes are worked out)."""

    study: str = Field("", description="Study title.")
    description: str = Field("", description="Free text.")
    base: str = Field(min_length=1, description="Base scenario file, relative to the study.")
    grid: list[AxisSpec] | None = Field(None, description="Axes of a grid of points.")
    points: list[PointSpec] | None = Field(None, description="Named points.")
    common_changes: list[ChangeSpec] = Field(
        default_factory=list, description="Changes applied to the base for every point, first."
    )
    base_point: PointRef | None = Field(None, description="Point of today's plant (default first).")
    shifts_per_week: float = Field(DEFAULT_SHIFTS_PER_WEEK, gt=0, description="Shifts a week.")
    shift_patterns: dict[str, ShiftPattern] = Field(default_factory=dict)
    product_mixes: dict[str, dict[str, float]] = Field(default_factory=dict)
    finance: Finance | None = None
    purchases: list[Purchase] = Field(default_factory=list)
    solver: SolverSettings = Field(default_factory=SolverSettings)

    @field_validator("grid", mode="before")
    @classmethod
    def _grid_mapping(cls, value: Any) -> Any:
        if isinstance(value, Mapping):
            out = []
            for path, values in value.items():
                if not isinstance(values, list):
                    raise PydanticCustomError(
                        "grid",
                        "{msg}",
                        {"msg": f"{path}: expected a list of values, got {values!r}"},
                    )
                out.append({"set": str(path), "values": values})
            return out
        return value

    @model_validator(mode="after")
    def _shape(self) -> StudySpec:
        if (self.grid is None) == (self.points is None):
            raise PydanticCustomError(
                "study", "{msg}", {"msg": "give either 'grid:' or 'points:' (exactly one)"}
            )
        if self.points is not None:
            if not self.points:
                raise PydanticCustomError(
                    "study", "{msg}", {"msg": "points: needs at least 1 point"}
                )
            names = [p.name for p in self.points]
            dup = sorted({n for n in names if names.count(n) > 1})
            if dup:
                raise PydanticCustomError(
                    "study", "{msg}", {"msg": f"points: names must be unique, repeated: {dup}"}
                )
        if self.grid is not None:
            if not self.grid:
                raise PydanticCustomError("study", "{msg}", {"msg": "grid: needs at least 1 axis"})
            cols = [a.column() for a in self.grid]
            dup = sorted({c for c in cols if cols.count(c) > 1})
            if dup:
                raise PydanticCustomError(
                    "study",
                    "{msg}",
                    {"msg": f"grid: two axes named {dup}; give each a distinct 'label'"},
                )
        if self.purchases and self.finance is None:
            raise PydanticCustomError(
                "study",
                "{msg}",
                {"msg": "finance: required with purchases (years, discount_rate)"},
            )
        names = [p.name for p in self.purchases]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise PydanticCustomError(
                "study", "{msg}", {"msg": f"purchases: names must be unique, repeated: {dup}"}
            )
        for mix, factors in self.product_mixes.items():
            for product, factor in factors.items():
                if not (isinstance(factor, int | float) and factor >= 0):
                    raise PydanticCustomError(
                        "study",
                        "{msg}",
                        {"msg": f"product_mixes.{mix}.{product}: must be a number >= 0"},
                    )
        return self


def _loc(loc: Sequence[Any]) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif str(part).startswith(("function-", "list[", "dict[", "str", "json-or")):
            continue  # union/validator branch names carry no field
        else:
            out += f".{part}" if out else str(part)
    return out


def _validation_problems(exc: ValidationError, prefix: str) -> list[str]:
    lines = []
    for err in exc.errors(include_url=False):
        where = _loc(err["loc"])
        msg = str(err["msg"])
        if err["type"] == "missing":
            msg = "required field is missing"
        line = f"{prefix}: {where}: {msg}" if where else f"{prefix}: {msg}"
        if line not in lines:
            lines.append(line)
    return lines


# ---------------------------------------------------------------------------
# Working out the changes against the base scenario
# ---------------------------------------------------------------------------


def value_text(value: Any) -> str:
    """A value as it reads in a table: ``6 m``, ``1.2``, ``pork-sausage×1.5``."""
    if isinstance(value, Mapping):
        return ", ".join(f"{k}×{value_text(v)}" for k, v in value.items())
    if isinstance(value, list):
        return "[" + ", ".join(value_text(v) for v in value) + "]"
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


class _Fail(Exception):
    """A problem found while working out a change (turned into a StudyError line)."""


def _items(raw: Mapping[str, Any], section: str) -> list[Any]:
    items = raw.get(section) or []
    if not isinstance(items, list):
        raise _Fail(f"the base scenario's {section} is not a list")
    return items


def _names(items: Sequence[Any]) -> list[str]:
    return [str(x.get("name")) for x in items if isinstance(x, Mapping)]


def _index(items: Sequence[Any], name: str, what: str, field: str) -> int:
    for i, item in enumerate(items):
        if isinstance(item, Mapping) and str(item.get("name")) == name:
            return i
    known = ", ".join(_names(items)) or "none"
    raise _Fail(f"{field}: no {what} named {name!r}; known: {known}")


def _quantity(value: Any, kind: str, *, positive: bool = False) -> float:
    try:
        x = parse_quantity(value, kind, field="value")
    except UnitParseError as exc:
        raise _Fail(str(exc)) from None
    if positive and not x > 0:
        raise _Fail(f"value: must be > 0 {_AXIS_UNIT.get(kind, '')}, got {value!r}".rstrip())
    return x


def _factor(value: Any, where: str = "value") -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise _Fail(f"{where}: expected a plain number (a factor such as 1.2), got {value!r}")
    if value < 0:
        raise _Fail(f"{where}: must be >= 0, got {value!r}")
    return float(value)


def _tunnel(raw: Mapping[str, Any], machine: str | None) -> int:
    tunnels = _items(raw, "tunnels")
    if machine is None:
        if len(tunnels) != 1:
            raise _Fail(
                f"machine: the base scenario has {len(tunnels)} tunnels "
                f"({', '.join(_names(tunnels))}); name one"
            )
        return 0
    return _index(tunnels, machine, "tunnel", "machine")


def _machine(raw: Mapping[str, Any], machine: str | None) -> tuple[str, int]:
    if machine is None:
        return "tunnels", _tunnel(raw, None)
    for section in ("ovens", "tunnels"):
        items = _items(raw, section)
        if machine in _names(items):
            return section, _index(items, machine, section[:-1], "machine")
    known = _names(_items(raw, "ovens")) + _names(_items(raw, "tunnels"))
    raise _Fail(f"machine: no oven or tunnel named {machine!r}; known: {', '.join(known)}")


def _air_targets(raw: Mapping[str, Any], spec: ChangeSpec) -> list[tuple[str, Mapping[str, Any]]]:
    """(dotted index path, air mapping) of every air setting the change touches."""
    section, i = _machine(raw, spec.machine)
    settings = _items(raw[section][i], "settings")
    if spec.setting is not None:
        chosen = [_index(settings, spec.setting, "setting", "setting")]
    else:
        chosen = list(range(len(settings)))
    out = []
    for j in chosen:
        s = settings[j]
        if section == "ovens":
            out.append((f"ovens.{i}.settings.{j}", s))
        else:
            for k, zone in enumerate(_items(s, "zones")):
                out.append((f"tunnels.{i}.settings.{j}.zones.{k}", zone))
    return out


def _scaled_orders(
    raw: Mapping[str, Any],
    factors: Mapping[str, float] | float,
    keys: tuple[str, ...] = ("min_kg", "max_kg"),
) -> list[Change]:
    orders = _items(raw, "orders")
    if not orders:
        raise _Fail("the base scenario has no orders to scale (it makes as much as fits)")
    if isinstance(factors, Mapping):
        products = _names(_items(raw, "products"))
        for product in factors:
            if product not in products:
                raise _Fail(f"value: {product!r} is not a product; known: {', '.join(products)}")
            if not any(isinstance(o, Mapping) and o.get("product") == product for o in orders):
                raise _Fail(f"value: product {product!r} has no orders to scale")
    out = []
    for n, order in enumerate(orders):
        if not isinstance(order, Mapping):
            continue
        if isinstance(factors, Mapping):
            if order.get("product") not in factors:
                continue
            f = float(factors[order["product"]])
        else:
            f = float(factors)
        for key in keys:
            if order.get(key) is not None:
                kg = _quantity(order[key], "mass")
                out.append(Change(f"orders.{n}.{key}", kg * f))
    return out


def _expand_what(spec: ChangeSpec, raw: Mapping[str, Any], study: StudySpec) -> list[Change]:
    what = spec.what
    value = spec.value
    if what in ("tunnel_length", "tunnel_longer_by", "belt_width"):
        i = _tunnel(raw, spec.machine)
        tunnel = raw["tunnels"][i]
        if what == "tunnel_length":
            return [Change(f"tunnels.{i}.length", _quantity(value, "length", positive=True))]
        if what == "belt_width":
            return [Change(f"tunnels.{i}.belt_width", _quantity(value, "length", positive=True))]
        if "length" not in tunnel:
            raise _Fail(f"tunnel {tunnel.get('name')!r} has no length to add to")
        new = _quantity(tunnel["length"], "length") + _quantity(value, "length")
        if not new > 0:
            raise _Fail(f"value: the tunnel would be {new:g} m long; must stay > 0 m")
        return [Change(f"tunnels.{i}.length", new)]
    if what in ("air_temperature", "air_temperature_change", "air_speed"):
        out = []
        for path, air in _air_targets(raw, spec):
            if what == "air_speed":
                if air.get("air_speed") is None:
                    raise _Fail(
                        f"{path}: uses measured_h, so air_speed does not apply; change "
                        f"measured_h with 'set:' instead"
                    )
                out.append(Change(f"{path}.air_speed", _quantity(value, "air_speed")))
            elif what == "air_temperature":
                out.append(Change(f"{path}.air_temperature", _quantity(value, "temperature")))
            else:
                delta = _quantity(value, "temperature_difference")
                for key in ("air_temperature", "wall_temperature"):
                    if air.get(key) is not None:
                        t = _quantity(air[key], "temperature") + delta
                        out.append(Change(f"{path}.{key}", t))
        return out
    if what == "add_oven":
        if isinstance(value, bool) or not isinstance(value, int) or value < 0:
            raise _Fail(f"value: number of ovens to add, a whole number >= 0, got {value!r}")
        ovens = _items(raw, "ovens")
        source = spec.copy_of
        if source is None:
            if len(ovens) != 1:
                raise _Fail(f"copy_of: name the oven to copy; known: {', '.join(_names(ovens))}")
            source = _names(ovens)[0]
        _index(ovens, source, "oven", "copy_of")
        stem = spec.name or f"{source}-copy"
        names = [stem] if value == 1 else [f"{stem}-{k}" for k in range(1, value + 1)]
        out = []
        for new in names:
            out.append(Change("ovens", {"name": new}, op="add", copy_of=source))
            for i, tunnel in enumerate(_items(raw, "tunnels")):
                if source in [str(x) for x in tunnel.get("fed_by") or []]:
                    out.append(Change(f"tunnels.{i}.fed_by", new, op="add"))
        return out
    if what == "shift_pattern":
        if not isinstance(value, str) or value not in study.shift_patterns:
            known = ", ".join(study.shift_patterns) or "none defined in shift_patterns:"
            raise _Fail(f"value: {value!r} is not a shift pattern; known: {known}")
        return [Change("shifts", copy.deepcopy(study.shift_patterns[value].shifts))]
    if what == "demand_growth":
        return _scaled_orders(raw, _factor(value))
    if what == "order_minimums":
        return _scaled_orders(raw, _factor(value), ("min_kg",))
    if what == "product_mix":
        mix = value
        if isinstance(mix, str):
            if mix not in study.product_mixes:
                known = ", ".join(study.product_mixes) or "none defined in product_mixes:"
                raise _Fail(f"value: {mix!r} is not a product mix; known: {known}")
            mix = study.product_mixes[mix]
        if not isinstance(mix, Mapping) or not mix:
            raise _Fail(
                f"value: a mapping product → factor or a name in product_mixes, got {value!r}"
            )
        return _scaled_orders(raw, {str(k): _factor(v, f"value.{k}") for k, v in mix.items()})
    raise _Fail(f"what: unknown kind {what!r}; accepted: {', '.join(WHAT_KINDS)}")


def expand_change(spec: ChangeSpec, raw: Mapping[str, Any], study: StudySpec) -> list[Change]:
    """The dotted-path changes a study change stands for, against ``raw``.

    Parameters
    ----------
    spec : ChangeSpec
        The change as written in the study.
    raw : mapping
        The scenario (plain data) the change applies to.
    study : StudySpec
        The study (shift patterns and product mixes it names).

    Returns
    -------
    list of optimizer.scenario.overrides.Change
        Changes with values in the documented scenario units (m, °C, m/s, kg).

    Raises
    ------
    StudyError
        One line naming the problem.
    """
    try:
        if spec.set is not None:
            return [Change(spec.set, spec.value)]
        if spec.add is not None:
            return [Change(spec.add, spec.value, op="add", copy_of=spec.copy_of)]
        return _expand_what(spec, raw, study)
    except _Fail as exc:
        raise StudyError([str(exc)]) from None


def _axis_number(axis: AxisSpec, value: Any) -> float | None:
    """The value of an axis as a number for plotting, or None (categorical)."""
    kind = _VALUE_KIND.get(str(axis.what)) if axis.what else None
    if kind is not None:
        try:
            return parse_quantity(value, kind, field="")
        except UnitParseError:
            return None
    if isinstance(value, bool):
        return None
    if isinstance(value, int | float):
        return float(value)
    return None


def axis_unit(axis: AxisSpec) -> str:
    """Unit of an axis's numbers ("" when unknown or plain)."""
    kind = _VALUE_KIND.get(str(axis.what)) if axis.what else None
    if kind is not None:
        return _AXIS_UNIT[kind]
    units = set()
    for v in axis.values:
        m = re.fullmatch(r"\s*[-+0-9.eE]+\s*(.*)", str(v))
        units.add(m.group(1).strip() if m else None)
    if len(units) == 1 and None not in units:
        return str(units.pop())
    return ""


def axis_numbers(axis: AxisSpec) -> list[float | None]:
    """Numbers of an axis's values; for ``set:`` axes written with one shared unit."""
    nums = [_axis_number(axis, v) for v in axis.values]
    if axis.what is None and all(n is None for n in nums):
        unit = axis_unit(axis)
        if unit:
            out: list[float | None] = []
            for v in axis.values:
                m = re.fullmatch(r"\s*([-+0-9.eE]+)\s*.*", str(v))
                try:
                    out.append(float(m.group(1)) if m else None)
                except ValueError:
                    out.append(None)
            return out
    return nums


# ---------------------------------------------------------------------------
# A loaded study
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class StudyPoint:
    """One point of a loaded study.

    Attributes
    ----------
    index : int
        Position in the study (results keep this order).
    name : str
        Point name (named points) or label ``axis=value, ...`` (grid).
    params : tuple of (str, str)
        Axis column → value as written (grid points; empty for named points).
    numbers : tuple of (str, float or None)
        Axis column → the value as a number for plots (None: not a number).
    changes : tuple of Change
        Dotted-path changes applied to the base scenario.
    description : str
        The point's changes in words.
    shifts_per_week : float
        Shifts a week at this point [1/week].
    signature : str
        Hash of the parts of the point's scenario that the dwell table
        depends on (used only to order the work).
    """

    index: int
    name: str
    params: tuple[tuple[str, str], ...]
    numbers: tuple[tuple[str, float | None], ...]
    changes: tuple[Change, ...]
    description: str
    shifts_per_week: float
    signature: str


@dataclass(frozen=True)
class Study:
    """A study file read, checked and worked out into points.

    Attributes
    ----------
    path : Path
        The study file.
    spec : StudySpec
        Its validated contents.
    base_path : Path
        The base scenario file.
    base_raw : dict
        The base scenario as plain data (``extends``, ``--set`` and the
        study's ``common_changes`` applied).
    points : tuple of StudyPoint
        The points, in order.
    axes : tuple of AxisSpec
        Grid axes (empty for named points).
    base_index : int
        Index of the base point (today's plant).
    purchase_points : tuple of int
        Point index of each purchase option, in ``spec.purchases`` order.
    """

    path: Path
    spec: StudySpec
    base_path: Path
    base_raw: dict[str, Any]
    points: tuple[StudyPoint, ...]
    axes: tuple[AxisSpec, ...]
    base_index: int
    purchase_points: tuple[int, ...]

    @property
    def title(self) -> str:
        """Study title (the file name when none is given)."""
        return self.spec.study or self.path.stem

    @property
    def columns(self) -> list[str]:
        """Axis columns of the results table."""
        return [a.column() for a in self.axes]


_PHYSICS_DROP_TUNNEL = ("length", "belt_width", "belt_speed_min", "belt_speed_max", "fed_by")


def physics_signature(raw: Mapping[str, Any]) -> str:
    """Hash of the parts of a scenario its dwell-table cells depend on.

    Shifts, orders, objective, oven capacities and tunnel belt figures are left
    out (a tunnel's length stays in when a zone gives its own length). Used
    only to compute each distinct set of dwell cells once before the plans;
    the dwell cache itself decides what is reused.
    """
    ovens = []
    for oven in raw.get("ovens") or []:
        if isinstance(oven, Mapping):
            ovens.extend(
                json.dumps(s, sort_keys=True, default=str) for s in oven.get("settings", [])
            )
    tunnels = []
    for tunnel in raw.get("tunnels") or []:
        if not isinstance(tunnel, Mapping):
            continue
        zones_with_length = any(
            isinstance(z, Mapping) and z.get("length") is not None
            for s in tunnel.get("settings") or []
            if isinstance(s, Mapping)
            for z in s.get("zones") or []
        )
        drop = () if zones_with_length else _PHYSICS_DROP_TUNNEL
        tunnels.append({k: v for k, v in tunnel.items() if k not in (*drop, "name", "changeover")})
    data = {
        "ovens": sorted(set(ovens)),
        "tunnels": tunnels,
        "products": raw.get("products"),
        "rules": raw.get("rules"),
        "safety_margin": raw.get("safety_margin"),
    }
    text = json.dumps(data, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def _read_study_file(path: Path) -> Any:
    from optimizer.scenario.overrides import OverrideError, read_yaml_file

    try:
        data = read_yaml_file(path)
    except OverrideError as exc:
        raise StudyError([str(exc)]) from None
    if not isinstance(data, dict):
        raise StudyError([f"{path}: must hold a mapping of study fields (base, grid or points)"])
    return data


def _match(ref: PointRef, points: Sequence[StudyPoint], where: str) -> int:
    if isinstance(ref, str):
        for p in points:
            if p.name == ref:
                return p.index
        names = [p.name for p in points]
        shown = ", ".join(repr(n) for n in names[:6]) + (" ..." if len(names) > 6 else "")
        raise StudyError([f"{where}: no point named {ref!r}; points: {shown}"])
    want = {str(k): value_text(v) for k, v in ref.items()}
    for p in points:
        have = dict(p.params)
        if set(want) - set(have):
            unknown = sorted(set(want) - set(have))
            raise StudyError(
                [f"{where}: unknown axis {unknown}; axes: {', '.join(have) or 'none'}"]
            )
        if all(have[k] == v for k, v in want.items()):
            return p.index
    raise StudyError([f"{where}: no grid point has {want}"])


def _combos(spec: StudySpec) -> list[tuple[str, list[tuple[AxisSpec, Any]], list[ChangeSpec]]]:
    if spec.points is not None:
        return [(p.name, [], list(p.changes)) for p in spec.points]
    axes = spec.grid or []
    out = []
    for values in itertools.product(*(a.values for a in axes)):
        pairs = list(zip(axes, values, strict=True))
        label = ", ".join(f"{a.column()}={value_text(v)}" for a, v in pairs)
        out.append((label, pairs, [a.change(v) for a, v in pairs]))
    return out


def load_study(
    path: str | Path, base_changes: Sequence[Change] = (), *, check: bool = True
) -> Study:
    """Read a study file, work out every point's changes and check them.

    Parameters
    ----------
    path : str or Path
        Study file (YAML).
    base_changes : sequence of Change
        Changes applied to the base scenario first (``--set``).
    check : bool
        Validate scenarios before anything runs: the base with each grid
        value alone (a grid), or every named point. Problems of other
        combinations show in their rows.

    Returns
    -------
    Study

    Raises
    ------
    StudyError
        One line per problem, each starting with the study file name.
    """
    path = Path(path)
    prefix = str(path)
    data = _read_study_file(path)
    try:
        spec = StudySpec.model_validate(data)
    except ValidationError as exc:
        raise StudyError(_validation_problems(exc, prefix)) from None
    base_path = (path.parent / spec.base).resolve()
    if not base_path.is_file():
        raise StudyError([f"{prefix}: base: no scenario file {spec.base!r} next to the study"])
    try:
        base_raw = load_raw(base_path, base_changes)
    except OverrideError as exc:
        raise StudyError([f"{prefix}: base: {exc}"]) from None
    default_per_week = spec.shifts_per_week
    for n, change in enumerate(spec.common_changes):
        try:
            base_raw = apply_changes(base_raw, expand_change(change, base_raw, spec))
        except (StudyError, OverrideError) as exc:
            raise StudyError([f"{prefix}: common_changes[{n}]: {exc}"]) from None
        if change.what == "shift_pattern":
            pattern = spec.shift_patterns[str(change.value)]
            default_per_week = pattern.shifts_per_week or default_per_week

    points: list[StudyPoint] = []
    problems: list[str] = []
    for index, (name, pairs, specs) in enumerate(_combos(spec)):
        raw = base_raw
        changes: list[Change] = []
        per_week = default_per_week
        for n, change in enumerate(specs):
            where = (
                f"grid[{spec.grid.index(pairs[n][0])}] ({pairs[n][0].column()}="
                f"{value_text(pairs[n][1])})"
                if pairs and spec.grid is not None
                else f"points[{index}].changes[{n}]"
            )
            try:
                new = expand_change(change, raw, spec)
                raw = apply_changes(raw, new)
            except (StudyError, OverrideError) as exc:
                line = f"{prefix}: {where}: {exc}"
                if line not in problems:
                    problems.append(line)
                break
            changes.extend(new)
            if change.what == "shift_pattern":
                pattern = spec.shift_patterns[str(change.value)]
                per_week = pattern.shifts_per_week or per_week
        else:
            params = tuple((a.column(), value_text(v)) for a, v in pairs)
            numbers = tuple((a.column(), axis_numbers(a)[a.values.index(v)]) for a, v in pairs)
            points.append(
                StudyPoint(
                    index=index,
                    name=name,
                    params=params,
                    numbers=numbers,
                    changes=tuple(changes),
                    description="; ".join(c.label() for c in specs) or "base scenario",
                    shifts_per_week=float(per_week),
                    signature=physics_signature(raw),
                )
            )
    if problems:
        raise StudyError(problems)

    base_index = 0
    try:
        if spec.base_point is not None:
            base_index = _match(spec.base_point, points, f"{prefix}: base_point")
        purchase_points = tuple(
            _match(p.point, points, f"{prefix}: purchases[{i}].point")
            for i, p in enumerate(spec.purchases)
        )
    except StudyError as exc:
        raise StudyError(exc.problems) from None
    study = Study(
        path=path,
        spec=spec,
        base_path=base_path,
        base_raw=base_raw,
        points=tuple(points),
        axes=tuple(spec.grid or ()),
        base_index=base_index,
        purchase_points=purchase_points,
    )
    if check:
        check_study(study)
    return study


def _probe_changes(study: Study) -> list[tuple[str, tuple[Change, ...]]]:
    """Scenarios to validate before running: one per grid value, or every named point."""
    if not study.axes:
        return [(f"point {p.name!r}", p.changes) for p in study.points]
    probes: list[tuple[str, tuple[Change, ...]]] = [("base scenario", ())]
    for a, axis in enumerate(study.axes):
        for v in axis.values:
            try:
                changes = tuple(expand_change(axis.change(v), study.base_raw, study.spec))
            except StudyError:
                continue  # reported with its point already
            probes.append((f"grid[{a}] ({axis.column()}={value_text(v)})", changes))
    return probes


def check_study(study: Study) -> None:
    """Validate the base scenario with the study's changes (see :func:`load_study`).

    Raises
    ------
    StudyError
        One line per problem, naming the point and the scenario field.
    """
    from optimizer.dwell.checks import checked_scenario_from_dict
    from optimizer.scenario.models import ScenarioError

    problems: list[str] = []
    seen: set[str] = set()
    for where, changes in _probe_changes(study):
        try:
            raw = apply_changes(study.base_raw, changes)
        except OverrideError as exc:
            problems.append(f"{study.path}: {where}: {exc}")
            continue
        key = json.dumps(raw, sort_keys=True, default=str)
        if key in seen:
            continue
        seen.add(key)
        try:
            checked_scenario_from_dict(raw, str(study.base_path))
        except ScenarioError as exc:
            for p in exc.problems:
                line = f"{study.path}: {where}: {p}"
                if line not in problems:
                    problems.append(line)
    if problems:
        raise StudyError(problems)


# ---------------------------------------------------------------------------
# Evaluating a point (in a worker)
# ---------------------------------------------------------------------------


def sweep_points(
    study: Study,
    *,
    cache_dir: str | Path | None,
    time_limit_s: float | None = None,
    gap_rel: float | None = None,
    solver: str | None = None,
) -> list[SweepPoint]:
    """The study's points as executor points carrying everything a worker needs.

    Parameters
    ----------
    study : Study
        A loaded study.
    cache_dir : str or Path or None
        Dwell-table cache shared by every worker (a path every worker can
        reach; ``None`` computes every table afresh).
    time_limit_s : float, optional
        Planner time limit per solve [s] (default: the study's, else 60 s).
    gap_rel : float, optional
        Relative MIP gap [-] (default: the study's, else the planner's).
    solver : str, optional
        ``"highs"`` or ``"cbc"``.

    Returns
    -------
    list of SweepPoint
        One per study point, same order; the context holds the base scenario
        data (so a changed base file never reuses old results on resume).
    """
    options: dict[str, Any] = {}
    limit = time_limit_s if time_limit_s is not None else study.spec.solver.time_limit
    gap = gap_rel if gap_rel is not None else study.spec.solver.gap
    if limit is not None:
        options["time_limit_s"] = float(limit)
    if gap is not None:
        options["gap_rel"] = float(gap)
    if solver:
        options["solver"] = solver
    context = (
        ("base", json.dumps(study.base_raw, sort_keys=True, default=str)),
        ("cache_dir", None if cache_dir is None else str(Path(cache_dir).resolve())),
        ("options", json.dumps(options, sort_keys=True)),
        ("source", str(study.base_path)),
    )
    return [
        SweepPoint(index=p.index, label=p.name, changes=p.changes, context=context)
        for p in study.points
    ]


def _scenario_of(point: SweepPoint) -> tuple[Any, dict[str, Any]]:
    from optimizer.dwell.checks import checked_scenario_from_dict

    ctx = dict(point.context)
    raw = apply_changes(json.loads(ctx["base"]), point.changes)
    return checked_scenario_from_dict(raw, f"{ctx.get('source', 'base')} [{point.label}]"), ctx


def warm_dwell(point: SweepPoint) -> dict[str, Any]:
    """Build (and cache) the dwell table of a point, without planning.

    Parameters
    ----------
    point : SweepPoint
        A point from :func:`sweep_points`.

    Returns
    -------
    dict
        ``{"index": ..., "rows": n, "error": ""}``; ``error`` holds the
        one-line problem when the point's scenario is refused.
    """
    from optimizer.dwell.table import build_dwell_table

    try:
        scenario, ctx = _scenario_of(point)
        table = build_dwell_table(scenario, cache_dir=ctx["cache_dir"])
    except ValueError as exc:  # scenario, override and physics-input errors
        return {"index": point.index, "rows": 0, "error": str(exc).replace("\n", "; ")}
    return {"index": point.index, "rows": len(table), "error": ""}


def plan_row(scenario: Any, dwell: pd.DataFrame, result: Any) -> dict[str, Any]:
    """The figures of one plan as a JSON-able row.

    Parameters
    ----------
    scenario : optimizer.scenario.models.Scenario
        The point's scenario.
    dwell : pandas.DataFrame
        Its dwell table (heat per kg of every route).
    result : optimizer.planning.results.PlanResult
        The plan.

    Returns
    -------
    dict
        ``status`` (a :class:`optimizer.planning.results.SolveStatus` value),
        ``has_plan``, ``gap`` (relative MIP gap [-]), ``total_kg`` [kg over
        the horizon], ``n_shifts``,
        ``kg_per_shift`` [kg], ``value`` [currency over the horizon, kg ×
        value_per_kg], ``objective_value`` and ``objective_unit``,
        ``bottleneck`` and ``bottleneck_kind``, ``marginal_value`` (the
        bottleneck's shadow price [objective unit per machine hour]),
        ``energy_kwh`` (product heat in plus out over the horizon [kWh]),
        ``utilisation`` (machine → mean over shifts [-]), ``kg_by_product``
        [kg], ``message``.
    """
    from optimizer.planning.results import bottleneck

    machines = [o.name for o in scenario.ovens] + [t.name for t in scenario.tunnels]
    n_shifts = len(scenario.shifts)
    util: dict[str, float] = {}
    for m in machines:
        uses = [u.utilisation for u in result.machine_use if u.machine == m]
        util[m] = sum(uses) / len(uses) if uses else 0.0
    kg_by_product = {p.name: 0.0 for p in scenario.products}
    value = 0.0
    prices = {p.name: p.value_per_kg for p in scenario.products}
    heat = {}
    keys = ["product", "oven", "oven_setting", "tunnel", "tunnel_setting", "loading"]
    for row in dwell[[*keys, "heat_in_kj_per_kg", "heat_out_kj_per_kg"]].itertuples(index=False):
        heat[tuple(row[:6])] = float(row[6]) + float(row[7])
    energy_kj = 0.0
    for r in result.runs:
        kg_by_product[r.product] = kg_by_product.get(r.product, 0.0) + r.kg
        value += r.kg * prices.get(r.product, 0.0)
        per_kg = heat.get(
            (r.product, r.oven, r.oven_setting, r.tunnel, r.tunnel_setting, r.loading)
        )
        if per_kg is not None and math.isfinite(per_kg):
            energy_kj += per_kg * r.kg
    bn = bottleneck(result)
    has_plan = bool(result.status.has_plan)
    message = ""
    if not has_plan:
        message = "; ".join(s.message for s in result.shortfalls) or "; ".join(result.messages)
    return {
        "status": result.status.value,
        "has_plan": has_plan,
        "gap": result.gap,
        "total_kg": float(result.total_kg),
        "n_shifts": n_shifts,
        "kg_per_shift": float(result.total_kg) / n_shifts if n_shifts else 0.0,
        "value": value,
        "objective_value": result.objective_value,
        "objective_unit": result.objective_unit,
        "bottleneck": bn.machine if bn else "",
        "bottleneck_kind": bn.kind if bn else "",
        "marginal_value": bn.per_hour if bn else None,
        "marginal_unit": f"{result.objective_unit}/h",
        "energy_kwh": energy_kj / 3600.0,
        "utilisation": util,
        "kg_by_product": kg_by_product,
        "message": message,
    }


def evaluate_point(point: SweepPoint) -> dict[str, Any]:
    """Plan one point from scenario data (the function every worker runs).

    The point's scenario is rebuilt from the base data and its changes, the
    dwell table is read from (or added to) the shared cache, and the planner
    builds and solves its own model here, so nothing but plain data travels
    between processes.

    Parameters
    ----------
    point : SweepPoint
        A point from :func:`sweep_points`.

    Returns
    -------
    dict
        ``index`` and ``label`` and the figures of :func:`plan_row`; a
        point whose scenario is refused has ``status`` ``"invalid"`` and the
        problem in ``message``.
    """
    from optimizer.dwell.table import build_dwell_table
    from optimizer.planning.adapter import plan_inputs
    from optimizer.planning.inputs import SolveOptions
    from optimizer.planning.run import plan_checked
    from optimizer.planning.solve import plan_buckets

    head = {"index": point.index, "label": point.label}
    try:
        scenario, ctx = _scenario_of(point)
        dwell = build_dwell_table(scenario, cache_dir=ctx["cache_dir"])
        plan_inputs(scenario, dwell)  # the planner's input checks, before the solve
        options = SolveOptions(**json.loads(ctx["options"]))
    except ValueError as exc:  # scenario, override, physics and planner input errors
        return {
            **head,
            "status": "invalid",
            "has_plan": False,
            "message": str(exc).replace("\n", "; "),
        }
    dwell, _, result = plan_checked(scenario, dwell, options, solve=plan_buckets)
    return {**head, **plan_row(scenario, dwell, result)}


# ---------------------------------------------------------------------------
# Running a study
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class SweepResult:
    """What a study run produced.

    Attributes
    ----------
    study : Study
        The study.
    rows : tuple of dict
        The worker rows, in point order.
    table : pandas.DataFrame
        The results table (:func:`results_table`).
    purchases : pandas.DataFrame
        The purchase comparison (:func:`purchase_table`).
    cases : tuple of PurchaseCase or None
        One per purchase option (None when a point has no plan).
    """

    study: Study
    rows: tuple[dict[str, Any], ...]
    table: pd.DataFrame
    purchases: pd.DataFrame
    cases: tuple[PurchaseCase | None, ...] = field(default=())


CLUSTER_CONNECT_TIMEOUT_S = 10.0
"""How long a sweep waits for a Dask scheduler to answer before giving up [s].

Dask's own default (30 s, retrying a refused connection all the while) leaves
a mistyped ``--cluster`` address looking like a hung command.
"""


def run_study(
    study: Study,
    *,
    mode: ExecMode | str = ExecMode.POOL,
    workers: int | None = None,
    cluster: str | Any | None = None,
    cache_dir: str | Path | None = None,
    done_dir: str | Path | None = None,
    on_done: Callable[..., None] | None = None,
    time_limit_s: float | None = None,
    gap_rel: float | None = None,
    solver: str | None = None,
) -> SweepResult:
    """Plan every point of a study and build the tables.

    A study of one point runs in this process whatever ``mode`` says. With a
    pool or a cluster, the distinct dwell tables are built first (one point
    of each, in parallel) so that no two workers compute the same cells;
    then every point is planned.

    Parameters
    ----------
    study : Study
        A loaded study (:func:`load_study`).
    mode : ExecMode or str
        ``"serial"``, ``"pool"`` (default) or ``"cluster"``.
    workers : int, optional
        Pool size (default: the number of CPUs).
    cluster : str or distributed.Client, optional
        Dask scheduler address (``tcp://host:8786``; the connection is given
        up after :data:`CLUSTER_CONNECT_TIMEOUT_S`) or a Client.
    cache_dir : str or Path, optional
        Shared dwell-table cache (every worker must reach the same path).
    done_dir : str or Path, optional
        Folder keeping finished points; a rerun resumes from it.
    on_done : callable, optional
        ``on_done(finished, total, text)`` progress callback.
    time_limit_s, gap_rel, solver : optional
        Planner options (see :func:`sweep_points`).

    Returns
    -------
    SweepResult
    """
    mode = ExecMode(mode)
    points = sweep_points(
        study, cache_dir=cache_dir, time_limit_s=time_limit_s, gap_rel=gap_rel, solver=solver
    )
    if len(points) <= 1:
        mode = ExecMode.SERIAL

    def progress(text: str) -> Callable[[int, int], None]:
        def update(done: int, total: int) -> None:
            if on_done is not None:
                on_done(done, total, text)

        return update

    done = done_indices(points, done_dir)
    warm: list[SweepPoint] = []
    if mode is not ExecMode.SERIAL and cache_dir is not None:
        seen: set[str] = set()
        for p, sp in zip(study.points, points, strict=True):
            if sp.index not in done and p.signature not in seen:
                seen.add(p.signature)
                warm.append(sp)
        if len(points) - len(done) <= 1:
            warm = []

    client = None
    pool = None
    target = cluster
    try:
        if mode is ExecMode.CLUSTER and isinstance(cluster, str):
            try:
                from distributed import Client
            except ImportError:
                raise ValueError("--cluster: dask.distributed is not installed") from None
            client = Client(cluster, timeout=CLUSTER_CONNECT_TIMEOUT_S)
            target = client
        if mode is ExecMode.POOL:
            pool = new_pool(workers)
        if warm:
            run_points(
                warm,
                warm_dwell,
                mode=mode,
                workers=workers,
                cluster=target,
                executor=pool,
                on_done=progress("dwell tables"),
            )
        rows = run_points(
            points,
            evaluate_point,
            mode=mode,
            workers=workers,
            cluster=target,
            done_dir=done_dir,
            executor=pool,
            on_done=progress("plans"),
        )
    finally:
        if pool is not None:
            pool.shutdown(wait=False, cancel_futures=True)
        if client is not None:
            client.close()
    table = results_table(study, rows)
    purchases, cases = purchase_table(study, table)
    return SweepResult(study, tuple(rows), table, purchases, tuple(cases))


# ---------------------------------------------------------------------------
# Tables
# ---------------------------------------------------------------------------

RESULT_COLUMNS = (
    "point",
    "status",
    "gap",
    "kg_per_shift",
    "kg_per_week",
    "value_per_week",
    "bottleneck",
    "bottleneck_kind",
    "marginal_value",
    "marginal_unit",
    "energy_kwh",
    "energy_kwh_per_t",
    "total_kg",
    "n_shifts",
    "shifts_per_week",
    "changes",
    "message",
)
"""Columns of the results table, after the axis columns and before the
``util:<machine>`` and ``kg:<product>`` columns."""


def results_table(study: Study, rows: Sequence[Mapping[str, Any]]) -> pd.DataFrame:
    """The results table: one row per point, in point order.

    Columns: ``point`` (name or label), the axis columns (values as written),
    ``status``, ``gap`` (relative MIP gap of the plan [-]), ``kg_per_shift``
    [kg], ``kg_per_week`` [kg/week],
    ``value_per_week`` [currency/week], ``bottleneck`` (machine),
    ``bottleneck_kind``, ``marginal_value`` (bottleneck shadow price
    [objective unit/h]), ``marginal_unit``, ``energy_kwh`` (product heat over
    the horizon [kWh]), ``energy_kwh_per_t`` [kWh/t], ``total_kg`` [kg over
    the horizon], ``n_shifts``, ``shifts_per_week``, ``changes`` (in words),
    ``message``, then ``util:<machine>`` [-] and ``kg:<product>`` [kg over the
    horizon].

    Parameters
    ----------
    study : Study
        The study.
    rows : sequence of dict
        Worker rows (:func:`evaluate_point`) in point order.
    """
    machines: list[str] = []
    products: list[str] = []
    for r in rows:
        for m in r.get("utilisation", {}) or {}:
            if m not in machines:
                machines.append(m)
        for p in r.get("kg_by_product", {}) or {}:
            if p not in products:
                products.append(p)
    records = []
    for point, r in zip(study.points, rows, strict=True):
        has = bool(r.get("has_plan"))
        per_shift = float(r["kg_per_shift"]) if has else math.nan
        total = float(r["total_kg"]) if has else math.nan
        n = int(r.get("n_shifts") or 0)
        energy = float(r["energy_kwh"]) if has else math.nan
        rec: dict[str, Any] = {"point": point.name}
        rec.update(dict(point.params))
        rec.update(
            {
                "status": r.get("status", ""),
                "gap": float(r["gap"]) if has and r.get("gap") is not None else math.nan,
                "kg_per_shift": per_shift,
                "kg_per_week": per_shift * point.shifts_per_week,
                "value_per_week": (float(r["value"]) / n * point.shifts_per_week)
                if has and n
                else math.nan,
                "bottleneck": r.get("bottleneck", "") if has else "",
                "bottleneck_kind": r.get("bottleneck_kind", "") if has else "",
                "marginal_value": float(r["marginal_value"])
                if has and r.get("marginal_value") is not None
                else math.nan,
                "marginal_unit": r.get("marginal_unit", "") if has else "",
                "energy_kwh": energy,
                "energy_kwh_per_t": energy / total * 1000.0 if has and total > 0 else math.nan,
                "total_kg": total,
                "n_shifts": n,
                "shifts_per_week": point.shifts_per_week,
                "changes": point.description,
                "message": r.get("message", ""),
            }
        )
        util = r.get("utilisation", {}) or {}
        kg = r.get("kg_by_product", {}) or {}
        for m in machines:
            rec[f"util:{m}"] = float(util[m]) if has and m in util else math.nan
        for p in products:
            rec[f"kg:{p}"] = float(kg[p]) if has and p in kg else math.nan
        records.append(rec)
    columns = ["point", *study.columns, *RESULT_COLUMNS[1:]]
    columns += [f"util:{m}" for m in machines] + [f"kg:{p}" for p in products]
    return pd.DataFrame(records, columns=columns)


def tidy_tables(table: pd.DataFrame) -> dict[str, pd.DataFrame]:
    """The results table in tidy form: one observation per row.

    Parameters
    ----------
    table : pandas.DataFrame
        :func:`results_table` (one row per point, with ``util:<machine>`` and
        ``kg:<product>`` columns).

    Returns
    -------
    dict of str to pandas.DataFrame
        ``sweep`` (one row per point, without the per-machine and
        per-product columns), ``sweep_utilisation`` (``point``, ``machine``,
        ``utilisation`` [-]) and ``sweep_kg`` (``point``, ``product``, ``kg``
        [kg over the horizon]); points without a plan have no rows in the
        last two.
    """
    util = [c for c in table.columns if str(c).startswith("util:")]
    kg = [c for c in table.columns if str(c).startswith("kg:")]

    def long(columns: list[str], key: str, value: str) -> pd.DataFrame:
        rows = [
            (point, str(c).split(":", 1)[1], float(v))
            for point, *values in table[["point", *columns]].itertuples(index=False)
            for c, v in zip(columns, values, strict=True)
            if not pd.isna(v)
        ]
        return pd.DataFrame(rows, columns=["point", key, value])

    return {
        "sweep": table.drop(columns=[*util, *kg]),
        "sweep_utilisation": long(util, "machine", "utilisation"),
        "sweep_kg": long(kg, "product", "kg"),
    }


PURCHASE_COLUMNS = (
    "option",
    "extra_kg_per_week",
    "simple_payback_years",
    "npv",
    "point",
    "capital",
    "running_cost_per_year",
    "base_kg_per_week",
    "option_kg_per_week",
    "margin_basis",
    "extra_margin_per_year",
    "net_per_year",
    "years",
    "discount_rate",
    "base_bottleneck",
    "option_bottleneck",
    "note",
)


def purchase_table(
    study: Study, table: pd.DataFrame
) -> tuple[pd.DataFrame, list[PurchaseCase | None]]:
    """Purchase options side by side against the base point.

    Extra margin per year = extra kg per week × margin per kg × weeks per
    year (the option's ``margin_per_kg``, else the study's); with no margin
    per kg given, the extra value per week (kg × each product's
    ``value_per_kg``) × weeks per year. Payback and NPV from
    :func:`optimizer.studies.finance.purchase_case`.

    Parameters
    ----------
    study : Study
        The study.
    table : pandas.DataFrame
        Its results table.

    Returns
    -------
    (pandas.DataFrame, list of PurchaseCase or None)
        Columns :data:`PURCHASE_COLUMNS` (money in the scenario's currency,
        kg/week, years); the cases (None where a point has no plan).
    """
    fin = study.spec.finance
    rows = []
    cases: list[PurchaseCase | None] = []
    base = table.iloc[study.base_index]
    for option, idx in zip(study.spec.purchases, study.purchase_points, strict=True):
        assert fin is not None  # guaranteed by the study model
        point = table.iloc[idx]
        margin = option.margin_per_kg if option.margin_per_kg is not None else fin.margin_per_kg
        note = ""
        extra_kg = float(point["kg_per_week"]) - float(base["kg_per_week"])
        if margin is not None:
            basis = f"{margin:g} per kg"
            extra_margin = annual_margin(extra_kg, margin, fin.weeks_per_year)
        else:
            basis = "product values"
            extra_value = float(point["value_per_week"]) - float(base["value_per_week"])
            extra_margin = annual_margin(extra_value, 1.0, fin.weeks_per_year)
        case = None
        if base["status"] not in ("optimal", "feasible_with_gap"):
            note = f"base point {base['point']!r} has no plan ({base['status']})"
        elif point["status"] not in ("optimal", "feasible_with_gap"):
            note = f"point {point['point']!r} has no plan ({point['status']})"
        else:
            case = purchase_case(
                option.name,
                option.capital,
                extra_margin,
                option.running_cost_per_year,
                years=fin.years,
                rate=fin.discount_rate,
            )
            gaps = [g for g in (point["gap"], base["gap"]) if math.isfinite(g) and g > 1e-9]
            stopped = "feasible_with_gap" in (point["status"], base["status"])
            if stopped and gaps:
                note = f"time limit: a plan may be up to {100 * max(gaps):.2g} % short of its best"
            elif stopped:
                note = "time limit: a plan may be short of its best"
        cases.append(case)
        rows.append(
            {
                "option": option.name,
                "point": point["point"],
                "capital": option.capital,
                "running_cost_per_year": option.running_cost_per_year,
                "base_kg_per_week": float(base["kg_per_week"]),
                "option_kg_per_week": float(point["kg_per_week"]),
                "extra_kg_per_week": extra_kg,
                "margin_basis": basis,
                "extra_margin_per_year": case.extra_margin_per_year if case else math.nan,
                "net_per_year": case.net_per_year if case else math.nan,
                "simple_payback_years": case.simple_payback_years if case else math.nan,
                "npv": case.npv if case else math.nan,
                "years": fin.years,
                "discount_rate": fin.discount_rate,
                "base_bottleneck": base["bottleneck"],
                "option_bottleneck": point["bottleneck"],
                "note": note,
            }
        )
    return pd.DataFrame(rows, columns=list(PURCHASE_COLUMNS)), cases
