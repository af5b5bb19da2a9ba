"""Usual cautions for the substances of a run: GHS hazard statements and pictograms.

Data: ``calc/refdata/data/hazards.toml`` (classification per substance, typed from memory from
EU CLP harmonised classifications and typical supplier safety data sheets) and
``calc/refdata/data/ghs.toml`` (statement texts and pictogram names). These are the usual
cautions, not a risk assessment: the lab's own rules, local codes and the supplier's
safety data sheet of the product actually used always win.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from typing import Any

from calc.errors import InputError

__all__ = ["Caution", "cautions_for", "general_caution", "EXOTHERMIC_NOTE_KJ_MOL"]

# Dissolution at least this exothermic (kJ/mol, infinite dilution) gets a heating note.
EXOTHERMIC_NOTE_KJ_MOL = -40.0

_GENERAL = (
    "Wear eye protection. Follow your lab's safety rules, local codes and the supplier's "
    "safety data sheet for every substance; the cautions shown here are the usual ones, "
    "not a risk assessment."
)


@dataclass(frozen=True)
class Caution:
    """The usual cautions for one substance (or the general line, substance 'general')."""

    substance: str
    signal_word: str
    hazard_statements: list[str]
    pictograms: list[str]
    note: str


def general_caution() -> str:
    """Return the general caution shown with every result."""
    return _GENERAL


@lru_cache(maxsize=1)
def _data() -> tuple[dict[str, Any], dict[str, Any]]:
    base = resources.files("calc.refdata") / "data"
    hazards = tomllib.loads((base / "hazards.toml").read_text(encoding="utf-8"))["substance"]
    ghs = tomllib.loads((base / "ghs.toml").read_text(encoding="utf-8"))
    return hazards, ghs


def _key(formula: str) -> tuple[tuple[str, int], ...] | None:
    from calc.refdata.formula import element_composition

    text = formula.strip()
    if text.endswith(")") and "(" in text:
        head, _, tail = text.rpartition("(")
        if tail[:-1].lower() in {"s", "cr", "l", "g", "aq"} and head:
            text = head
    try:
        return element_composition(text)
    except InputError:
        return None


_STATE_RE = re.compile(r"\((?:s|cr|l|g|aq)\)\s*$", re.IGNORECASE)


def _plain(name: str) -> str:
    """Return a lookup key: upper case, spaces dropped ("HCl (g)" and "HCl(g)" are one)."""
    return "".join(name.split()).upper()


@lru_cache(maxsize=1)
def _name_index() -> dict[str, str]:
    """Return every name and alias (as :func:`_plain` writes it) → data key."""
    hazards, _ = _data()
    return {_plain(name): key for key, entry in hazards.items() for name in [key, *entry.get("aliases", [])]}


@lru_cache(maxsize=1)
def _composition_index() -> dict[tuple[tuple[str, int], ...], str]:
    """Return the element composition of every formula-like name → data key (built only when a name misses)."""
    hazards, _ = _data()
    index: dict[tuple[tuple[str, int], ...], str] = {}
    for key, entry in hazards.items():
        for name in [key, *entry.get("aliases", [])]:
            if _STATE_RE.search(name) or " " in name.strip():
                continue  # "HCl(g)" is its own entry; the formula HCl stays hydrochloric acid
            comp = _key(name)
            if comp is not None:
                index[comp] = key
    return index


def _lookup(formula: str) -> tuple[str | None, str]:
    """Return (data key, remark) for a formula, or (None, '')."""
    from calc.refdata.formula import split_hydrate

    text = formula.strip()
    names = _name_index()
    if _plain(text) in names:
        return names[_plain(text)], ""
    index = _composition_index()
    comp = _key(text)
    if comp is not None and comp in index:
        return index[comp], ""
    try:
        base, n_water = split_hydrate(text)
    except InputError:
        return None, ""
    if n_water:
        comp = _key(base)
        if comp is not None and comp in index:
            return index[comp], f"classification of {index[comp]} (other hydrate)"
    return None, ""


def _exothermic_note(formula: str) -> str:
    try:
        from calc.refdata.reference import solution_enthalpy
        from calc.refdata.solutes import solute_formation_entry

        solid = solute_formation_entry(formula)
        if solid is None or solid.species.state != "s":
            return ""  # only solids dissolved by the user get the heating note
        ref = solution_enthalpy(formula)
    except InputError:
        return ""
    if ref is None or ref.value > EXOTHERMIC_NOTE_KJ_MOL:
        return ""
    return (
        f"dissolving it releases about {-ref.value:.0f} kJ/mol (ΔsolH° = {ref.value:.1f} "
        "kJ/mol): the solution can get hot; add it in portions with stirring"
    )


def cautions_for(formulas: list[str]) -> list[Caution]:
    """Return the usual cautions for each substance, ending with the general caution.

    Parameters
    ----------
    formulas:
        Formulas (or names such as ``"THAM"``) of the substances a run uses or forms.

    Returns
    -------
    list of Caution
        One per distinct substance, in order: GHS signal word, hazard statements as
        ``"H314: Causes severe skin burns and eye damage"``, pictograms as
        ``"GHS05 (corrosion)"`` and a note. A substance without data says so. The last
        item is always the general caution (substance ``"general"``).
    """
    hazards, ghs = _data()
    texts = ghs["hazard_statements"]
    names = ghs["pictograms"]
    out: list[Caution] = []
    seen: set[str] = set()
    for formula in formulas:
        key, remark = _lookup(formula)
        ident = key or formula.strip()
        if ident in seen:
            continue
        seen.add(ident)
        if key is None:
            out.append(
                Caution(
                    substance=formula.strip(),
                    signal_word="",
                    hazard_statements=[],
                    pictograms=[],
                    note=(
                        f"cupcal has no hazard data for {formula.strip()}: read the "
                        "supplier's safety data sheet before use"
                    ),
                )
            )
            continue
        entry = hazards[key]
        notes = [n for n in (remark, entry.get("note", ""), _exothermic_note(formula)) if n]
        if entry.get("not_classified"):
            notes.insert(0, "usually not classified as hazardous under GHS")
        out.append(
            Caution(
                substance=f"{formula.strip()} ({entry['name']})",
                signal_word=entry.get("signal_word", ""),
                hazard_statements=[f"{h}: {texts[h]}" for h in entry.get("hazard_statements", [])],
                pictograms=[f"{p} ({names[p]})" for p in entry.get("pictograms", [])],
                note="; ".join(notes),
            )
        )
    out.append(Caution("general", "", [], [], general_caution()))
    return out
