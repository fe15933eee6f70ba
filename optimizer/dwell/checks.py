"""Scenario checks only the physics can judge, joined into loading a scenario for use.

The scenario layer validates fields and cross-field references without any
physics; :func:`load_checked_scenario` and :func:`checked_scenario_from_dict`
add :func:`physics_problems` (air the physics cannot hold, materials it
refuses) at the same place in the problem list, so every caller that loads a
scenario to compute with it reports the same lines.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

from optimizer.dwell.convert import air_setting, thermal_properties
from optimizer.scenario.models import (
    Oven,
    OvenSetting,
    Product,
    Scenario,
    TransferStage,
    Tunnel,
    TunnelZone,
    load_scenario,
    scenario_from_dict,
)
from optimizer.scenario.overrides import Change
from thermal.errors import ThermalInputError

__all__ = ["checked_scenario_from_dict", "load_checked_scenario", "physics_problems"]

_PHYSICS_FIELDS = {
    "temperature": "air_temperature",
    "speed": "air_speed",
    "humidity_ratio": "dew_point",
    "relative_humidity": "relative_humidity",
    "wall_temperature": "wall_temperature",
    "measured_h": "measured_h",
}


def physics_problems(
    ovens: Sequence[tuple[int, Oven]],
    tunnels: Sequence[tuple[int, Tunnel]],
    products: Sequence[tuple[int, Product]],
) -> list[str]:
    """Ask the physics layer to accept every air setting and material, with field paths.

    A :data:`optimizer.scenario.models.PhysicsCheck`.

    Catches what only the physics can judge, e.g. a relative humidity that
    air above 100 °C cannot hold at atmospheric pressure.
    """

    out: list[str] = []

    def air(path: str, spec: OvenSetting | TransferStage | TunnelZone) -> None:
        try:
            air_setting(spec)
        except ThermalInputError as exc:
            msg = str(exc)
            head, sep, tail = msg.partition(": ")
            if sep and head in _PHYSICS_FIELDS:
                out.append(f"{path}.{_PHYSICS_FIELDS[head]}: {tail}")
            else:
                out.append(f"{path}: {msg}")

    for i, o in ovens:
        for k, st in enumerate(o.settings):
            air(f"ovens[{i}].settings[{k}]", st)
    for i, t in tunnels:
        if t.transfer is not None:
            air(f"tunnels[{i}].transfer", t.transfer)
        for k, st in enumerate(t.settings):
            for j, z in enumerate(st.zones):
                air(f"tunnels[{i}].settings[{k}].zones[{j}]", z)
    for i, p in products:
        try:
            thermal_properties(p)
        except ThermalInputError as exc:
            part = "composition" if p.composition is not None else "properties"
            out.append(f"products[{i}].{part}: {exc}")
    return out


def load_checked_scenario(path: str | Path, changes: Iterable[Change] = ()) -> Scenario:
    """:func:`optimizer.scenario.models.load_scenario` with the physics checks.

    Raises
    ------
    optimizer.scenario.models.ScenarioError
        All problems at once, one line each.
    """
    return load_scenario(path, changes, physics=physics_problems)


def checked_scenario_from_dict(data: Mapping[str, Any], source: str | None = None) -> Scenario:
    """:func:`optimizer.scenario.models.scenario_from_dict` with the physics checks.

    Raises
    ------
    optimizer.scenario.models.ScenarioError
        All problems at once, one line each.
    """
    return scenario_from_dict(data, source, physics=physics_problems)
