"""Find what a solute is before it dissolves and what it gives at infinite dilution.

A solute formula may carry its state (``KCl(s)``, ``HCl(g)``), which :func:`strip_state` splits
off. :func:`solute_formation_entry` finds the solute's entry (solid, else liquid, else gas) and
:func:`dissolution_products` the aqueous species that one formula unit gives, both in the NBS 1982
table of :mod:`calc.refdata.species`.
"""

from __future__ import annotations

from math import gcd

from calc.refdata.formula import element_composition, normalize, split_hydrate
from calc.refdata.species import FormationEntry, formation_index, formation_table

__all__ = [
    "STRONG_ACIDS",
    "strip_state",
    "dissolution_products",
    "solute_formation_entry",
]

STRONG_ACIDS = {"HCl": "Cl", "HBr": "Br", "HI": "I", "HNO3": "NO3", "H2SO4": "SO4", "HClO4": "ClO4"}


def strip_state(formula: str) -> tuple[str, str | None]:
    """Return (formula, state) with a trailing ``(s)``, ``(cr)``, ``(l)``, ``(g)`` or ``(aq)`` split off.

    ``cr`` is read as ``s``; the state is None when the text has none.
    """
    text = formula.strip()
    if text.endswith(")") and "(" in text:
        head, _, tail = text.rpartition("(")
        state = tail[:-1].lower()
        if state in {"s", "cr", "l", "g", "aq"} and head:
            return head, {"cr": "s"}.get(state, state)
    return text, None


def _ions() -> list[FormationEntry]:
    return [e for e in formation_table() if e.species.state == "aq" and e.species.charge != 0]


def dissolution_products(formula: str) -> list[tuple[int, FormationEntry]] | None:
    """Return the aqueous products at infinite dilution of one formula unit, or None.

    A formula whose undissociated aqueous species is in the table (NH3, CO2, CH3COOH)
    gives that species; a salt, strong acid or strong base gives its ions (fully
    dissociated); water of crystallisation gives H2O(l).
    """
    base, n_water = split_hydrate(strip_state(formula)[0])
    comp = dict(element_composition(base))
    index = formation_index()
    products: list[tuple[int, FormationEntry]] = []
    neutral = index.get((element_composition(base), 0, "aq"))
    if neutral is not None:
        products.append((1, neutral))
    else:
        best: list[tuple[int, FormationEntry]] | None = None
        ions = _ions()
        for cat in (i for i in ions if i.species.charge > 0):
            for an in (i for i in ions if i.species.charge < 0):
                if cat.species.formula == "H" and an.species.formula not in STRONG_ACIDS.values():
                    continue  # weak acids are not fully dissociated at infinite dilution
                zc, za = cat.species.charge, -an.species.charge
                g = gcd(zc, za)
                nc, na = za // g, zc // g
                total: dict[str, int] = {}
                for n, ion in ((nc, cat), (na, an)):
                    for el, k in ion.species.elements().items():
                        total[el] = total.get(el, 0) + n * k
                if total == comp and (best is None or nc + na > sum(n for n, _ in best)):
                    best = [(nc, cat), (na, an)]
        if best is None:
            return None
        products.extend(best)
    if n_water:
        products.append((n_water, index[(element_composition("H2O"), 0, "l")]))
    return products


def solute_formation_entry(formula: str) -> FormationEntry | None:
    """Return the ΔfH° entry of a solute before dissolving (solid, else liquid, else gas)."""
    base, state = strip_state(formula)
    text = normalize(base)
    index = formation_index()
    for st in [state] if state else ["s", "l", "g"]:
        entry = index.get((element_composition(text), 0, st))
        if entry is not None:
            return entry
    return None
