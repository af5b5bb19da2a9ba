"""Molar masses from chemical formulas, with IUPAC standard atomic weights.

The arithmetic is done by the maintained ``molmass`` package (IUPAC standard
atomic weights); this module only adds caching and cupcal's error type. The uncertainty of a
molar mass from the standard atomic weights (parts in 10^5 or less for the
elements of this trade) is negligible beside weighing and is not propagated.
"""

from __future__ import annotations

import math
from functools import lru_cache

import molmass

from calc.errors import InputError

__all__ = ["molar_mass", "element_counts"]


def _normalise(formula: str) -> str:
    # molmass writes hydrates with "." ; accept the middle dot and "*" as well.
    return formula.strip().replace("·", ".").replace("*", ".").replace("•", ".")


@lru_cache(maxsize=4096)
def _parse(formula: str) -> molmass.Formula:
    return molmass.Formula(_normalise(formula))


def molar_mass(formula: str, *, field: str | None = None, source: str | None = None) -> float:
    """Return the molar mass of ``formula`` in g/mol.

    Parameters
    ----------
    formula:
        A chemical formula such as ``"KCl"``, ``"CuSO4.5H2O"`` or ``"(HOCH2)3CNH2"``.
    field, source:
        Where the formula came from, for the error message.

    Raises
    ------
    InputError
        When the formula cannot be read.
    """
    if not isinstance(formula, str) or not formula.strip():
        raise InputError("expected a chemical formula such as 'KCl'", field=field, source=source)
    try:
        f = _parse(formula)
        mass = float(f.mass)
    except Exception as exc:  # molmass raises several types for bad formulas
        raise InputError(
            f"cannot read the chemical formula '{formula}' ({exc.__class__.__name__}); "
            "expected something like 'KCl', 'NH4NO3' or 'CuSO4.5H2O'",
            field=field,
            source=source,
        ) from None
    if not math.isfinite(mass) or mass <= 0:
        raise InputError(f"the formula '{formula}' has no mass", field=field, source=source)
    return mass


def element_counts(formula: str) -> dict[str, int]:
    """Return the number of atoms of each element in ``formula``."""
    comp = _parse(formula).composition()
    return {item.symbol: int(item.count) for item in comp.values()}
