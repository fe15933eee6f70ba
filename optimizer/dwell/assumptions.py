"""The assumptions register: every default or estimate behind the dwell table.

A dwell time that is too short sends undercooked or warm product out, so no
value the user did not give may shape a dwell unseen. :func:`assumptions`
lists, per product, air setting and loading, each default, estimate and
modelling simplification the dwell table applies: its value, where the value
comes from (``"published"``, ``"common practice"``, ``"from memory"`` or
``"default"``) and which way the dwell goes if it is wrong:

* ``"shorter"``: a wrong value plausibly makes the planned dwell too short
  (the unsafe side) — these come first;
* ``"unknown"``: it could go either way;
* ``"longer"``: the simplification makes the dwell longer than needed (the
  safe side).

An item appears only when it is applied: a value the user gave (a calibrated
``h_factor``, a largest-piece size, an emissivity, a wall temperature, ...)
replaces the default and removes the item. The register never blocks a plan;
``corepace validate`` prints it as warnings and every report lists it.

The items drawn from the dwell table itself (:func:`dwell_assumptions`)
are the correlations used outside their published range, with the direction
the physics layer gives for each extrapolation, and the condensation it does
not model.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd

from optimizer.dwell.convert import thermal_properties
from optimizer.scenario.models import Scenario
from thermal.convection import (
    EXTRAPOLATION_OVERSTATES,
    EXTRAPOLATION_UNDERSTATES,
    EXTRAPOLATION_UNKNOWN,
    coverage_loading_factor,
)

__all__ = [
    "ASSUMPTION_COLUMNS",
    "DIRECTIONS",
    "SOURCES",
    "Assumption",
    "assumption_lines",
    "assumptions",
    "assumptions_table",
    "dwell_assumptions",
    "scenario_assumptions",
]

DIRECTIONS: tuple[str, ...] = ("shorter", "unknown", "longer")
"""Which way a wrong value pushes the dwell, most dangerous first."""

SOURCES: tuple[str, ...] = ("published", "common practice", "from memory", "default")
"""Where an assumed value comes from."""

_DIRECTION_TEXT = {
    "shorter": "could shorten the dwell",
    "unknown": "either way",
    "longer": "lengthens the dwell (safe side)",
}

NEAR_SATURATION = 0.9
"""Relative humidity above which an oven's air is taken as nearly saturated
(condensation, not evaporation, at the product surface) [-]."""

_SHOWN = 4
"""Subjects named in one register line before "and N more"."""

_INDEX = re.compile(r"\[\d+\]")


@dataclass(frozen=True)
class Assumption:
    """One default, estimate or simplification the dwell table applies.

    Attributes
    ----------
    topic : str
        What is assumed, e.g. ``"loading factor"``, ``"largest piece"``.
    applies_to : str
        The products, machines, settings or loadings it applies to.
    field : str
        The scenario field that replaces it when given ("" when none does).
    value : str
        The value applied, with its unit.
    source : str
        One of :data:`SOURCES`.
    direction : str
        One of :data:`DIRECTIONS`: which way a wrong value pushes the dwell.
    note : str
        What a wrong value does and what to do about it.
    """

    topic: str
    applies_to: str
    field: str
    value: str
    source: str
    direction: str
    note: str

    def __post_init__(self) -> None:
        if self.direction not in DIRECTIONS:
            raise ValueError(f"direction: must be one of {DIRECTIONS}, got {self.direction!r}")
        if self.source not in SOURCES:
            raise ValueError(f"source: must be one of {SOURCES}, got {self.source!r}")

    @property
    def line(self) -> str:
        """The assumption as one line of text (for the terminal and ``validate``)."""
        where = f" [{self.field}]" if self.field else ""
        return (
            f"{self.topic} ({_DIRECTION_TEXT[self.direction]}): {self.applies_to}: "
            f"{self.value}{where}. {self.note}"
        )


# ---------------------------------------------------------------------------- the scenario


def _pct(fraction: float) -> str:
    return f"{100.0 * fraction:.0f} %"


def _names(items: Sequence[str]) -> str:
    unique = list(dict.fromkeys(items))
    if len(unique) <= _SHOWN:
        return ", ".join(unique)
    return ", ".join(unique[:_SHOWN]) + f" and {len(unique) - _SHOWN} more"


def _loading(scenario: Scenario) -> list[Assumption]:
    out = []
    for i, tunnel in enumerate(scenario.tunnels):
        measured = [
            s.name for s in tunnel.settings if all(z.measured_h is not None for z in s.zones)
        ]
        mixed = [
            s.name
            for s in tunnel.settings
            if s.name not in measured and any(z.measured_h is not None for z in s.zones)
        ]
        estimated = len(measured) < len(tunnel.settings)
        for j, loading in enumerate(tunnel.loadings):
            if loading.h_factor is not None:
                continue
            field = f"tunnels[{i}].loadings[{j}].h_factor"
            subject = f"{tunnel.name} / {loading.name}"
            if estimated:
                factor = coverage_loading_factor(loading.coverage)
                note = (
                    "No calibrated h_factor: the loaded-belt h is estimated from the coverage "
                    "(1 - 0.5 x coverage), not measured; a belt that shades its pieces more "
                    "gives a slower chill than planned. Calibrate h_factor from probe logs of "
                    "this loading."
                )
                if mixed:
                    note += (
                        f" It also multiplies the measured_h zones of {', '.join(mixed)}: "
                        "give h_factor 1 if that h was measured on this loading."
                    )
                out.append(
                    Assumption(
                        "loading factor",
                        subject,
                        field,
                        f"{factor:.2f} x a lone piece's convective h "
                        f"(estimated from {_pct(loading.coverage)} coverage)",
                        "default",
                        "shorter",
                        note,
                    )
                )
            if measured:
                out.append(
                    Assumption(
                        "loading factor",
                        f"{subject} ({', '.join(measured)})",
                        field,
                        f"1: the measured_h taken as measured on this loading "
                        f"({_pct(loading.coverage)} coverage)",
                        "default",
                        "shorter",
                        "If the h was measured on a lone piece or an emptier belt, this "
                        "loading cools more slowly than planned: give h_factor.",
                    )
                )
    return out


def _largest(scenario: Scenario) -> list[Assumption]:
    out = []
    for i, product in enumerate(scenario.products):
        geometry = product.geometry
        if getattr(geometry, "largest", None) is not None or geometry.largest_scale is not None:
            continue
        out.append(
            Assumption(
                "largest piece",
                product.name,
                f"products[{i}].geometry.largest",
                "the nominal piece (no largest-piece size given)",
                "default",
                "shorter",
                "Every dwell is for the piece entered; larger pieces in the same batch "
                "take longer to cook and chill. Give largest (or largest_scale) from "
                "the size spread of the product.",
            )
        )
    return out


def _hold_limit(scenario: Scenario, tunnel_index: int) -> float | None:
    tunnel = scenario.tunnels[tunnel_index]
    limits = [tunnel.hot_hold_max] + [p.hot_hold_max for p in scenario.products]
    known = [x for x in limits if x is not None]
    return max(known) if known else None


def _transfer(scenario: Scenario) -> list[Assumption]:
    out = []
    for i, tunnel in enumerate(scenario.tunnels):
        hold = _hold_limit(scenario, i)
        spec = tunnel.transfer
        if spec is None:
            if hold is None:
                out.append(
                    Assumption(
                        "transfer",
                        tunnel.name,
                        f"tunnels[{i}].transfer",
                        "no wait between oven and belt",
                        "default",
                        "unknown",
                        "The chill starts at the oven exit state; a wait in room air cools "
                        "the product but uses up cooling-window time. Give transfer with "
                        "the room air and the usual wait.",
                    )
                )
            else:
                out.append(
                    Assumption(
                        "transfer",
                        tunnel.name,
                        f"tunnels[{i}].transfer",
                        f"no wait modelled, though batches may wait up to {hold:g} min",
                        "default",
                        "shorter",
                        "The minutes a batch waits in room air count against the cooling "
                        "windows but are not in the chill calculation. Give transfer with "
                        "the room air and the usual wait.",
                    )
                )
            continue
        air = (
            f"{spec.air_temperature:g} °C air at {spec.air_speed:g} m/s"
            if spec.air_speed is not None
            else f"{spec.air_temperature:g} °C air, measured h {spec.measured_h:g} W/(m² K)"
        )
        out.append(
            Assumption(
                "transfer loading",
                tunnel.name,
                "",
                f"pieces waiting in {air} taken as lone pieces (loading factor 1)",
                "default",
                "shorter",
                "Racked or stacked product cools more slowly while it waits and enters "
                "the belt hotter than modelled; validate the belt-entry core temperature "
                "with probes.",
            )
        )
        if tunnel.hot_hold_max is None:
            out.append(
                Assumption(
                    "hot hold",
                    tunnel.name,
                    f"tunnels[{i}].hot_hold_max",
                    f"only the {spec.duration:g} min transfer wait is checked",
                    "default",
                    "shorter",
                    "No hot-hold limit bounds the wait before the belt, so a longer wait "
                    "is not checked against the cooling windows. Give hot_hold_max.",
                )
            )
    return out


def _default_wall_ovens(scenario: Scenario) -> list[tuple[int, int, Any, Any]]:
    """(oven index, setting index, oven, setting) of oven settings whose radiation
    uses walls at the air temperature (no wall_temperature, no measured h, emissivity
    not 0)."""
    return [
        (i, k, oven, st)
        for i, oven in enumerate(scenario.ovens)
        for k, st in enumerate(oven.settings)
        if st.measured_h is None and st.wall_temperature is None and st.emissivity != 0.0
    ]


def _radiation(scenario: Scenario) -> list[Assumption]:
    out = []
    radiating_ovens = [
        (i, k, oven, st)
        for i, oven in enumerate(scenario.ovens)
        for k, st in enumerate(oven.settings)
        if st.measured_h is None and st.emissivity is None
    ]
    radiating_tunnels = [
        (i, tunnel)
        for i, tunnel in enumerate(scenario.tunnels)
        if any(z.measured_h is None for s in tunnel.settings for z in s.zones)
    ]
    for i, product in enumerate(scenario.products):
        if "emissivity" in product.model_fields_set:
            continue
        if not radiating_ovens and not radiating_tunnels:
            continue
        out.append(
            Assumption(
                "emissivity",
                product.name,
                f"products[{i}].emissivity",
                f"{product.emissivity:g} (default, a moist food surface)",
                "default",
                "shorter",
                "Radiation to and from the walls uses this value; a shinier surface (foil, "
                "film, glaze) exchanges less, so the real cook or chill takes longer. Give "
                "the product's emissivity.",
            )
        )
    for i, k, oven, st in _default_wall_ovens(scenario):
        out.append(
            Assumption(
                "wall temperature",
                f"{oven.name} / {st.name}",
                f"ovens[{i}].settings[{k}].wall_temperature",
                f"walls at the air temperature, {st.air_temperature:g} °C",
                "default",
                "unknown",
                "Walls cooler than the air (doors, loading) radiate less and slow the cook; "
                "hotter walls (radiant elements) speed it. Give wall_temperature from a "
                "surface probe.",
            )
        )
    for _, tunnel in radiating_tunnels:
        out.append(
            Assumption(
                "wall temperature",
                tunnel.name,
                "",
                "walls at each zone's air temperature",
                "default",
                "unknown",
                "Warm walls, doors and belt openings take less heat by radiation than "
                "walls at the air temperature; colder coils take more.",
            )
        )
    return out


def _relative_humidity(air_temperature: float, dew_point: float) -> float:
    from thermal.air import saturation_pressure

    return float(saturation_pressure(dew_point) / saturation_pressure(air_temperature))


def _moisture(scenario: Scenario) -> list[Assumption]:
    out = []
    for oven in scenario.ovens:
        for st in oven.settings:
            if st.relative_humidity is not None:
                rh = st.relative_humidity
                air = f"relative humidity {_pct(rh)}"
            elif st.dew_point is not None:
                rh = _relative_humidity(st.air_temperature, st.dew_point)
                air = f"dew point {st.dew_point:g} °C"
            else:
                rh, air = 0.0, "no humidity given: dry air"
            if rh >= NEAR_SATURATION:
                continue
            out.append(
                Assumption(
                    "surface evaporation",
                    f"{oven.name} / {st.name}",
                    "",
                    f"not modelled ({air})",
                    "default",
                    "shorter",
                    "While a wet surface is above the air's dew point, evaporation holds it "
                    "near the wet-bulb temperature and slows the cook; the model heats a dry "
                    "surface. Validate the cook with core probes.",
                )
            )
    return out


def _coldest_tunnel_air(scenario: Scenario) -> float:
    return min(z.air_temperature for t in scenario.tunnels for s in t.settings for z in s.zones)


def _properties(scenario: Scenario) -> list[Assumption]:
    out = []
    coldest = _coldest_tunnel_air(scenario)
    for i, product in enumerate(scenario.products):
        c = product.composition
        if c is not None:
            out.append(
                Assumption(
                    "food properties",
                    product.name,
                    f"products[{i}].properties",
                    "from composition: Choi & Okos (1986) components, parallel mixture "
                    "rule for k; water cp Popiel & Wojtkowiak (1998), water k Ramires et "
                    "al. (1995)",
                    "published",
                    "shorter",
                    "The parallel rule is the upper bound of the mixture conductivity "
                    "(Maxwell-Eucken gives some 3-7 % less for meats above freezing, the "
                    "series rule about 20 % less), and a higher k heats and cools faster. "
                    "Give measured properties where the plant has them.",
                )
            )
            if product.freezing_point is None and coldest < 0.0:
                # the estimate the dwell table uses (None: no freezable water)
                t_f = thermal_properties(product).freezing_point
                if t_f is not None and coldest < t_f:
                    out.append(
                        Assumption(
                            "freezing point",
                            f"{product.name} ({t_f:.1f} °C)",
                            f"products[{i}].freezing_point",
                            "estimated from composition (Pham 1996)",
                            "published",
                            "unknown",
                            f"Tunnel air down to {coldest:g} °C can freeze the surface; the "
                            "freezing point sets where latent heat slows it. Give the "
                            "measured freezing point.",
                        )
                    )
            continue
        p = product.properties
        if (
            p is not None
            and p.latent_heat == 0.0
            and product.freezing_point is not None
            and coldest < product.freezing_point
        ):
            out.append(
                Assumption(
                    "latent heat",
                    product.name,
                    f"products[{i}].properties.latent_heat",
                    "0 J/kg (not given)",
                    "default",
                    "shorter",
                    f"Tunnel air down to {coldest:g} °C can freeze the surface below its "
                    f"freezing point {product.freezing_point:g} °C; without latent heat "
                    "the model cools it faster than real product. Give latent_heat.",
                )
            )
    return out


def _margins(scenario: Scenario) -> list[Assumption]:
    margin = scenario.safety_margin
    given = margin.model_fields_set if "safety_margin" in scenario.model_fields_set else set()
    out = []
    if "time_fraction" not in given:
        out.append(
            Assumption(
                "time margin",
                "every dwell",
                "safety_margin.time_fraction",
                f"{_pct(margin.time_fraction)} added to every cook and chill time (default)",
                "default",
                "longer",
                "Check it against the variation the plant sees in loading, air and product.",
            )
        )
    if "core_temperature" not in given:
        out.append(
            Assumption(
                "temperature margin",
                "every rule",
                "safety_margin.core_temperature",
                f"{margin.core_temperature:g} K on the core targets (default)",
                "default",
                "shorter",
                "The targets are met exactly at the centre of the largest piece, with "
                "nothing kept for probe and controller tolerance.",
            )
        )
    return out


def scenario_assumptions(scenario: Scenario) -> list[Assumption]:
    """The assumptions a scenario makes by what it leaves out (no physics run).

    Parameters
    ----------
    scenario : Scenario
        A validated scenario.

    Returns
    -------
    list of Assumption
        In scenario order by kind (not yet sorted by direction).
    """
    return [
        *_loading(scenario),
        *_largest(scenario),
        *_transfer(scenario),
        *_radiation(scenario),
        *_moisture(scenario),
        *_properties(scenario),
        *_margins(scenario),
    ]


# ---------------------------------------------------------------------------- the dwell table

_OUT_OF_RANGE = re.compile(
    r"(?P<name>[^;]+?): (?P<quantity>\S+) = (?P<value>\S+) outside the validity range "
    r"(?P<range>\[[^\]]*\]); result extrapolated, (?P<direction>[^;]*)"
)
_CONDENSATION = re.compile(
    r"below the dew point (?P<dew>\S+) °C of the air: condensation on the product is not "
    r"modelled"
)
_EXTRAPOLATION = {
    EXTRAPOLATION_UNDERSTATES: "longer",
    EXTRAPOLATION_OVERSTATES: "shorter",
    EXTRAPOLATION_UNKNOWN: "unknown",
}


def dwell_assumptions(dwell: pd.DataFrame) -> list[Assumption]:
    """Assumptions read from a dwell table's ``notes``: correlations out of range, condensation.

    One item per correlation and quantity (with the range of values met and
    the routes concerned), one per oven setting with condensation.

    Parameters
    ----------
    dwell : pandas.DataFrame
        A dwell table (:func:`optimizer.dwell.table.build_dwell_table`), or
        the rows of it that matter (e.g. the planned products').
    """
    if dwell.empty or "notes" not in dwell.columns:
        return []
    ranges: dict[tuple[str, str, str, str], tuple[list[float], list[str]]] = {}
    condensing: dict[str, list[str]] = {}
    for row in dwell.itertuples(index=False):
        notes = str(row.notes or "")
        if not notes or notes == "nan":
            continue
        route = f"{row.product} ({row.oven} / {row.oven_setting})"
        for m in _OUT_OF_RANGE.finditer(notes):
            key = (m["name"].strip(), m["quantity"], m["range"], m["direction"].strip())
            values, routes = ranges.setdefault(key, ([], []))
            values.append(float(m["value"]))
            routes.append(route)
        if _CONDENSATION.search(notes):
            condensing.setdefault(f"{row.oven} / {row.oven_setting}", []).append(row.product)
    out = []
    for (name, quantity, valid, direction), (values, routes) in ranges.items():
        low, high = min(values), max(values)
        met = f"{low:.3g}" if low == high else f"{low:.3g} to {high:.3g}"
        out.append(
            Assumption(
                "correlation out of range",
                _names(routes),
                "",
                f"{name}: {quantity} = {met}, valid {valid}",
                "common practice",
                _EXTRAPOLATION.get(direction, "unknown"),
                f"Extrapolated: {direction}. A measured_h for the setting replaces it.",
            )
        )
    for setting, products in condensing.items():
        out.append(
            Assumption(
                "condensation",
                setting,
                "",
                f"not modelled while the surface is below the air's dew point ({_names(products)})",
                "default",
                "longer",
                "Condensing steam heats the surface faster than the dry-air h the model uses.",
            )
        )
    return out


# ---------------------------------------------------------------------------- the register


def assumptions(scenario: Scenario, dwell: pd.DataFrame | None = None) -> tuple[Assumption, ...]:
    """The assumptions register of a scenario, most dangerous first.

    Parameters
    ----------
    scenario : Scenario
        A validated scenario.
    dwell : pandas.DataFrame, optional
        Its dwell table (or the rows that matter); adds the correlations used
        out of range and the condensation not modelled.

    Returns
    -------
    tuple of Assumption
        Sorted by :data:`DIRECTIONS` (those that could shorten a dwell first),
        then in scenario order.
    """
    items = scenario_assumptions(scenario)
    if dwell is not None:
        items += dwell_assumptions(dwell)
    rank = {d: i for i, d in enumerate(DIRECTIONS)}
    return tuple(sorted(_merged(items), key=lambda a: rank[a.direction]))


def _merged(items: Sequence[Assumption]) -> list[Assumption]:
    """One item per assumption that several subjects share (same topic, value, source,
    direction and note): the subjects joined, the field with ``[i]`` for the indices."""
    groups: dict[tuple[str, ...], list[Assumption]] = {}
    for a in items:
        groups.setdefault((a.topic, a.value, a.source, a.direction, a.note), []).append(a)
    out = []
    for group in groups.values():
        first = group[0]
        if len(group) == 1:
            out.append(first)
            continue
        fields = list(dict.fromkeys(_INDEX.sub("[i]", a.field) for a in group))
        out.append(
            Assumption(
                first.topic,
                ", ".join(dict.fromkeys(a.applies_to for a in group)),
                ", ".join(fields),
                first.value,
                first.source,
                first.direction,
                first.note,
            )
        )
    return out


ASSUMPTION_COLUMNS = ("direction", "topic", "applies_to", "value", "source", "field", "note")


def assumptions_table(items: Iterable[Assumption]) -> pd.DataFrame:
    """The register as a table (columns ``direction, topic, applies_to, value, source, field,
    note``), in the register's order."""
    rows = [{c: getattr(a, c) for c in ASSUMPTION_COLUMNS} for a in items]
    return pd.DataFrame(rows, columns=list(ASSUMPTION_COLUMNS))


def assumption_lines(items: Iterable[Assumption]) -> list[str]:
    """One line of text per assumption, in the register's order."""
    return [a.line for a in items]
