"""The physics' input errors and validity warnings, for the layers above the dwell layer.

Only the dwell layer imports :mod:`thermal`; the planning, reporting and
command layers that catch a physics input error or count validity warnings
take the classes from here.
"""

from thermal.errors import ThermalInputError, UnreachableTargetError, ValidityWarning

__all__ = ["CacheWarning", "ThermalInputError", "UnreachableTargetError", "ValidityWarning"]


class CacheWarning(UserWarning):
    """A dwell cache entry was refused or did not match the physics, and was recomputed.

    One line each; the command shows them as notes. The values used are
    always the physics' own.
    """
