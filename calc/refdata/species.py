"""Read chemical species and look them up in the table of standard enthalpies of formation.

The table of standard enthalpies of formation (298.15 K, 0.1 MPa) is
``calc/refdata/data/formation_nbs1982.csv``: one compilation only, the NBS 1982 tables
(Wagman et al., J. Phys. Chem. Ref. Data 11, Suppl. 2). Each entry's standard
uncertainty follows the rule stated in ``calc/refdata/data/sources.toml`` (40 units of the last
digit given), because the tables give none per entry.

Species are written ``formula[charge](state)``: ``NaCl(s)``, ``H2O(l)``, ``CO2(g)``,
``Ca2+(aq)``, ``Cl-(aq)``, ``SO4^2-(aq)`` (``SO42-(aq)`` is read too when only one
reading is in the table), ``CuSO4.5H2O(s)`` (or ``·``/``*``). States: ``s`` (also
``cr`` and names such as ``graphite``), ``l``, ``g``, ``aq``.
"""

from __future__ import annotations

import csv
import re
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from calc.errors import InputError
from calc.refdata.datafiles import open_data
from calc.refdata.formula import element_composition, normalize

__all__ = [
    "T_REF_K",
    "FormationEntry",
    "Species",
    "citation",
    "formation_enthalpy",
    "formation_index",
    "formation_table",
    "parse_species",
    "unknown_species_hint",
]

T_REF_K = 298.15

_STATE_ALIASES = {
    "s": "s",
    "cr": "s",
    "c": "s",
    "graphite": "s",
    "rhombic": "s",
    "white": "s",
    "calcite": "s",
    "anhydrite": "s",
    "hematite": "s",
    "magnetite": "s",
    "corundum": "s",
    "l": "l",
    "liq": "l",
    "g": "g",
    "aq": "aq",
    "ai": "aq",
    "ao": "aq",
}
_STATE_WORDS = {"s": "solid", "l": "liquid", "g": "gas", "aq": "aqueous"}


#: the lookup key of a species: (element composition, charge, state)
SpeciesKey = tuple[tuple[tuple[str, int], ...], int, str]


@dataclass(frozen=True)
class Species:
    """A chemical species: neutral formula, charge and physical state (s, l, g, aq)."""

    formula: str
    charge: int
    state: str

    def display(self) -> str:
        """Return the species as cupcal writes it, e.g. ``SO4^2-(aq)``, ``CuSO4·5H2O(s)``."""
        text = self.formula.replace(".", "·")
        if self.charge:
            mag = abs(self.charge)
            sign = "+" if self.charge > 0 else "-"
            if mag == 1:
                text += sign
            else:
                text += ("^" if text[-1].isdigit() else "") + f"{mag}{sign}"
        return f"{text}({self.state})"

    def key(self) -> SpeciesKey:
        """Return the lookup key (element composition, charge, state)."""
        return (element_composition(self.formula), self.charge, self.state)

    def elements(self) -> dict[str, int]:
        """Return the element counts."""
        return dict(element_composition(self.formula))


@dataclass(frozen=True)
class FormationEntry:
    """One row of the formation-enthalpy table (kJ/mol; Cp in J/(mol K))."""

    species: Species
    name: str
    value: float
    u: float
    cp: float | None
    source: str
    note: str
    cas: str = ""

    @property
    def display(self) -> str:
        """Return the species text, e.g. ``Cl-(aq)``."""
        return self.species.display()

    @property
    def citation(self) -> str:
        """Return the full citation of the entry's source."""
        return citation(self.source)


