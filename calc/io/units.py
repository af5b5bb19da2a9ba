"""The one unit registry of cupcal.

Everything that needs units imports ``ureg`` and ``Q_`` from here; never build a
second ``UnitRegistry``.

Parsing pint's unit definitions costs about half a second at every start; pint can keep the parsed
definitions in the user's cache folder (``cache_folder=":auto:"``), which cuts that to a tenth. A
folder that cannot be written falls back to parsing every time.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

import pint


def _registry() -> pint.UnitRegistry[Any]:
    try:
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=":auto:")
    except OSError:  # no writable cache folder
        return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


ureg = _registry()
ureg.formatter.default_format = "~P"
Q_ = ureg.Quantity

__all__ = ["ureg", "Q_", "parse_unit", "DimensionalityError", "UndefinedUnitError"]

DimensionalityError = pint.DimensionalityError
UndefinedUnitError = pint.UndefinedUnitError


@lru_cache(maxsize=1024)
def parse_unit(text: str) -> pint.Unit:
    """Return the pint unit for ``text`` (cached: units repeat across thousands of runs)."""
    return ureg.Unit(text)
