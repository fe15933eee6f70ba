"""Scenario models -> :mod:`thermal` objects: shapes, materials, air, rules.

One conversion per kind of input, used by the dwell table, the physics checks
and the temperature histories alike, so they all see the same physics. Units
pass from the scenario's (°C, minutes, m) to the physics' (°C, s, m) here.
"""

from __future__ import annotations

from optimizer.scenario.models import (
    BlockGeometry,
    ChillRuleSpec,
    CookRuleSpec,
    CylinderGeometry,
    FiniteCylinderGeometry,
    FreezeRuleSpec,
    LoadingOption,
    OvenSetting,
    Product,
    SlabGeometry,
    SphereGeometry,
    TransferStage,
    TunnelSetting,
    TunnelZone,
)
from optimizer.scenario.units import minutes_to_seconds
from thermal.air import humidity_ratio_from_dew_point
from thermal.convection import AirSetting, coverage_loading_factor
from thermal.foods import Composition as ThermalComposition
from thermal.foods import ConstantProperties, FoodProperties
from thermal.geometry import Block, FiniteCylinder, InfiniteCylinder, Shape, Slab, Sphere
from thermal.product import Product as ThermalProduct
from thermal.rules import (
    ChillRule,
    CookRule,
    CoolingStep,
    FreezeRule,
    LethalityRule,
    TimeTemperatureTable,
)

__all__ = [
    "air_setting",
    "chill_rule",
    "cook_rule",
    "loading_factor",
    "thermal_geometry",
    "thermal_product",
    "thermal_properties",
]

Geometry = SlabGeometry | CylinderGeometry | SphereGeometry | FiniteCylinderGeometry | BlockGeometry
"""Any scenario piece geometry."""


def thermal_geometry(geometry: Geometry) -> Shape:
    """The :mod:`thermal.geometry` shape of the *largest* piece of a scenario geometry.

    Parameters
    ----------
    geometry : SlabGeometry or CylinderGeometry or SphereGeometry or
        FiniteCylinderGeometry or BlockGeometry
        A validated scenario geometry (dimensions in m).

    Returns
    -------
    thermal.geometry shape
        ``Slab``, ``InfiniteCylinder``, ``Sphere``, ``FiniteCylinder`` or ``Block``
        with the largest-piece dimensions [m].
    """
    d = geometry.largest_dims()
    if isinstance(geometry, SlabGeometry):
        return Slab(d["thickness"], length=d["length"], width=d["width"])
    if isinstance(geometry, CylinderGeometry):
        return InfiniteCylinder(d["radius"])
    if isinstance(geometry, SphereGeometry):
        return Sphere(d["radius"])
    if isinstance(geometry, FiniteCylinderGeometry):
        return FiniteCylinder(d["radius"], d["length"])
    if isinstance(geometry, BlockGeometry):
        return Block(d["length"], d["width"], d["height"])
    raise TypeError(f"geometry: unknown scenario geometry {type(geometry).__name__}")


def thermal_properties(product: Product) -> FoodProperties | ConstantProperties:
    """Food properties of a scenario product (:mod:`thermal.foods`).

    A composition gives :class:`thermal.foods.FoodProperties` (with the
    product's freezing point when given, else estimated); explicit
    properties give :class:`thermal.foods.ConstantProperties`.
    """
    if product.composition is not None:
        c = product.composition
        comp = ThermalComposition(
            water=c.water,
            protein=c.protein,
            fat=c.fat,
            carbohydrate=c.carbohydrate,
            fiber=c.fiber,
            ash=c.ash,
        )
        return FoodProperties(comp, freezing_point=product.freezing_point)
    p = product.properties
    assert p is not None
    return ConstantProperties(
        p.conductivity,
        p.density,
        p.specific_heat,
        freezing_point=product.freezing_point,
        latent_heat=p.latent_heat,
    )


def thermal_product(product: Product, *, emissivity: float | None = None) -> ThermalProduct:
    """A :class:`thermal.product.Product` for the largest piece of ``product``.

    Parameters
    ----------
    product : Product
        Scenario product.
    emissivity : float, optional
        Surface emissivity overriding the product's [-] (an oven setting's
        ``emissivity``).
    """
    eps = product.emissivity if emissivity is None else emissivity
    return ThermalProduct(
        product.name, thermal_geometry(product.geometry), thermal_properties(product), eps
    )


