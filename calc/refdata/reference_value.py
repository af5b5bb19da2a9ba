"""A reference value (the published number a result is compared with), and formulas told apart by composition."""

from __future__ import annotations

from dataclasses import dataclass

from calc.refdata.formula import element_composition

__all__ = ["ReferenceValue", "same_formula"]


@dataclass(frozen=True)
class ReferenceValue:
    """A reference value with its conditions and source.

    ``molality`` None means infinite dilution, unless ``conditions`` says otherwise.
    """

    name: str
    quantity: str
    value: float
    u: float
    unit: str
    temperature_K: float
    molality: float | None
    source: str
    delta_cp: float | None = None
    delta_cp_u: float | None = None
    formula: str | None = None
    conditions: str | None = None
    note: str = ""


def same_formula(a: str, b: str) -> bool:
    """True when formulas ``a`` and ``b`` hold the same elements in the same numbers (however written)."""
    return element_composition(a) == element_composition(b)
