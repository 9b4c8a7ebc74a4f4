"""The error the engineering core raises for input it cannot compute with.

References
----------
Project convention: a ValueError whose message a tradesperson can act on,
carrying the name of the input at fault so an API can point at it.
"""

from __future__ import annotations

import math


class InvalidInput(ValueError):
    """A figure outside the range where a method is valid, or non-physical.

    Parameters
    ----------
    field : str
        Name of the input at fault, as the caller spells it (``capacity_ah``).
    reason : str
        A sentence saying what is wrong and what to check.
    """

    def __init__(self, field: str, reason: str) -> None:
        super().__init__(f"{field}: {reason}")
        self.field = field
        self.reason = reason


def require_positive(field: str, value: float) -> None:
    """Raise :class:`InvalidInput` unless ``value`` is a finite number above 0."""
    if not 0 < value < math.inf:
        raise InvalidInput(field, "must be a number greater than 0")


def require_non_negative(field: str, value: float) -> None:
    """Raise :class:`InvalidInput` unless ``value`` is a finite number of 0 or more."""
    if not 0 <= value < math.inf:
        raise InvalidInput(field, "must be a number of 0 or more")
