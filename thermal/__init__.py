"""Physics layer of corepace: transient conduction, air, foods, processes.

Pure functions and typed results in SI units (temperatures in °C). This
package never imports :mod:`optimizer`.
"""

from thermal.convection import AirSetting
from thermal.foods import Composition, ConstantProperties, FoodProperties
from thermal.geometry import (
    LUMPED_BIOT_LIMIT,
    Block,
    FiniteCylinder,
    InfiniteCylinder,
    Shape,
    Slab,
    Sphere,
    biot_numbers,
    lumped_biot,
    lumped_temperature_ratio,
    lumped_time,
    temperature_at,
    temperature_ratio_at,
    time_to_temperature,
)
from thermal.product import BiotNumbers, CoreTimeResult, Product
from thermal.series import (
    SHAPES,
    eigenvalues,
    fourier_for_ratio,
    mean_temperature_ratio,
    temperature_ratio,
)

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
