"""Physics layer of corepace: transient conduction, air, foods, processes.

Pure functions and typed results in SI units (temperatures in °C). This
package never imports :mod:`optimizer`.
"""

from importlib import import_module
from typing import Any

# the names below load their module on first use (PEP 562), so that importing
# one small module (``thermal.errors``, ``thermal.rules``) does not pull in
# scipy and the solvers
_HOMES = {
    "AirSetting": "convection",
    "Composition": "foods",
    "ConstantProperties": "foods",
    "FoodProperties": "foods",
    "LUMPED_BIOT_LIMIT": "geometry",
    "Block": "geometry",
    "FiniteCylinder": "geometry",
    "InfiniteCylinder": "geometry",
    "Shape": "geometry",
    "Slab": "geometry",
    "Sphere": "geometry",
    "biot_numbers": "geometry",
    "lumped_biot": "geometry",
    "lumped_temperature_ratio": "geometry",
    "lumped_time": "geometry",
    "temperature_at": "geometry",
    "temperature_ratio_at": "geometry",
    "time_to_temperature": "geometry",
    "BiotNumbers": "product",
    "CoreTimeResult": "product",
    "Product": "product",
    "SHAPES": "series",
    "eigenvalues": "series",
    "fourier_for_ratio": "series",
    "mean_temperature_ratio": "series",
    "temperature_ratio": "series",
}


def __getattr__(name: str) -> Any:
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'thermal' has no attribute {name!r}")
    return getattr(import_module(f"thermal.{home}"), name)


def __dir__() -> list[str]:
    return sorted([*globals(), *_HOMES])


__all__ = [
    "LUMPED_BIOT_LIMIT",
    "SHAPES",
    "AirSetting",
    "BiotNumbers",
    "Block",
    "Composition",
    "ConstantProperties",
    "CoreTimeResult",
    "FiniteCylinder",
    "FoodProperties",
    "InfiniteCylinder",
    "Product",
    "Shape",
    "Slab",
    "Sphere",
    "biot_numbers",
    "eigenvalues",
    "fourier_for_ratio",
    "lumped_biot",
    "lumped_temperature_ratio",
    "lumped_time",
    "mean_temperature_ratio",
    "temperature_at",
    "temperature_ratio",
    "temperature_ratio_at",
    "time_to_temperature",
]
