"""The one unit registry of cupcal.

Everything that needs units imports ``ureg`` and ``Q_`` from here; never build a
second ``UnitRegistry``.
"""

from __future__ import annotations

from functools import lru_cache

import pint

ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
ureg.formatter.default_format = "~P"
Q_ = ureg.Quantity

__all__ = ["ureg", "Q_", "parse_unit", "DimensionalityError", "UndefinedUnitError"]

DimensionalityError = pint.DimensionalityError
UndefinedUnitError = pint.UndefinedUnitError


@lru_cache(maxsize=1024)
def parse_unit(text: str) -> pint.Unit:
    """Return the pint unit for ``text`` (cached: units repeat across thousands of runs)."""
    return ureg.Unit(text)
