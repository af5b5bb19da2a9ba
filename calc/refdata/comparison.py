"""Compare a measured molar enthalpy with a reference value (ISO 13528 E_n score).

``E_n = (x - x_ref) / sqrt(U^2 + U_ref^2)`` with expanded uncertainties at k = 2
(``U_ref = 2 u_ref``); ``|E_n| <= 1`` is satisfactory (ISO 13528).

The comparison also says when it is not like for like, and by how much where the data
allow: a temperature away from the reference temperature (Kirchhoff, ΔCp·ΔT), and a
finite molality against an infinite-dilution value (φ_L) or against another molality
(φ_L(m) - φ_L(m_ref)). It then gives the reference adjusted to the run's conditions
and the E_n against that.

One comparison decides: where the reference can be carried to the run's conditions, the
adjusted value and its E_n are the verdict (``Comparison.En``, ``difference``,
``satisfactory``); the value as published (e.g. at infinite dilution) stays as context
(``En_published``) with no verdict of its own. :func:`verdict` reads the verdict from a
:class:`Comparison` or from a stored comparison record, so every surface shows the same one.
"""

from __future__ import annotations

import math
from dataclasses import asdict, astuple, dataclass, field
from typing import SupportsFloat, cast

from calc.errors import InputError
from calc.refdata.arguments import as_number
from calc.refdata.dilution import phi_L
from calc.refdata.reference_value import ReferenceValue

__all__ = ["Comparison", "Judgement", "Verdict", "compare", "judge", "verdict", "TEMPERATURE_NOTE_K", "BASIS_LABELS"]

TEMPERATURE_NOTE_K = 1.0  # note a temperature difference from this size on
FAR_TEMPERATURE_K = 10.0
MOLALITY_NOTE_REL = 0.05  # note a molality differing by more than 5 % from the reference's


#: what the verdict was judged against, as every surface labels it
BASIS_LABELS = {
    "conditions": "reference at the run's conditions",
    "published": "reference as published",
}


@dataclass
class Comparison:
    """A measured value set against a reference value (kJ/mol).

    ``difference``, ``relative_difference``, ``En`` and ``satisfactory`` are the verdict: against
    the reference carried to the run's conditions when cupcal could carry it (``basis`` =
    "conditions"), else against the value as published (``basis`` = "published"). The
    ``*_published`` fields compare with the value as published, for context only.
    """

    reference: ReferenceValue
    measured: float
    U_measured: float
    difference: float
    relative_difference: float
    En: float
    satisfactory: bool
    notes: list[str]
    U_reference: float = 0.0
    adjusted_reference: float | None = None
    adjusted_u: float | None = None
    En_adjusted: float | None = None
    adjustments: list[str] = field(default_factory=list)
    basis: str = "published"
    difference_published: float | None = None
    relative_difference_published: float | None = None
    En_published: float | None = None


@dataclass(frozen=True)
class Judgement:
    """A measured x ± U judged against a reference r ± U_ref (both k = 2) by E_n (ISO 13528)."""

    difference: float  # x − r
    relative_difference: float  # (x − r)/|r|; NaN for r = 0
    En: float  # (x − r)/√(U² + U_ref²)
    satisfactory: bool  # |E_n| ≤ 1


def judge(x: float, U: float, reference: float, U_reference: float, En: float | None = None) -> Judgement:
    """Return the judgement of x ± U against ``reference`` ± ``U_reference``; ``En`` when already known (a stored
    record), else computed (an InputError when both uncertainties are zero)."""
    diff = x - reference
    en = _en(diff, U, U_reference) if En is None else En
    return Judgement(diff, diff / abs(reference) if reference != 0.0 else math.nan, en, abs(en) <= 1.0)


@dataclass(frozen=True)
class Verdict:
    """The one judgement of a result against its reference, and the published value as context."""

    basis: str
    label: str
    reference: float
    u_reference: float
    U_reference: float
    measured: float
    U_measured: float
    judgement: Judgement
    unit: str
    published: float
    u_published: float
    En_published: float | None
    published_state: str

    @property
    def difference(self) -> float:
        return self.judgement.difference

    @property
    def relative_difference(self) -> float:
        return self.judgement.relative_difference

    @property
    def En(self) -> float:
        return self.judgement.En

    @property
    def satisfactory(self) -> bool:
        return self.judgement.satisfactory


def _get(c: object, key: str) -> object:
    return c.get(key) if isinstance(c, dict) else getattr(c, key, None)


