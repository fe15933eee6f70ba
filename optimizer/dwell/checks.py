"""Scenario checks only the physics can judge, joined into loading a scenario for use.

The scenario layer validates fields and cross-field references without any
physics; :func:`load_checked_scenario` and :func:`checked_scenario_from_dict`
add two passes, so every caller that loads a scenario to compute with it
(``validate``, ``dwell``, ``plan``, studies) refuses the same inputs with the
same lines:

* :func:`physics_problems`, with the cross-field checks: air the physics
  cannot hold, materials it refuses;
* :func:`stage_problems`, once the scenario is whole: every physics object
  the dwell table will build (the largest piece of each product, its cook and
  chill rules, the safety margin, each oven stage, transfer and tunnel zones
  with each loading) is built, and the solvers' own input checks are made on
  it (:func:`thermal.process.check_stages`: surface conditions from the
  correlation registry, loading factors, zone shares) without solving.

A problem names the scenario field (``tunnels[0].loadings[0].h_factor: ...``)
or, when a product and a setting only fail together, the product's geometry
and the setting (``products[0].geometry: with ovens[0].settings[1] ...``).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from optimizer.dwell.convert import (
    air_setting,
    chill_rule,
    cook_rule,
    loading_factor,
    thermal_product,
    thermal_properties,
)
from optimizer.dwell.stages import hold_waits, transfer_stage, tunnel_zones
from optimizer.scenario.models import (
    LoadingOption,
    Oven,
    OvenSetting,
    Product,
    Scenario,
    ScenarioError,
    TransferStage,
    Tunnel,
    TunnelSetting,
    TunnelZone,
    load_scenario,
    scenario_from_dict,
)
from optimizer.scenario.overrides import Change
from optimizer.scenario.units import shown
from thermal.air import VALID_TEMPERATURE_K, air_properties
from thermal.errors import ThermalInputError

__all__ = [
    "checked_scenario_from_dict",
    "load_checked_scenario",
    "physics_problems",
    "stage_problems",
]

_PHYSICS_FIELDS = {
    "temperature": "air_temperature",
    "speed": "air_speed",
    "humidity_ratio": "dew_point",
    "relative_humidity": "relative_humidity",
    "wall_temperature": "wall_temperature",
    "measured_h": "measured_h",
}


def _missing_air_properties(temperature: float) -> str:
    """Names of the properties of dry air that come out undefined at ``temperature`` [°C].

    The gas correlations extrapolate (with a validity warning) outside their
    range; far outside it some properties come out NaN or not positive
    (below about -150 °C, above about 1500 °C), and no stage can use them.
    """
    props = air_properties(temperature)
    fields = {
        "density": props.density,
        "viscosity": props.viscosity,
        "conductivity": props.conductivity,
        "specific heat": props.specific_heat,
        "Prandtl number": props.prandtl,
    }
    return ", ".join(n for n, v in fields.items() if not (math.isfinite(float(v)) and v > 0))


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
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")  # validity notes belong to the dwell table's cells
        return _physics_problems(ovens, tunnels, products)


def _physics_problems(
    ovens: Sequence[tuple[int, Oven]],
    tunnels: Sequence[tuple[int, Tunnel]],
    products: Sequence[tuple[int, Product]],
) -> list[str]:
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
            return
        missing = _missing_air_properties(spec.air_temperature)
        if missing:
            lo, hi = (t - 273.15 for t in VALID_TEMPERATURE_K)
            out.append(
                f"{path}.air_temperature: the air property model gives no {missing} at "
                f"{spec.air_temperature:.6g} °C (its correlations hold from {lo:.2f} to "
                f"{hi:.2f} °C)"
            )

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


def _attempt(check: Callable[[], Any]) -> str | None:
    """The one-line message of the input error ``check()`` raises, or None.

    An arithmetic overflow counts as one: values so far out of range that
    the correlations overflow a float (an air speed of 1e300 m/s).
    """
    try:
        check()
    except ThermalInputError as exc:
        return " ".join(str(exc).split())
    except ArithmeticError as exc:
        return f"values too large for the physics to compute with ({type(exc).__name__})"
    return None


def _head(message: str) -> str:
    return message.partition(": ")[0]


def _check_stage(
    piece: Any,
    t_start: float,
    *,
    oven: OvenSetting | None = None,
    tunnel: Tunnel | None = None,
    transfer: bool = False,
    setting: TunnelSetting | None = None,
    option: LoadingOption | None = None,
) -> None:
    """Build one stage's physics objects and make the solvers' input checks on them.

    ``transfer``: the tunnel's transfer stage at every wait the table checks
    (the waits differ only in duration, so one has its surface checked).
    """
    from thermal import process

    if oven is not None:
        process.check_stages(piece, t_start, oven=air_setting(oven))
    if tunnel is not None and transfer:
        stages = [transfer_stage(tunnel.transfer, wait) for wait in hold_waits(tunnel)]
        process.check_stages(piece, t_start, transfer=stages[0])
    if tunnel is not None and setting is not None and option is not None:
        zones = tunnel_zones(tunnel, setting, loading_factor(option, setting))
        process.check_stages(piece, t_start, zones=zones)


def stage_problems(scenario: Scenario) -> list[str]:
    """Build every physics object the dwell table will build and make the solvers' checks.

    Cheap: no heat conduction is solved (:func:`thermal.process.check_stages`).
    Each oven setting is checked with the product entering at its initial
    temperature; each transfer and tunnel setting for a product entering at
    its cook target and at the hottest setting of the ovens feeding the
    tunnel (the mean temperature at oven exit, which sets the film
    temperature of the chill, lies between them). A loading changes only a
    factor on h: the first loading is checked with every setting and
    product, each other loading with the first setting and product.

    Parameters
    ----------
    scenario : Scenario
        A scenario that passed the field and cross-field checks.

    Returns
    -------
    list of str
        One line per problem, naming the scenario field; empty when the
        physics accepts everything.
    """
    from thermal import process  # loads the numba solver: only once the fields are sound

    out: list[str] = []
    margin = scenario.safety_margin
    message = _attempt(lambda: process.Margin(relative=margin.time_fraction))
    if message is not None:
        out.append(f"safety_margin.time_fraction: {message}")
    failures: dict[str, dict[int, str]] = {}  # stage -> product index -> message
    labels: dict[str, str] = {}

    def stage(
        where: str, label: str, i: int, *args: Any, loading: str | None = None, **kw: Any
    ) -> None:
        message = _attempt(lambda: _check_stage(*args, **kw))
        if message is None:
            return
        head, _, rest = message.partition(": ")
        if loading is not None and head.endswith("loading_factor"):
            out.append(f"{loading}.h_factor: {rest}")  # the loading's, whatever the product
            return
        labels[where] = label
        failures.setdefault(where, {})[i] = message

    for i, product in enumerate(scenario.products):
        try:
            piece = thermal_product(product)
        except ThermalInputError as exc:
            part = "emissivity" if _head(str(exc)) == "emissivity" else "geometry"
            out.append(f"products[{i}].{part}: {exc}")
            continue
        t_in = product.initial_temperature
        target = None
        try:
            rule = cook_rule(scenario.cook_rule(product), t_in, margin.core_temperature)
            target = float(rule.core_target)
        except ThermalInputError as exc:
            out.append(f"products[{i}].cook_rule: {exc}")
        try:
            chill_rule(scenario.chill_rule(product), margin.core_temperature)
        except ThermalInputError as exc:
            out.append(f"products[{i}].chill_rule: {exc}")
        for j, oven in enumerate(scenario.ovens):
            for k, oset in enumerate(oven.settings):
                try:
                    own = thermal_product(product, emissivity=oset.emissivity)
                except ThermalInputError as exc:
                    out.append(f"ovens[{j}].settings[{k}].emissivity: {exc}")
                    continue
                stage(f"ovens[{j}].settings[{k}]", oset.name, i, own, t_in, oven=oset)
        if target is None:
            continue
        for j, tunnel in enumerate(scenario.tunnels):
            feeding = [o for o in scenario.ovens if o.name in tunnel.fed_by]
            hottest = max(s.hottest_temperature for o in feeding for s in o.settings)
            for t0 in sorted({target, max(target, hottest)}):
                if tunnel.transfer is not None:
                    where = f"tunnels[{j}].transfer"
                    stage(where, "transfer", i, piece, t0, tunnel=tunnel, transfer=True)
                for k, tset in enumerate(tunnel.settings):
                    for m, option in enumerate(tunnel.loadings):
                        if m and (k or i or t0 != target):
                            continue
                        kw = {"tunnel": tunnel, "setting": tset, "option": option}
                        loading = f"tunnels[{j}].loadings[{m}]"
                        where = f"tunnels[{j}].settings[{k}]"
                        stage(where, tset.name, i, piece, t0, loading=loading, **kw)
    n_products = len(scenario.products)
    by_product: dict[int, list[str]] = {}
    for where, failed in failures.items():
        messages = set(failed.values())
        if n_products > 1 and len(failed) == n_products and len(messages) == 1:
            out.append(f"{where}: {messages.pop()} (for every product)")
            continue
        for i in failed:
            by_product.setdefault(i, []).append(where)
    for i in sorted(by_product):
        where, *rest = by_product[i]
        more = f" (and {len(rest)} more setting{'s' if len(rest) > 1 else ''})" if rest else ""
        out.append(
            f"products[{i}].geometry: with {where} ({shown(labels[where])}) the physics "
            f"refuses this piece: {failures[where][i]}{more}"
        )
    return list(dict.fromkeys(out))


def _whole(scenario: Scenario, source: str | None) -> Scenario:
    with np.errstate(all="ignore"), warnings.catch_warnings():
        # correlation validity notes belong to the dwell table, where each cell names them
        warnings.simplefilter("ignore")
        problems = stage_problems(scenario)
    if problems:
        raise ScenarioError(problems, source)
    return scenario


def load_checked_scenario(path: str | Path, changes: Iterable[Change] = ()) -> Scenario:
    """:func:`optimizer.scenario.models.load_scenario` with the physics checks.

    The field and cross-field checks with :func:`physics_problems` first; on
    a scenario that passes them, :func:`stage_problems`.

    Raises
    ------
    optimizer.scenario.models.ScenarioError
        All problems of the first pass that finds any, one line each.
    """
    return _whole(load_scenario(path, changes, physics=physics_problems), str(path))


def checked_scenario_from_dict(data: Mapping[str, Any], source: str | None = None) -> Scenario:
    """:func:`optimizer.scenario.models.scenario_from_dict` with the physics checks.

    As :func:`load_checked_scenario`.

    Raises
    ------
    optimizer.scenario.models.ScenarioError
        All problems of the first pass that finds any, one line each.
    """
    return _whole(scenario_from_dict(data, source, physics=physics_problems), source)
