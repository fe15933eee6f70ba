"""Error types shared by the physics layer.

Both are ``ValueError`` subclasses so callers that only know the standard
library still catch them. Messages always say which argument was wrong, what
is accepted and what was given, on one line.
"""

from __future__ import annotations


class ThermalInputError(ValueError):
    """An argument is outside the accepted domain (wrong type, range or NaN)."""


class UnreachableTargetError(ValueError):
    """A requested temperature cannot be reached under the given conditions.

    The message gives the physical reason, for example that air at 2 °C cannot
    bring the core below 2 °C.
    """


class ValidityWarning(UserWarning):
    """A correlation or property model is used outside its stated validity range.

    The message names the range and the value; the result is an extrapolation,
    not an error. Filter with ``warnings.simplefilter("error", ValidityWarning)``
    to make such cases fail.
    """
