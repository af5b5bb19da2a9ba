"""The reference library: enthalpies of solution, certified values, neutralization, φ_L.

Data files (``calc/refdata/data``): ``solution_enthalpies.csv`` (tabulated ΔsolH° at infinite
dilution), ``certified.toml`` (SRM 1655 KCl, SRM 724a THAM), ``pitzer_enthalpy.csv``
(Pitzer enthalpy parameters for φ_L), ``sources.toml`` (citations). Standard enthalpies
of formation are in :mod:`calc.refdata.species` (Hess's law in :mod:`calc.refdata.hess`), the aqueous
products of a solute in :mod:`calc.refdata.solutes`, φ_L in :mod:`calc.refdata.dilution`, the neutralization
references in :mod:`calc.refdata.neutralization` and :class:`ReferenceValue` in :mod:`calc.refdata.reference_value`;
the names this module has always exported (``phi_L``, ``dissolution_products``, ``neutralization_reference``
...) stay importable from here.

All enthalpies are in kJ/mol, heat-capacity changes in kJ/(mol K).
"""

from __future__ import annotations

import csv
import tomllib
from functools import lru_cache
from importlib import resources

from calc.errors import InputError
from calc.kinds import REGISTRY
from calc.refdata.datafiles import open_data
from calc.refdata.formula import element_composition, molar_mass
from calc.refdata.hess import citation, hess
from calc.refdata.neutralization import neutralization_reference
from calc.refdata.reference_value import ReferenceValue, same_formula
from calc.refdata.solutes import dissolution_products, solute_formation_entry, strip_state

__all__ = [
    "solution_enthalpy",
    "solution_enthalpy_by_hess",
    "certified_references",
    "find_reference",
    "reference_names",
    "tabulated_solution_enthalpies",
]

T_REF_K = 298.15
QUANTITY_INF = "enthalpy of solution at infinite dilution"


# ---------------------------------------------------------------- solution enthalpies


def _equation_for(formula: str) -> str | None:
    solid = solute_formation_entry(formula)
    products = dissolution_products(formula)
    if solid is None or products is None:
        return None
    rhs = " + ".join(f"{'' if n == 1 else f'{n} '}{e.display}" for n, e in products)
    return f"{solid.display} -> {rhs}"


def solution_enthalpy_by_hess(formula: str) -> ReferenceValue | None:
    """Return ΔsolH° at infinite dilution computed from the NBS 1982 ΔfH° table, or None."""
    equation = _equation_for(formula)
    if equation is None:
        return None
    r = hess(equation)
    solute = strip_state(formula)[0]
    return ReferenceValue.from_hess(
        r,
        f"{solute} dissolution, infinite dilution (NBS 1982, Hess)",
        QUANTITY_INF,
        source=citation("NBS1982_HESS"),
        note=f"{r.equation}; " + "; ".join(r.notes),
        formula=solute,
    )


@lru_cache(maxsize=1)
def _solution_rows() -> tuple[dict[str, str], ...]:
    with open_data("solution_enthalpies.csv") as fh:
        return tuple(csv.DictReader(fh))


def _tabulated(row: dict[str, str]) -> ReferenceValue:
    formula = row["formula"]
    by_hess = None
    try:
        by_hess = solution_enthalpy_by_hess(f"{formula}({row['state']})")
    except InputError:
        by_hess = None
    dcp = by_hess.delta_cp if by_hess else None
    dcp_u = by_hess.delta_cp_u if by_hess else None
    note = f"{row['note']}; u: {row['u_basis']}"
    if dcp is not None:
        note += "; ΔsolCp° from the NBS 1982 Cp° values (Cp° uncertainties are cupcal's estimates)"
    return ReferenceValue(
        name=f"{formula} dissolution, infinite dilution",
        quantity=QUANTITY_INF,
        value=float(row["dsolH_kJ_mol"]),
        u=float(row["u_kJ_mol"]),
        unit="kJ/mol",
        temperature_K=T_REF_K,
        molality=None,
        source=citation(row["source"]),
        delta_cp=dcp,
        delta_cp_u=dcp_u,
        formula=formula,
        conditions="dilute solution, molality not recorded" if row["source"] == "IJP2005" else None,
        note=note,
    )


def tabulated_solution_enthalpies() -> list[ReferenceValue]:
    """Return every tabulated ΔsolH° entry (``solution_enthalpies.csv``)."""
    return [_tabulated(row) for row in _solution_rows()]


def solution_enthalpy(formula: str) -> ReferenceValue | None:
    """Return the enthalpy of solution at infinite dilution of a solute, or None.

    The tabulated value (``solution_enthalpies.csv``) when there is one, else the value
    computed by Hess's law from the NBS 1982 ΔfH° of the solid and the aqueous ions.

    Parameters
    ----------
    formula:
        E.g. ``"KCl"``, ``"CuSO4.5H2O"``, ``"HCl(g)"``.
    """
    base, state = strip_state(formula)
    try:
        comp = element_composition(base)
    except InputError:
        return None
    for row in _solution_rows():
        if element_composition(row["formula"]) == comp and (state is None or state == row["state"]):
            return _tabulated(row)
    try:
        return solution_enthalpy_by_hess(formula)
    except InputError:
        return None


# ------------------------------------------------------------------ certified values