def _finite(x: object) -> float | None:
    try:
        v = float(cast(SupportsFloat, x))  # float() raises TypeError for the rest, caught below
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def verdict(comparison: object) -> Verdict | None:
    """Return the verdict of a :class:`Comparison` or of its stored record (a dict); None when absent.

    Records stored before the verdict moved to the adjusted reference kept the published E_n in
    ``En`` and the adjusted one in ``En_adjusted``; both forms give the same verdict here.
    """
    if not comparison:
        return None
    ref = _get(comparison, "reference")
    x, U = _finite(_get(comparison, "measured")), _finite(_get(comparison, "U_measured"))
    pub, u_pub = _finite(_get(ref, "value")), _finite(_get(ref, "u"))
    if ref is None or x is None or U is None or pub is None or u_pub is None:
        return None
    unit = str(_get(ref, "unit") or "kJ/mol")
    molality = _get(ref, "molality")
    state = "infinite dilution" if molality is None else f"{float(cast(SupportsFloat, molality)):g} mol/kg"
    adj, u_adj = _finite(_get(comparison, "adjusted_reference")), _finite(_get(comparison, "adjusted_u"))
    en_pub = _finite(_get(comparison, "En_published"))
    if adj is not None and u_adj is not None:
        basis, value, u = "conditions", adj, u_adj
        en = _finite(_get(comparison, "En_adjusted"))
        if en_pub is None:  # an older record: its ``En`` is the published one
            en_pub = _finite(_get(comparison, "En")) if _finite(_get(comparison, "En_adjusted")) is not None else None
    else:
        basis, value, u = "published", pub, u_pub
        en = _finite(_get(comparison, "En"))
        en_pub = en
    if en is None and math.hypot(U, 2.0 * u) == 0.0:
        return None
    return Verdict(
        basis=basis,
        label=BASIS_LABELS[basis],
        reference=value,
        u_reference=u,
        U_reference=2.0 * u,
        measured=x,
        U_measured=U,
        judgement=judge(x, U, value, 2.0 * u, en),
        unit=unit,
        published=pub,
        u_published=u_pub,
        En_published=en_pub,
        published_state=state,
    )


def _number(x: object, what: str) -> float:
    v = as_number(x, what)
    if math.isnan(v) or math.isinf(v):
        raise InputError(f"{what} must be a finite number, got {x!r}")
    return v


def _en(diff: float, U: float, U_ref: float) -> float:
    denom = math.hypot(U, U_ref)
    if denom == 0.0:
        raise InputError("E_n needs a non-zero uncertainty of the measured or reference value")
    return diff / denom


def compare(
    measured_kJ_mol: float,
    U_measured: float,
    reference: ReferenceValue,
    *,
    molality: float | None,
    T_K: float,
) -> Comparison:
    """Compare a measured value with a reference value.

    Parameters
    ----------
    measured_kJ_mol:
        The measured molar enthalpy, in the reference's unit (kJ/mol).
    U_measured:
        Its expanded uncertainty (k = 2).
    reference:
        The reference value (standard uncertainty ``u``).
    molality:
        Final molality of the run's solute in mol/kg (None if not known).
    T_K:
        Temperature the measured value refers to, in kelvin.

    Returns
    -------
    Comparison
        Difference, relative difference, E_n, verdict, and notes on what is not like for like
        with the size of the effect where the data exist (then judged against the carried reference).

    Raises
    ------
    InputError
        For a non-numeric input, a negative uncertainty or zero combined uncertainty.
    """
    x = _number(measured_kJ_mol, "measured value")
    U = _number(U_measured, "expanded uncertainty of the measured value")
    if U < 0:
        raise InputError(f"expanded uncertainty must not be negative, got {U_measured!r}")
    T = _number(T_K, "temperature")
    result = _against_published(x, U, reference)
    t_shift, t_u2 = _temperature_effect(reference, T, result.notes, result.adjustments)
    m = _number(molality, "molality") if molality is not None else None
    if m is not None and m < 0:
        raise InputError(f"molality must not be negative, got {molality!r}")
    d_shift, d_u2 = _dilution_effect(reference, m, T, result.notes, result.adjustments)
    if result.adjustments:
        _judge_at_conditions(result, 0.0 + t_shift + d_shift, reference.u**2 + t_u2 + d_u2)
    return result


def _against_published(x: float, U: float, reference: ReferenceValue) -> Comparison:
    """Return the comparison of x ± U with the value as published (no notes yet)."""
    U_ref = 2.0 * reference.u
    j = judge(x, U, reference.value, U_ref)
    return Comparison(
        reference,
        x,
        U,
        **asdict(j),
        notes=[],
        U_reference=U_ref,
        adjustments=[],
        basis="published",
        difference_published=j.difference,
        relative_difference_published=j.relative_difference,
        En_published=j.En,
    )


def _temperature_effect(
    reference: ReferenceValue, T: float, notes: list[str], adjustments: list[str]
) -> tuple[float, float]:
    """Note the temperature difference; return the Kirchhoff shift (kJ/mol) and its variance (0 when none)."""
    dT = T - reference.temperature_K
    if abs(dT) < TEMPERATURE_NOTE_K:
        return 0.0, 0.0
    where = f"the reference holds at {reference.temperature_K:.2f} K, the run at {T:.2f} K"
    if reference.delta_cp is None:
        notes.append(f"{where}; no ΔCp data, so the size of the effect is unknown")
        return 0.0, 0.0
    eff = reference.delta_cp * dT
    u_eff = abs((reference.delta_cp_u or 0.0) * dT)
    notes.append(
        f"{where}: by Kirchhoff's law (ΔCp = {reference.delta_cp * 1000:.1f} "
        f"J/(mol K)) the value at the run's temperature differs by {eff:+.3f} ± "
        f"{u_eff:.3f} kJ/mol" + (" (constant ΔCp assumed over more than 10 K)" if abs(dT) > FAR_TEMPERATURE_K else "")
    )
    adjustments.append(f"Kirchhoff {eff:+.3f} kJ/mol")
    return eff, u_eff**2


