"""The physics' input errors and validity warnings, for the layers above the dwell layer.

Only the dwell layer imports :mod:`thermal`; the planning, reporting and
command layers that catch a physics input error or count validity warnings
take the classes from here.
"""

from thermal.errors import ThermalInputError, UnreachableTargetError, ValidityWarning

__all__ = ["ThermalInputError", "UnreachableTargetError", "ValidityWarning"]
