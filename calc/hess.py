"""Standard enthalpies of formation and Hess's law.

The table of standard enthalpies of formation (298.15 K, 0.1 MPa) is
``calc/data/formation_nbs1982.csv``: one compilation only, the NBS 1982 tables
(Wagman et al., J. Phys. Chem. Ref. Data 11, Suppl. 2). Each entry's standard
uncertainty follows the rule stated in ``calc/data/sources.toml`` (40 units of the last
digit given), because the tables give none per entry.

Species are written ``formula[charge](state)``: ``NaCl(s)``, ``H2O(l)``, ``CO2(g)``,
``Ca2+(aq)``, ``Cl-(aq)``, ``SO4^2-(aq)`` (``SO42-(aq)`` is read too when only one
reading is in the table), ``CuSO4.5H2O(s)`` (or ``·``/``*``). States: ``s`` (also
``cr`` and names such as ``graphite``), ``l``, ``g``, ``aq``.
"""

from __future__ import annotations

import csv
import math
import re
import tomllib
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from importlib import resources

from calc.errors import InputError
from calc.properties import element_composition

__all__ = [
    "FormationEntry",
    "HessTerm",
    "HessResult",
    "Species",
    "formation_enthalpy",
    "formation_table",
    "formation_index",
    "parse_species",
    "citation",
    "hess",
    "T_REF_K",
]

T_REF_K = 298.15
_T_RANGE_K = (273.15, 373.15)

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

    def key(self) -> tuple[tuple[tuple[str, int], ...], int, str]:
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
    text = (resources.files("calc") / "data" / "sources.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


def citation(source_id: str) -> str:
    """Return the full citation for a source id of ``calc/data/sources.toml``."""
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
def _table() -> tuple[dict[tuple, FormationEntry], tuple[FormationEntry, ...]]:
    path = resources.files("calc") / "data" / "formation_nbs1982.csv"
    index: dict[tuple, FormationEntry] = {}
    rows: list[FormationEntry] = []
    with path.open(encoding="utf-8", newline="") as fh:
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
            entry = FormationEntry(
                species, row["name"], value, u, cp, row["source"], row["note"], row["cas"]
            )
            key = species.key()
            if key in index:
                raise InputError(
                    f"duplicate species {species.display()}",
                    source="calc/data/formation_nbs1982.csv",
                    line=line_no,
                )
            index[key] = entry
            rows.append(entry)
    return index, tuple(rows)


def formation_table() -> tuple[FormationEntry, ...]:
    """Return every entry of the formation-enthalpy table, in file order."""
    return _table()[1]


def formation_index() -> dict[tuple, FormationEntry]:
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
        raise InputError(
            f"unknown state {m.group('state')!r} in {raw!r}: use s, l, g or aq"
        )
    body = m.group("body").replace(" ", "").replace("·", ".").replace("*", ".")
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
        raise InputError(f"unknown species {species!r}: {_unknown_hint(sp)}")
    return entry


def _unknown_hint(sp: Species) -> str:
    comp = element_composition(sp.formula)
    others = [
        e.display
        for key, e in _table()[0].items()
        if key[0] == comp and (key[1], key[2]) != (sp.charge, sp.state)
    ]
    if others:
        return "not in the NBS 1982 table of cupcal; the table has " + ", ".join(others)
    return "not in the NBS 1982 table of cupcal (see calc/data/formation_nbs1982.csv)"


# ------------------------------------------------------------------------ Hess's law


@dataclass(frozen=True)
class HessTerm:
    """One species of a reaction: signed coefficient (negative for reactants)."""

    coefficient: Fraction
    species: str
    dfH: float
    u: float
    cp: float | None
    source: str

    @property
    def contribution(self) -> float:
        """Return coefficient * dfH in kJ/mol."""
        return float(self.coefficient) * self.dfH


@dataclass
class HessResult:
    """Reaction enthalpy from formation enthalpies (kJ/mol), with its terms and sources."""

    equation: str
    value: float
    u: float
    unit: str
    terms: list[HessTerm]
    source: str
    temperature_K: float = T_REF_K
    value_298: float = 0.0
    u_298: float = 0.0
    delta_cp: float | None = None  # kJ/(mol K)
    delta_cp_u: float | None = None
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, object]:
        """Return the JSON object printed by ``cupcal hess --json``."""
        return {
            "equation": self.equation,
            "value": self.value,
            "standard_uncertainty": self.u,
            "unit": self.unit,
            "temperature_K": self.temperature_K,
            "terms": [
                {
                    "coefficient": str(abs(t.coefficient)),
                    "side": "reactant" if t.coefficient < 0 else "product",
                    "species": t.species,
                    "enthalpy_of_formation": t.dfH,
                    "standard_uncertainty": t.u,
                    "heat_capacity_J_mol_K": t.cp,
                }
                for t in self.terms
            ],
            "delta_cp_kJ_mol_K": self.delta_cp,
            "delta_cp_standard_uncertainty": self.delta_cp_u,
            "source": self.source,
            "notes": self.notes,
        }


