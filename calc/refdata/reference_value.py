"""A reference value (the published number a result is compared with), and formulas told apart by composition."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from calc.refdata.formula import element_composition

if TYPE_CHECKING:
    from calc.refdata.hess import HessResult

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

    @classmethod
    def from_hess(
        cls,
        r: HessResult,
        name: str,
        quantity: str,
        *,
        source: str,
        note: str,
        formula: str | None = None,
        delta_cp: tuple[float | None, float | None] | None = None,
    ) -> ReferenceValue:
        """Return the value of a Hess's-law result ``r``: at its temperature and infinite dilution, with its ΔrCp
        (``delta_cp`` = (ΔrCp, u) replaces that when a better source has it)."""
        dcp, dcp_u = delta_cp if delta_cp is not None else (r.delta_cp, r.delta_cp_u)
        return cls(name, quantity, r.value, r.u, r.unit, r.temperature_K, None, source, dcp, dcp_u, formula, note=note)


def same_formula(a: str, b: str) -> bool:
    """True when formulas ``a`` and ``b`` hold the same elements in the same numbers (however written)."""
    return element_composition(a) == element_composition(b)
