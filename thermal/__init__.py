"""Physics layer of corepace: transient conduction, air, foods, processes.

Pure functions and typed results in SI units (temperatures in °C). This
package never imports :mod:`optimizer`.
"""

from thermal.series import (
    SHAPES,
    eigenvalues,
    fourier_for_ratio,
    mean_temperature_ratio,
    temperature_ratio,
)

__all__ = [
    "SHAPES",
    "eigenvalues",
    "fourier_for_ratio",
    "mean_temperature_ratio",
    "temperature_ratio",
]