_ARROW_RE = re.compile(r"\s*(?:<=>|⇌|->|→|⟶|=>|=)\s*")
_TERM_RE = re.compile(r"^(?P<coef>\d+/\d+|\d+(?:\.\d+)?)?\s*(?P<species>\S.*)$")


def _parse_side(text: str, side: str, equation: str) -> list[tuple[Fraction, str]]:
    text = re.sub(r"(\((?:s|l|g|aq|cr|ai|ao)\))\s*\+\s*", r"\1 + ", text.strip())
    if not text:
        raise InputError(f"equation {equation!r} has no {side}")
    out = []
    for part in re.split(r"\s+\+\s+", text):
        m = _TERM_RE.match(part.strip())
        if not m:
            raise InputError(f"cannot read term {part!r} of equation {equation!r}")
        coef = Fraction(m.group("coef")) if m.group("coef") else Fraction(1)
        if coef <= 0:
            raise InputError(f"coefficient of {m.group('species')!r} must be positive")
        out.append((coef, m.group("species").strip()))
    return out


def _fmt_coef(c: Fraction) -> str:
    return "" if c == 1 else f"{c} "


def _cp_u(entry: FormationEntry) -> float:
    """Return cupcal's estimate of u(Cp) in J/(mol K) (the tables give none)."""
    if entry.cp is None:
        return math.nan
    if entry.species.formula == "H" and entry.species.charge == 1:
        return 0.0  # convention
    if entry.species.state == "aq":
        return max(3.0, 0.05 * abs(entry.cp))
    return max(1.0, 0.02 * abs(entry.cp))


