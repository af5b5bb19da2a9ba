"""The enthalpy of neutralization at infinite dilution of an acid and a base, by Hess's law (NBS 1982)."""

from __future__ import annotations

from collections.abc import Iterable

from calc.errors import InputError
from calc.refdata.hess import citation, hess
from calc.refdata.reference_value import ReferenceValue, same_formula
from calc.refdata.solutes import STRONG_ACIDS, strip_state

__all__ = ["STRONG_BASES", "WEAK_ACIDS", "WEAK_BASES", "neutralization_reference"]

STRONG_BASES = {"NaOH", "KOH", "LiOH", "Ca(OH)2", "Ba(OH)2", "Sr(OH)2"}
WEAK_ACIDS = {"CH3COOH": "CH3COO"}
WEAK_BASES = {"NH3": "NH4"}
_BASE_ALIASES = {"NH4OH": "NH3"}


def _acid_species(acid: str) -> tuple[str, str] | None:
    """Return (species consumed, conjugate species formed) for an acid, or None."""
    return _species(strip_state(acid)[0], STRONG_ACIDS, "H+(aq)", WEAK_ACIDS, "-")


def _base_species(base_formula: str) -> tuple[str, str] | None:
    """Return (species consumed, conjugate species formed) for a base, or None."""
    base = strip_state(base_formula)[0]
    return _species(_BASE_ALIASES.get(base, base), STRONG_BASES, "OH-(aq)", WEAK_BASES, "+")


def _species(
    name: str, strong: Iterable[str], strong_ion: str, weak: dict[str, str], charge: str
) -> tuple[str, str] | None:
    """Match ``name`` against the strong ones (consuming ``strong_ion``), then the weak ones (formula → conjugate)."""
    if any(same_formula(name, formula) for formula in strong):
        return strong_ion, ""
    for formula, conj in weak.items():
        if same_formula(name, formula):
            return f"{formula}(aq)", f"{conj}{charge}(aq)"
    return None


def neutralization_reference(acid: str, base: str) -> ReferenceValue | None:
    """Return the enthalpy of neutralization at infinite dilution for an acid and a base.

    Strong acid + strong base gives H+(aq) + OH-(aq) -> H2O(l) per mole of water
    formed, ΔrH° from the NBS 1982 table and ΔrCp from Singh et al. (1976). Acetic acid
    and ammonia use their undissociated aqueous species. Returns None for an acid or
    base cupcal does not know.
    """
    try:
        a = _acid_species(acid)
        b = _base_species(base)
    except InputError:
        return None
    if a is None or b is None:
        return None
    (a_in, a_out), (b_in, b_out) = a, b
    products = [p for p in (a_out, b_out) if p]
    if b_in == "OH-(aq)":
        products.append("H2O(l)")
    equation = f"{a_in} + {b_in} -> " + " + ".join(products)
    r = hess(equation)
    per = "per mole of water formed" if "H2O(l)" in products else "per mole of H+ transferred"
    dcp, dcp_u, dcp_note = r.delta_cp, r.delta_cp_u, "ΔrCp from the NBS 1982 Cp° values"
    source = citation("NBS1982")
    if products == ["H2O(l)"]:
        dcp, dcp_u = 0.2152, 0.0045
        dcp_note = "ΔrCp = +215.2 ± 4.5 J/(mol K) (Singh et al. 1976, ionization of water reversed)"
        source += "; ΔrCp: " + citation("SINGH1976")
    notes = [r.equation, dcp_note] + r.notes
    if same_formula(strip_state(acid)[0], "H2SO4"):
        notes.append(
            "H2SO4: at finite concentration much of the acid is HSO4-(aq); its ionization "
            "(ΔrH° = -21.93 kJ/mol by the NBS 1982 table) makes measured values differ"
        )
    return ReferenceValue.from_hess(
        r,
        f"neutralization {strip_state(acid)[0]} + {strip_state(base)[0]}, infinite dilution",
        f"enthalpy of neutralization at infinite dilution, {per}",
        source=source,
        note="; ".join(notes),
        delta_cp=(dcp, dcp_u),
    )
