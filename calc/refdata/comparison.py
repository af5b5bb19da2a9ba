"""Compare a measured molar enthalpy with a reference value (ISO 13528 E_n score).

``E_n = (x - x_ref) / sqrt(U^2 + U_ref^2)`` with expanded uncertainties at k = 2
(``U_ref = 2 u_ref``); ``|E_n| <= 1`` is satisfactory (ISO 13528).

The comparison also says when it is not like for like, and by how much where the data
allow: a temperature away from the reference temperature (Kirchhoff, ΔCp·ΔT), and a
finite molality against an infinite-dilution value (φ_L) or against another molality
(φ_L(m) - φ_L(m_ref)). It then gives the reference adjusted to the run's conditions
and the E_n against that, beside the plain comparison.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from calc.errors import InputError
from calc.refdata.reference import ReferenceValue, phi_L

__all__ = ["Comparison", "compare", "TEMPERATURE_NOTE_K"]

TEMPERATURE_NOTE_K = 1.0  # note a temperature difference from this size on
FAR_TEMPERATURE_K = 10.0
MOLALITY_NOTE_REL = 0.05  # note a molality differing by more than 5 % from the reference's


@dataclass
class Comparison:
    """A measured value set against a reference value (kJ/mol)."""

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


def _number(x: object, what: str) -> float:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{what} must be a number, got {x!r}") from None
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
        Difference, relative difference, E_n, verdict, and notes on what is not like for
        like with the size of the effect where the data exist.

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
    x_ref = reference.value
    U_ref = 2.0 * reference.u
    diff = x - x_ref
    rel = diff / abs(x_ref) if x_ref != 0.0 else math.nan
    En = _en(diff, U, U_ref)

    notes: list[str] = []
    adjustments: list[str] = []
    shift = 0.0
    u2 = reference.u**2

    # Temperature (Kirchhoff with a constant ΔCp).
    dT = T - reference.temperature_K
    if abs(dT) >= TEMPERATURE_NOTE_K:
        where = f"the reference holds at {reference.temperature_K:.2f} K, the run at {T:.2f} K"
        if reference.delta_cp is not None:
            eff = reference.delta_cp * dT
            u_eff = abs((reference.delta_cp_u or 0.0) * dT)
            notes.append(
                f"{where}: by Kirchhoff's law (ΔCp = {reference.delta_cp * 1000:.1f} "
                f"J/(mol K)) the value at the run's temperature differs by {eff:+.3f} ± "
                f"{u_eff:.3f} kJ/mol"
                + (" (constant ΔCp assumed over more than 10 K)" if abs(dT) > FAR_TEMPERATURE_K else "")
            )
            shift += eff
            u2 += u_eff**2
            adjustments.append(f"Kirchhoff {eff:+.3f} kJ/mol")
        else:
            notes.append(f"{where}; no ΔCp data, so the size of the effect is unknown")

    # Molality.
    if molality is not None:
        m = _number(molality, "molality")
        if m < 0:
            raise InputError(f"molality must not be negative, got {molality!r}")
    else:
        m = None
    if reference.conditions and reference.molality is None:
        notes.append(
            f"the reference holds for: {reference.conditions}; compare only runs made "
            "under these conditions"
        )
    elif reference.formula is None:
        if reference.molality is None:
            notes.append(
                "the reference is at infinite dilution; at finite concentrations the "
                "enthalpies of dilution of the reagents and products add typically a few "
                "tenths of a kJ/mol (not corrected here)"
            )
    elif m is None:
        state = (
            "infinite dilution"
            if reference.molality is None
            else f"{reference.molality:g} mol/kg"
        )
        notes.append(
            f"the reference is at {state}; the run's molality is not known, so the "
            "dilution effect cannot be judged"
        )
    else:
        m_ref = reference.molality or 0.0
        if (reference.molality is None and m > 0.0) or (
            reference.molality is not None
            and abs(m - m_ref) > MOLALITY_NOTE_REL * max(m_ref, 1e-12)
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
                shift += eff
                u2 += u_eff**2
                adjustments.append(f"dilution {eff:+.3f} kJ/mol ({at_run.model})")
            else:
                notes.append(
                    f"the reference is at {ref_state}, the run at {m:.4g} mol/kg; cupcal has "
                    f"no φ_L model for {reference.formula} at this molality, so the size of "
                    "the dilution effect is unknown (for 1:1 salts at 0.1-1 mol/kg it is a "
                    "few tenths of a kJ/mol; larger for 2:1 salts, acids and hydroxides)"
                )

    result = Comparison(
        reference=reference,
        measured=x,
        U_measured=U,
        difference=diff,
        relative_difference=rel,
        En=En,
        satisfactory=abs(En) <= 1.0,
        notes=notes,
        U_reference=U_ref,
        adjustments=adjustments,
    )
    if adjustments:
        adj = x_ref + shift
        u_adj = math.sqrt(u2)
        result.adjusted_reference = adj
        result.adjusted_u = u_adj
        result.En_adjusted = _en(x - adj, U, 2.0 * u_adj)
        notes.append(
            f"reference adjusted to the run's conditions: {adj:.3f} ± {u_adj:.3f} kJ/mol "
            f"(u), E_n = {result.En_adjusted:+.2f}"
        )
    return result