@lru_cache(maxsize=1)
def _sources() -> dict[str, dict[str, str]]:
    text = (resources.files("calc.refdata") / "data" / "sources.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


def citation(source_id: str) -> str:
    """Return the full citation for a source id of ``calc/refdata/data/sources.toml``."""
    try:
        return _sources()[source_id]["citation"]
    except KeyError:
        raise InputError(f"unknown source id {source_id!r} in cupcal's data files") from None


def _u_from_digits(text: str) -> float:
    """Return 40 units of the last digit of a decimal string (the NBS 1982 rule)."""
    text = text.strip()
    if "." in text:
        decimals = len(text.split(".")[1])
    else:
        decimals = 0
    return 40.0 * 10.0 ** (-decimals)


@lru_cache(maxsize=1)
def _table() -> tuple[dict[SpeciesKey, FormationEntry], tuple[FormationEntry, ...]]:
    index: dict[SpeciesKey, FormationEntry] = {}
    rows: list[FormationEntry] = []
    with open_data("formation_nbs1982.csv") as fh:
        for line_no, row in enumerate(csv.DictReader(fh), start=2):
            species = Species(row["formula"], int(row["charge"]), row["state"])
            raw = row["dfH_kJ_mol"]
            value = float(raw)
            if row["u_kJ_mol"].strip():
                u = float(row["u_kJ_mol"])
            elif value == 0.0:
                u = 0.0  # elements in their standard states and H+(aq): exact
            else:
                u = _u_from_digits(raw)
            cp = float(row["cp_J_mol_K"]) if row["cp_J_mol_K"].strip() else None
            entry = FormationEntry(species, row["name"], value, u, cp, row["source"], row["note"], row["cas"])
            key = species.key()
            if key in index:
                raise InputError(
                    f"duplicate species {species.display()}",
                    source="calc/refdata/data/formation_nbs1982.csv",
                    line=line_no,
                )
            index[key] = entry
            rows.append(entry)
    return index, tuple(rows)


def formation_table() -> tuple[FormationEntry, ...]:
    """Return every entry of the formation-enthalpy table, in file order."""
    return _table()[1]


def formation_index() -> dict[SpeciesKey, FormationEntry]:
    """Return the table keyed by ``Species.key()`` (composition, charge, state)."""
    return _table()[0]


_SPECIES_RE = re.compile(r"^(?P<body>.+?)\s*\((?P<state>[A-Za-z]+)\)$")
_FORMULA_RE = re.compile(r"^[A-Z(\[][A-Za-z0-9().\[\]]*$")


def _candidates(text: str) -> list[Species]:
    """Return the readings of a species text, most likely first."""
    raw = text.strip()
    m = _SPECIES_RE.match(raw)
    if not m:
        raise InputError(
            f"cannot read species {raw!r}: give the formula and its state in parentheses, "
            "e.g. 'NaCl(s)', 'H2O(l)', 'CO2(g)', 'Cl-(aq)'"
        )
    state = _STATE_ALIASES.get(m.group("state").lower())
    if state is None:
        raise InputError(f"unknown state {m.group('state')!r} in {raw!r}: use s, l, g or aq")
    body = normalize(m.group("body").replace(" ", ""))
    readings: list[tuple[str, int]] = []
    explicit = re.match(r"^(.+?)(?:\^|\[)(\d*)([+-])\]?$", body)
    sign_first = re.match(r"^(.+?)([+-])(\d+)$", body)
    multi = re.match(r"^(.+?[A-Za-z)\]])([+-])\2+$", body)
    trailing = re.match(r"^(.*?)(\d*)([+-])$", body)
    if explicit:
        head, digits, sign = explicit.groups()
        readings.append((head, (int(digits) if digits else 1) * (1 if sign == "+" else -1)))
    elif sign_first:
        head, sign, digits = sign_first.groups()
        readings.append((head, int(digits) * (1 if sign == "+" else -1)))
    elif multi:
        head, sign = multi.groups()
        n = len(body) - len(head)
        readings.append((head, n * (1 if sign == "+" else -1)))
    elif trailing:
        head, digits, sign = trailing.groups()
        s = 1 if sign == "+" else -1
        # "SO42-": the last digit as the charge first, then the digits as part of the formula.
        splits = list(range(len(digits) - 1, -1, -1)) + [len(digits)] if digits else [0]
        seen = set()
        for k in splits:
            mag = digits[k:]
            if mag.startswith("0"):
                continue
            reading = (head + digits[:k], (int(mag) if mag else 1) * s)
            if reading not in seen:
                seen.add(reading)
                readings.append(reading)
    else:
        readings.append((body, 0))
    out = []
    for formula, charge in readings:
        if _FORMULA_RE.match(formula):
            out.append(Species(formula, charge, state))
    if not out:
        raise InputError(f"cannot read the formula in species {raw!r}")
    return out


@lru_cache(maxsize=4096)
def parse_species(text: str) -> Species:
    """Read a species text and return the reading that is in the table (else the likeliest).

    Raises
    ------
    InputError
        If the text cannot be read, or several readings are in the table.
    """
    candidates = _candidates(text)
    index = _table()[0]
    found = [c for c in candidates if c.key() in index]
    if len(found) > 1:
        options = " or ".join(repr(index[c.key()].display) for c in found)
        raise InputError(f"species {text!r} is ambiguous: write {options}")
    if found:
        return index[found[0].key()].species
    known = {key[0] for key in index}
    for c in candidates:  # prefer a reading whose formula the table knows in some form
        if element_composition(c.formula) in known:
            return c
    return candidates[0]


def formation_enthalpy(species: str) -> FormationEntry:
    """Return the standard enthalpy of formation entry of a species at 298.15 K.

    Parameters
    ----------
    species:
        Species text such as ``"KCl(s)"`` or ``"Cl-(aq)"``.

    Raises
    ------
    InputError
        If the species is unknown, naming the states the table has for the formula.
    """
    sp = parse_species(species)
    entry = _table()[0].get(sp.key())
    if entry is None:
        raise InputError(f"unknown species {species!r}: {unknown_species_hint(sp)}")
    return entry


def unknown_species_hint(sp: Species) -> str:
    """Return why a species is not in the table, naming the forms of its formula that are."""
    comp = element_composition(sp.formula)
    others = [
        e.display for key, e in _table()[0].items() if key[0] == comp and (key[1], key[2]) != (sp.charge, sp.state)
    ]
    if others:
        return "not in the NBS 1982 table of cupcal; the table has " + ", ".join(others)
    return "not in the NBS 1982 table of cupcal (see calc/refdata/data/formation_nbs1982.csv)"