@lru_cache(maxsize=1)
def _certified() -> tuple[tuple[ReferenceValue, str, tuple[str, ...]], ...]:
    text = (resources.files("calc.refdata") / "data" / "certified.toml").read_text(encoding="utf-8")
    out = []
    for item in tomllib.loads(text)["reference"]:
        if "value_J_g" in item:
            M = molar_mass(item["formula"]) / 1000.0  # kg/mol -> kJ/mol per J/g
            value, u = item["value_J_g"] * M, item["u_J_g"] * M
            dcp, dcp_u = item["delta_cp_J_g_K"] * M, item["delta_cp_u_J_g_K"] * M
            note = (
                f"{item['value_J_g']} J/g converted with M = {M * 1000:.3f} g/mol; "
                f"u: {item['u_basis']}; ΔCp: {item['delta_cp_basis']}"
            )
        else:
            value, u = item["value_kJ_mol"], item["u_kJ_mol"]
            dcp, dcp_u = item["delta_cp_kJ_mol_K"], item["delta_cp_u_kJ_mol_K"]
            note = f"u: {item['u_basis']}; ΔCp: {item['delta_cp_basis']}"
        ref = ReferenceValue(
            name=item["name"],
            quantity=item["quantity"],
            value=value,
            u=u,
            unit="kJ/mol",
            temperature_K=item["temperature_K"],
            molality=item.get("molality"),
            source=citation(item["source"]),
            delta_cp=dcp,
            delta_cp_u=dcp_u,
            formula=item["formula"],
            conditions=item.get("conditions"),
            note=note,
        )
        out.append((ref, item["kind"], tuple(item.get("aliases", []))))
    return tuple(out)


def certified_references() -> list[ReferenceValue]:
    """Return the certified reference values (SRM 1655 KCl, SRM 724a THAM)."""
    return [ref for ref, _, _ in _certified()]


# ---------------------------------------------------------------------- find by name


def reference_names() -> list[str]:
    """Return the names that ``[reference] name`` in a run file may use."""
    names = [ref.name for ref, _, _ in _certified()]
    names += [ref.name for ref in tabulated_solution_enthalpies()]
    return names


def _by_name(name: str) -> ReferenceValue:
    wanted = " ".join(name.lower().split())
    for ref, _, aliases in _certified():
        if wanted in {ref.name.lower(), *(a.lower() for a in aliases)}:
            return ref
    for ref in tabulated_solution_enthalpies():
        if wanted == ref.name.lower():
            return ref
    words = name.replace(",", " ").split()
    if len(words) == 2 and words[1].lower() in {"dissolution", "solution"}:
        found = solution_enthalpy(words[0])
        if found is not None:
            return found
    raise InputError(
        f"unknown reference {name!r}; known names: " + "; ".join(reference_names()) + "; or '<formula> dissolution'",
        field="reference.name",
    )


def find_reference(
    kind: str,
    *,
    formula: str | None = None,
    acid: str | None = None,
    base: str | None = None,
    name: str | None = None,
    equation: str | None = None,
) -> ReferenceValue | None:
    """Return the reference value for a run, or None when the library has none.

    Parameters
    ----------
    kind:
        Run kind (:mod:`calc.kinds`): its ``reference`` hook looks the value up
        (``"dissolution"``, ``"neutralization"``, ``"reaction"``); a kind without one
        (the calibrations) or an unknown kind gives None.
    formula, acid, base, equation:
        What the run dissolved, neutralized or reacted.
    name:
        A reference named in the run file (``[reference] name``); wins over the rest.

    Raises
    ------
    InputError
        If ``name`` is given but unknown (``field='reference.name'``), listing the names.
    """
    if name:
        return _by_name(name)
    entry = REGISTRY.get(kind)
    lookup = entry.hook("reference") if entry is not None else None
    return lookup(formula=formula, acid=acid, base=base, equation=equation) if lookup is not None else None


# ------------------------------------------------------------------ the kinds' ``reference`` hooks


def dissolution_lookup(*, formula: str | None, **_: str | None) -> ReferenceValue | None:
    """The tabulated enthalpy of solution of ``formula``."""
    return solution_enthalpy(formula) if formula else None


def neutralization_lookup(*, acid: str | None, base: str | None, **_: str | None) -> ReferenceValue | None:
    """The enthalpy of neutralization of ``acid`` by ``base``."""
    return neutralization_reference(acid, base) if acid and base else None


def reaction_lookup(*, formula: str | None, equation: str | None, **_: str | None) -> ReferenceValue | None:
    """A certified reaction of ``formula`` (THAM), else the Hess's-law value of ``equation``."""
    if formula:
        for ref, k, _k in _certified():
            if k == "reaction" and ref.formula and _safe_same(formula, ref.formula):
                return ref
    if equation:
        r = hess(equation)
        quantity = "standard reaction enthalpy (Hess's law)"
        return ReferenceValue.from_hess(r, f"reaction {r.equation}", quantity, source=r.source, note="; ".join(r.notes))
    return None


def _safe_same(a: str, b: str) -> bool:
    if a.strip().upper() in {"THAM", "TRIS"}:
        a = "C4H11NO3"
    try:
        return same_formula(strip_state(a)[0], b)
    except InputError:
        return False