def _dilution_effect(
    reference: ReferenceValue, m: float | None, T: float, notes: list[str], adjustments: list[str]
) -> tuple[float, float]:
    """Note the concentration difference; return the φ_L shift (kJ/mol) and its variance (0 when none)."""
    if reference.conditions and reference.molality is None:
        notes.append(f"the reference holds for: {reference.conditions}; compare only runs made under these conditions")
    elif reference.formula is None:
        if reference.molality is None:
            notes.append(
                "the reference is at infinite dilution; at finite concentrations the "
                "enthalpies of dilution of the reagents and products add typically a few "
                "tenths of a kJ/mol (not corrected here)"
            )
    elif m is None:
        state = "infinite dilution" if reference.molality is None else f"{reference.molality:g} mol/kg"
        notes.append(
            f"the reference is at {state}; the run's molality is not known, so the dilution effect cannot be judged"
        )
    else:
        m_ref = reference.molality or 0.0
        if (reference.molality is None and m > 0.0) or (
            reference.molality is not None and abs(m - m_ref) > MOLALITY_NOTE_REL * max(m_ref, 1e-12)
        ):
            ref_state = "infinite dilution" if reference.molality is None else f"{m_ref:g} mol/kg"
            at_run = phi_L(reference.formula, m, T)
            at_ref = phi_L(reference.formula, m_ref, T) if at_run is not None else None
            if at_run is not None and at_ref is not None:
                eff = at_run.value - at_ref.value
                u_eff = math.hypot(at_run.u, at_ref.u)
                notes.append(
                    f"the reference is at {ref_state}, the run at {m:.4g} mol/kg: the "
                    f"relative apparent molar enthalpy ({at_run.model}) changes the expected "
                    f"value by {eff:+.3f} ± {u_eff:.3f} kJ/mol"
                )
                adjustments.append(f"dilution {eff:+.3f} kJ/mol ({at_run.model})")
                return eff, u_eff**2
            notes.append(
                f"the reference is at {ref_state}, the run at {m:.4g} mol/kg; cupcal has "
                f"no φ_L model for {reference.formula} at this molality, so the size of "
                "the dilution effect is unknown (for 1:1 salts at 0.1-1 mol/kg it is a "
                "few tenths of a kJ/mol; larger for 2:1 salts, acids and hydroxides)"
            )
    return 0.0, 0.0


def _judge_at_conditions(result: Comparison, shift: float, u2: float) -> None:
    """Judge ``result`` against the reference carried to the run's conditions (in place)."""
    x, U = result.measured, result.U_measured
    adj = result.reference.value + shift
    u_adj = math.sqrt(u2)
    j = judge(x, U, adj, 2.0 * u_adj)
    result.adjusted_reference = adj
    result.adjusted_u = u_adj
    result.En_adjusted = j.En
    # the adjusted reference is the one the verdict is judged against
    result.basis = "conditions"
    result.difference, result.relative_difference, result.En, result.satisfactory = astuple(j)
    result.notes.append(
        f"reference carried to the run's conditions: {adj:.3f} ± {u_adj:.3f} kJ/mol (u); "
        "this is the value the result is judged against"
    )


def verdict_record(v: Verdict | None) -> dict[str, object] | None:
    """Return a verdict as JSON-ready data: the judgement, then the published value as context."""
    if v is None:
        return None

    def num(x: float | None) -> float | None:
        return x if x is not None and math.isfinite(x) else None

    return {
        "judged_against": v.label,
        "basis": v.basis,
        "reference": num(v.reference),
        "reference_standard_uncertainty": num(v.u_reference),
        "difference": num(v.difference),
        "relative_difference": num(v.relative_difference),
        "En": num(v.En),
        "satisfactory": v.satisfactory,
        "unit": v.unit,
        "context": {
            "reference_as_published": num(v.published),
            "standard_uncertainty": num(v.u_published),
            "state": v.published_state,
            "En": num(v.En_published),
            "note": "context only; the verdict is the E_n above",
        },
    }


def verdict_lines(v: Verdict) -> list[str]:
    """Return the verdict as two lines of plain text (the command line and text exports)."""
    word = "satisfactory" if v.satisfactory else "NOT satisfactory"
    lines = [
        f"verdict against the {v.label}: {v.reference:.3f} ± {v.u_reference:.3f} {v.unit} (u); "
        f"difference {v.difference:+.2f} {v.unit} ({100 * v.relative_difference:+.1f} %), "
        f"E_n = {v.En:+.2f} ({word}, |E_n| ≤ 1, ISO 13528)",
    ]
    if v.basis == "conditions":
        ctx = f"context: as published ({v.published_state}) {v.published:.3f} ± {v.u_published:.3f} {v.unit} (u)"
        if v.En_published is not None:
            ctx += f", E_n against it {v.En_published:+.2f} (not a verdict: other conditions than the run's)"
        lines.append(ctx)
    return lines