def air_setting(spec: OvenSetting | TransferStage | TunnelZone) -> AirSetting:
    """A :class:`thermal.convection.AirSetting` from a scenario air description.

    ``spec`` is an oven setting, a transfer stage or a tunnel zone: air
    temperature [°C], air speed [m/s] or measured h [W/(m² K)], relative
    humidity [-] or dew point [°C], and (ovens) wall temperature [°C]. With a
    measured h the air speed is not used (0).
    """
    ratio = None
    if spec.dew_point is not None:
        ratio = float(humidity_ratio_from_dew_point(spec.dew_point))
    return AirSetting(
        temperature=spec.air_temperature,
        speed=spec.air_speed if spec.air_speed is not None else 0.0,
        relative_humidity=spec.relative_humidity,
        wall_temperature=getattr(spec, "wall_temperature", None),
        measured_h=spec.measured_h,
        humidity_ratio=ratio,
    )


def cook_rule(spec: CookRuleSpec, t_initial: float, margin_k: float = 0.0) -> CookRule:
    """The :class:`thermal.rules.CookRule` of a scenario cook rule.

    Parameters
    ----------
    spec : CookRuleSpec
        Scenario cook rule (temperatures °C, holds and D-values in min).
    t_initial : float
        Product temperature at loading [°C] (core target of a lethality-only rule).
    margin_k : float
        Kelvin added to the core target and table temperatures [K].
    """
    lethality = None
    if spec.lethality is not None:
        L = spec.lethality
        lethality = LethalityRule(
            L.organism, minutes_to_seconds(L.d_ref), L.t_ref, L.z, L.log_reduction
        )
    table = None
    if spec.core_temperature is not None:
        target, hold = spec.core_temperature + margin_k, minutes_to_seconds(spec.hold)
    elif spec.alternatives:
        rows = sorted(spec.alternatives, key=lambda a: a.core_temperature)
        table = TimeTemperatureTable(
            spec.source,
            tuple(a.core_temperature + margin_k for a in rows),
            tuple(minutes_to_seconds(a.hold) for a in rows),
        )
        target, hold = rows[0].core_temperature + margin_k, 0.0
    else:
        target, hold = t_initial + 0.01, 0.0
    return CookRule(target, hold, lethality=lethality, table=table)


def chill_rule(
    spec: ChillRuleSpec | FreezeRuleSpec, margin_k: float = 0.0
) -> ChillRule | FreezeRule:
    """The :class:`thermal.rules.ChillRule` or ``FreezeRule`` of a scenario rule.

    ``margin_k`` [K] is taken off the exit limit and every step's end
    temperature (the start temperatures, which open the windows, stay).
    """
    if isinstance(spec, FreezeRuleSpec):
        return FreezeRule(spec.core_temperature - margin_k)
    steps = tuple(
        CoolingStep(s.start, s.end - margin_k, minutes_to_seconds(s.within)) for s in spec.steps
    )
    exit_max = spec.exit_core_temperature
    return ChillRule(steps, None if exit_max is None else exit_max - margin_k)


def loading_factor(option: LoadingOption, setting: TunnelSetting | None = None) -> float:
    """The factor on h of a tunnel loading option in a tunnel setting [-].

    The loading's calibrated ``h_factor`` when given. Otherwise 1 when every
    zone of ``setting`` gives a measured h (taken as measured on the loaded
    belt), else the estimate from the coverage,
    :func:`thermal.convection.coverage_loading_factor` (``1 - 0.5 coverage``,
    leaning slow), which then also multiplies the measured zones of a mixed
    setting. Both defaults are assumptions the reports list
    (:mod:`optimizer.dwell.assumptions`). ``setting`` None: h from
    correlations.
    """
    if option.h_factor is not None:
        return float(option.h_factor)
    if setting is not None and all(z.measured_h is not None for z in setting.zones):
        return 1.0
    return coverage_loading_factor(option.coverage)
