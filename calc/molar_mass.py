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

from calc import limits
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
    limits.require_size(len(formula), "formula_chars", what=f"the formula of {len(formula)} characters",
                        field=field, source=source)
    try:
        f = _parse(formula)
        mass = float(f.mass)
        counts = {item.symbol: int(item.count) for item in f.composition().values()}
    except Exception as exc:  # molmass raises several types for bad formulas
        raise InputError(
            f"cannot read the chemical formula '{formula}' ({exc.__class__.__name__}); "
            "expected something like 'KCl', 'NH4NO3' or 'CuSO4.5H2O'",
            field=field,
            source=source,
        ) from None
    if not math.isfinite(mass) or mass <= 0:
        raise InputError(f"the formula '{formula}' has no mass", field=field, source=source)
    _check_size(formula, counts, mass, field, source)
    return mass


def _check_size(formula: str, counts: dict[str, int], mass: float, field: str | None, source: str | None) -> None:
    """Refuse a formula beyond the limits formula_count, formula_atoms and molar_mass (calc.limits)."""
    shown = limits.shorten(formula)
    for symbol, count in counts.items():
        if count > limits.get("formula_count"):
            raise InputError(f"the formula '{shown}' has {_many(count)} atoms of {symbol}; at most "
                             f"{limits.get('formula_count'):g} (limit formula_count)", field=field, source=source)
    total = sum(counts.values())
    if total > limits.get("formula_atoms"):
        raise InputError(f"the formula '{shown}' has {_many(total)} atoms; at most "
                         f"{limits.get('formula_atoms'):g} (limit formula_atoms)", field=field, source=source)
    if mass > limits.get("molar_mass"):
        raise InputError(f"the formula '{shown}' has a molar mass of {mass:.4g} g/mol; at most "
                         f"{limits.get('molar_mass'):g} g/mol (limit molar_mass)", field=field, source=source)


def _many(n: int) -> str:
    return str(n) if n < 10**30 else "more than 10^30"


def element_counts(formula: str) -> dict[str, int]:
    """Return the number of atoms of each element in ``formula``."""
    comp = _parse(formula).composition()
    return {item.symbol: int(item.count) for item in comp.values()}
