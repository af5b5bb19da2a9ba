"""Standard enthalpies of formation and Hess's law.

:func:`hess` sums the standard enthalpies of formation of the species of a balanced equation, with
a Kirchhoff correction to other temperatures. The table (NBS 1982) and the way species are written
are described in :mod:`calc.refdata.species`; its names (``formation_enthalpy``, ``parse_species``,
``Species``, ``citation`` ...) stay importable from here.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from fractions import Fraction

from calc.errors import InputError
from calc.refdata.arguments import as_number
from calc.refdata.species import (
    T_REF_K,
    FormationEntry,
    Species,
    SpeciesKey,
    citation,
    formation_enthalpy,
    formation_index,
    formation_table,
    parse_species,
    unknown_species_hint,
)

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

_T_RANGE_K = (273.15, 373.15)


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
        raise InputError(f"equation {equation!r} must have exactly one arrow ('->') between reactants and products")
    left = _parse_side(parts[0], "reactants", equation)
    right = _parse_side(parts[1], "products", equation)
    index = formation_index()
    signed: list[tuple[Fraction, Species, str]] = []
    for coef, text in left:
        signed.append((-coef, parse_species(text), text))
    for coef, text in right:
        signed.append((coef, parse_species(text), text))
    _check_balanced(equation, signed, index)
    result, missing_cp = _at_298(signed, index)
    T = as_number(T_K, "temperature", " in kelvin")
    if abs(T - T_REF_K) > 1e-9:
        _kirchhoff(result, T, missing_cp)
    return result


def _check_balanced(
    equation: str, signed: list[tuple[Fraction, Species, str]], index: dict[SpeciesKey, FormationEntry]
) -> None:
    """Refuse unknown species and an equation not balanced in its elements or charge, naming each."""
    problems: list[str] = []
    unknown = [f"{text!r} ({unknown_species_hint(sp)})" for _, sp, text in signed if sp.key() not in index]
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


def _at_298(
    signed: list[tuple[Fraction, Species, str]], index: dict[SpeciesKey, FormationEntry]
) -> tuple[HessResult, list[str]]:
    """Return the result at 298.15 K (with ΔrCp when every species has Cp°) and the species without Cp°."""
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
        dcp = sum(float(t.coefficient) * t.cp for t in terms if t.cp is not None) / 1000.0  # none is None here
        dcp_u = (
            math.sqrt(sum((float(t.coefficient) * _cp_u(index[parse_species(t.species).key()])) ** 2 for t in terms))
            / 1000.0
        )
    canonical = " -> ".join(
        " + ".join(f"{_fmt_coef(abs(c))}{index[sp.key()].display}" for c, sp, _ in signed if (c < 0) == is_left)
        for is_left in (True, False)
    )
    return HessResult(
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
    ), missing_cp


def _kirchhoff(result: HessResult, T: float, missing_cp: list[str]) -> None:
    """Carry the result from 298.15 K to ``T`` with a constant ΔrCp (in place)."""
    if not (_T_RANGE_K[0] <= T <= _T_RANGE_K[1]):
        raise InputError(
            f"temperature {T:.2f} K is outside {_T_RANGE_K[0]:.2f} K to {_T_RANGE_K[1]:.2f} K, "
            "where a constant-ΔrCp Kirchhoff correction is used"
        )
    dcp, dcp_u = result.delta_cp, result.delta_cp_u
    if dcp is None:
        raise InputError(f"no Kirchhoff correction to {T:.2f} K: the table has no Cp° for " + ", ".join(missing_cp))
    dT = T - T_REF_K
    result.temperature_K = T
    result.value = result.value_298 + dcp * dT
    result.u = math.hypot(result.u_298, (dcp_u or 0.0) * dT)
    result.notes.append(
        f"Kirchhoff correction from 298.15 K with constant ΔrCp = {dcp * 1000:.1f} "
        f"± {(dcp_u or 0.0) * 1000:.1f} J/(mol K): {dcp * dT:+.3f} kJ/mol "
        "(Cp° uncertainties are cupcal's estimates)"
    )
