"""Numbers handed to the reference library: a number or its text, refused with a message that says what was expected."""

from __future__ import annotations

import math
from typing import SupportsFloat, cast

from calc.errors import InputError

__all__ = ["as_number", "non_negative"]


def as_number(x: object, what: str, expected: str = "") -> float:
    """Return ``float(x)``; else InputError "<what> must be a number<expected>, got <x>" (``expected``: " in kelvin")."""
    try:
        return float(cast(SupportsFloat, x))  # float() raises TypeError for the rest, caught below
    except (TypeError, ValueError):
        raise InputError(f"{what} must be a number{expected}, got {x!r}") from None


def non_negative(x: object, what: str, expected: str, unit: str = "") -> float:
    """Return :func:`as_number` of ``x`` once it is ≥ 0 (NaN refused); ``unit`` follows ``x`` in the message."""
    v = as_number(x, what, expected)
    if v < 0 or math.isnan(v):
        raise InputError(f"{what} must not be negative, got {x!r}{unit}")
    return v
