"""Amounts for a planned run: how much solute (or stock, heater time …) keeps |ΔT| in the useful window."""

from __future__ import annotations

from dataclasses import dataclass

from calc.errors import InputError
from calc.plan_design import Design, evaluate

__all__ = ["Suggestion", "suggest"]


@dataclass(frozen=True)
class Suggestion:
    """Amounts that keep |ΔT| in the useful window.

    ``quantity`` is the run-file field changed (``solute.mass``, or the two stocks'
    ``concentration`` scaled together for a neutralization); ``low``/``high`` give |ΔT| at the
    window's edges and ``recommended`` the amount to use.
    """

    quantity: str
    unit: str
    current: float
    low: float
    high: float
    recommended: float
    predicted_delta_t: float
    message: str


def _solve_amount(design: Design, target: float) -> tuple[float, float]:
    """Return (scale factor of the amount, ΔT) that gives |ΔT| = ``target``."""
    factor, dT = 1.0, evaluate(design).dt.value
    for _ in range(8):
        if dT == 0:
            break
        new = factor * target / abs(dT)
        dT = evaluate(design.scaled(new)).dt.value
        if abs(new - factor) <= 1e-5 * new:
            factor = new
            break
        factor = new
    return factor, dT


def suggest(design: Design, dT: float, window: tuple[float, float]) -> Suggestion | None:
    """Return the amounts that keep |ΔT| in ``window`` (the planned ΔT is ``dT``), or None when none can."""
    lo, hi = window
    if lo >= hi:
        return None
    quantity, current, unit = design.amount()
    try:
        f_lo, _ = _solve_amount(design, lo)
        f_hi, _ = _solve_amount(design, hi)
    except InputError:  # the amounts for the window pass the physical bounds (calc.limits): no suggestion
        return None
    a = abs(dT)
    if lo <= a <= hi:
        rec, rec_dt = 1.0, dT
        msg = f"|ΔT| = {a:.2f} K is inside the useful window {lo:g}–{hi:g} K"
    else:
        target = lo * 1.25 if a < lo else hi * 0.8
        target = min(max(target, lo), hi)
        try:
            rec, rec_dt = _solve_amount(design, target)
        except InputError:
            return None
        why = "too small against the thermometer and the drift" if a < lo else "too large (far from room temperature)"
        msg = f"|ΔT| = {a:.2f} K is {why}: use about {current * rec:.3g} {unit} for |ΔT| ≈ {abs(rec_dt):.2f} K"
    return Suggestion(quantity, unit, current, current * f_lo, current * f_hi, current * rec, rec_dt, msg)
