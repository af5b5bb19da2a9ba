"""Chemical formulas: the one place that reads them.

Normalising (hydrate dots), molar mass, element composition and the split of a hydrate into the
anhydrous salt and its water of crystallisation all live here, and every error names the field the
formula came from. The arithmetic is done by the maintained ``molmass`` package (IUPAC standard
atomic weights); this module adds caching, the hydrate dots people write and cupcal's error type.
The uncertainty of a molar mass from the standard atomic weights (parts in 10^5 or less for the
elements of this trade) is negligible beside weighing and is not propagated.
"""

from __future__ import annotations

import math
from functools import lru_cache

import molmass

from calc import limits
from calc.errors import InputError

__all__ = ["HYDRATE_DOTS", "normalize", "molar_mass", "element_counts", "element_composition", "split_hydrate"]

#: The marks people write between a salt and its water of crystallisation: full stop, middle dot,
#: bullet, bullet operator, dot operator and asterisk. molmass reads the full stop.
HYDRATE_DOTS = (".", "·", "•", "∙", "⋅", "*")

_EXAMPLES = "expected something like 'KCl', 'NH4NO3' or 'CuSO4.5H2O'"


def normalize(formula: str) -> str:
    """Return ``formula`` stripped, with every hydrate dot written as ``.`` (molmass's form)."""
    text = formula.strip()
    for dot in HYDRATE_DOTS[1:]:
        text = text.replace(dot, ".")
    return text


@lru_cache(maxsize=4096)
def _parse(formula: str) -> molmass.Formula:
    return molmass.Formula(normalize(formula))


def _formula(formula: object, field: str | None, source: str | None) -> molmass.Formula:
    if not isinstance(formula, str) or not formula.strip():
        raise InputError("expected a chemical formula such as 'KCl'", field=field, source=source)
    try:
        parsed = _parse(formula)
        parsed.composition()  # molmass parses lazily; reading the composition checks the formula
    except Exception as exc:  # molmass raises several types for bad formulas
        raise InputError(
            f"cannot read the chemical formula '{formula}' ({exc.__class__.__name__}); {_EXAMPLES}",
            field=field,
            source=source,
        ) from None
    return parsed


def molar_mass(formula: str, *, field: str | None = None, source: str | None = None) -> float:
    """Return the molar mass of ``formula`` in g/mol.

    Parameters
    ----------
    formula:
        A chemical formula such as ``"KCl"``, ``"CuSO4.5H2O"`` (or ``·``, ``•``, ``*``) or
        ``"(HOCH2)3CNH2"``.
    field, source:
        Where the formula came from, for the error message.

    Raises
    ------
    InputError
        When the formula cannot be read.
    """
    if isinstance(formula, str):
        limits.require_size(
            len(formula), "formula_chars", what=f"the formula of {len(formula)} characters", field=field, source=source
        )
    parsed = _formula(formula, field, source)
    mass = float(parsed.mass)
    if not math.isfinite(mass) or mass <= 0:
        raise InputError(f"the formula '{formula}' has no mass", field=field, source=source)
    counts = {item.symbol: int(item.count) for item in parsed.composition().values()}
    _check_size(formula, counts, mass, field, source)
    return mass


def _check_size(formula: str, counts: dict[str, int], mass: float, field: str | None, source: str | None) -> None:
    """Refuse a formula beyond the limits formula_count, formula_atoms and molar_mass (calc.limits)."""
    shown = limits.shorten(formula)
    for symbol, count in counts.items():
        _within(shown, count, "formula_count", f"{_many(count)} atoms of {symbol}", "", field, source)
    total = sum(counts.values())
    _within(shown, total, "formula_atoms", f"{_many(total)} atoms", "", field, source)
    _within(shown, mass, "molar_mass", f"a molar mass of {mass:.4g} g/mol", " g/mol", field, source)


def _within(shown: str, value: float, limit: str, has: str, unit: str, field: str | None, source: str | None) -> None:
    """Refuse ``value`` above the limit named ``limit``: "the formula … has <has>; at most <limit><unit>"."""
    if value > limits.get(limit):
        raise InputError(
            f"the formula '{shown}' has {has}; at most {limits.get(limit):g}{unit} (limit {limit})",
            field=field,
            source=source,
        )


def _many(n: int) -> str:
    return str(n) if n < 10**30 else "more than 10^30"


def element_counts(formula: str, *, field: str | None = None) -> dict[str, int]:
    """Return the number of atoms of each element in ``formula`` (water of crystallisation included)."""
    comp = _formula(formula, field, None).composition()
    return {item.symbol: int(item.count) for item in comp.values()}


@lru_cache(maxsize=4096)
def element_composition(formula: str) -> tuple[tuple[str, int], ...]:
    """Return the element composition of a neutral formula as a sorted tuple (a comparable key).

    Raises InputError if the formula cannot be read.
    """
    return tuple(sorted(element_counts(formula).items()))


def split_hydrate(formula: str, *, field: str | None = None) -> tuple[str, int]:
    """Split ``"CuSO4.5H2O"`` (any hydrate dot) into ``("CuSO4", 5)``.

    A formula without water of crystallisation returns ``(formula, 0)``.
    """
    parts = normalize(formula).split(".")
    n_water = 0
    for part in parts[1:]:
        digits = part[: len(part) - len(part.lstrip("0123456789"))]
        if part[len(digits) :] != "H2O":
            raise InputError(
                f"cannot read '{formula}': only water of crystallisation (e.g. '.5H2O') may follow the dot", field=field
            )
        n_water += int(digits) if digits else 1
    return parts[0], n_water