def hess(equation: str, T_K: float = T_REF_K) -> HessResult:
    """Compute the standard reaction enthalpy of a balanced equation by Hess's law.

    Parameters
    ----------
    equation:
        E.g. ``"CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)"``. Arrows ``->``, ``→``, ``=``;
        coefficients as integers, decimals or fractions (``1/2 O2(g)``).
    T_K:
        Temperature of the result. Other than 298.15 K, a Kirchhoff correction with a
        constant ΔrCp from the table's Cp° values is applied (273.15 K to 373.15 K).

    Returns
    -------
    HessResult
        Value and standard uncertainty in kJ/mol (terms treated as independent).

    Raises
    ------
    InputError
        Naming unknown species, the unbalanced elements or charge, or missing Cp data.
    """
    parts = _ARROW_RE.split(equation.strip())
    if len(parts) != 2:
        raise InputError(
            f"equation {equation!r} must have exactly one arrow ('->') between reactants "
            "and products"
        )
    left = _parse_side(parts[0], "reactants", equation)
    right = _parse_side(parts[1], "products", equation)
    index = _table()[0]

    signed: list[tuple[Fraction, Species, str]] = []
    for coef, text in left:
        signed.append((-coef, parse_species(text), text))
    for coef, text in right:
        signed.append((coef, parse_species(text), text))

    problems: list[str] = []
    unknown = [
        f"{text!r} ({_unknown_hint(sp)})" for _, sp, text in signed if sp.key() not in index
    ]
    if unknown:
        problems.append("unknown species: " + "; ".join(unknown))
    left_n: dict[str, Fraction] = {}
    right_n: dict[str, Fraction] = {}
    q = {True: Fraction(0), False: Fraction(0)}
    for coef, sp, _ in signed:
        counts = left_n if coef < 0 else right_n
        for el, n in sp.elements().items():
            counts[el] = counts.get(el, Fraction(0)) + abs(coef) * n
        q[coef < 0] += abs(coef) * sp.charge
    off = [
        f"{el}: {left_n.get(el, 0)} on the left, {right_n.get(el, 0)} on the right"
        for el in sorted(set(left_n) | set(right_n))
        if left_n.get(el, 0) != right_n.get(el, 0)
    ]
    if off:
        problems.append("not balanced in " + "; ".join(off))
    if q[True] != q[False]:
        problems.append(f"charge not balanced: {q[True]} on the left, {q[False]} on the right")
    if problems:
        raise InputError(f"equation {equation!r}: " + ". ".join(problems))

    terms: list[HessTerm] = []
    for coef, sp, _ in signed:
        e = index[sp.key()]
        terms.append(HessTerm(coef, e.display, e.value, e.u, e.cp, e.source))
    value = sum(t.contribution for t in terms)
    u = math.sqrt(sum((float(t.coefficient) * t.u) ** 2 for t in terms))
    source_ids = sorted({t.source for t in terms})
    notes: list[str] = []
    if len(source_ids) > 1:
        notes.append(
            "this sum mixes compilations (" + ", ".join(source_ids) + "); values from "
            "different compilations are not always consistent"
        )
    notes.append(
        "standard uncertainty propagated as if the table entries were independent "
        "(the NBS tables are internally correlated)"
    )

    missing_cp = [t.species for t in terms if t.cp is None]
    if missing_cp:
        dcp = dcp_u = None
    else:
        dcp = sum(float(t.coefficient) * t.cp for t in terms) / 1000.0  # type: ignore[operator]
        dcp_u = math.sqrt(
            sum((float(t.coefficient) * _cp_u(index[parse_species(t.species).key()])) ** 2 for t in terms)
        ) / 1000.0

    canonical = " -> ".join(
        " + ".join(f"{_fmt_coef(abs(c))}{index[sp.key()].display}" for c, sp, _ in signed if (c < 0) == is_left)
        for is_left in (True, False)
    )
    result = HessResult(
        equation=canonical,
        value=value,
        u=u,
        unit="kJ/mol",
        terms=terms,
        source="; ".join(citation(s) for s in source_ids),
        temperature_K=T_REF_K,
        value_298=value,
        u_298=u,
        delta_cp=dcp,
        delta_cp_u=dcp_u,
        notes=notes,
    )
    try:
        T = float(T_K)
    except (TypeError, ValueError):
        raise InputError(f"temperature must be a number in kelvin, got {T_K!r}") from None
    if abs(T - T_REF_K) > 1e-9:
        if not (_T_RANGE_K[0] <= T <= _T_RANGE_K[1]):
            raise InputError(
                f"temperature {T:.2f} K is outside {_T_RANGE_K[0]:.2f} K to {_T_RANGE_K[1]:.2f} K, "
                "where a constant-ΔrCp Kirchhoff correction is used"
            )
        if dcp is None:
            raise InputError(
                f"no Kirchhoff correction to {T:.2f} K: the table has no Cp° for "
                + ", ".join(missing_cp)
            )
        dT = T - T_REF_K
        result.temperature_K = T
        result.value = value + dcp * dT
        result.u = math.hypot(u, (dcp_u or 0.0) * dT)
        result.notes.append(
            f"Kirchhoff correction from 298.15 K with constant ΔrCp = {dcp * 1000:.1f} "
            f"± {(dcp_u or 0.0) * 1000:.1f} J/(mol K): {dcp * dT:+.3f} kJ/mol "
            "(Cp° uncertainties are cupcal's estimates)"
        )
    return result
