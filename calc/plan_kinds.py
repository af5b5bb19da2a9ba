"""The planned amounts of each run kind, as run-file sections for :func:`calc.plan.plan_run`.

Each plannable kind's ``plan_sections`` hook (:mod:`calc.kinds`) is here: which sections the plan
writes from the planner's parameters. :data:`PLAN_KINDS` is the registry as the planner sees it:
which amount the suggestion scales to bring |ΔT| into the useful window, whether a second
solution is poured in, the typical release time and the main output.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from calc.errors import InputError
from calc.io.quantities import Measured
from calc.kinds import get_kind, plannable_kinds


@dataclass(frozen=True)
class PlanKind:
    """How one kind is planned: the amounts scaled together and whether two solutions mix."""

    name: str
    scaled: tuple[tuple[str, str], ...]
    two_solution: bool
    release_s: float
    main: str


#: The kinds that can be planned (a ``plan_sections`` hook in :mod:`calc.kinds`), as the planner sees them.
PLAN_KINDS: dict[str, PlanKind] = {
    k: PlanKind(k, get_kind(k).plan_scaled, get_kind(k).two_solution, get_kind(k).release_s, get_kind(k).main_output)
    for k in plannable_kinds()
}


#: The signature of a kind's ``plan_sections`` hook: (parameters, amount reader, quantity reader, T0, u_read)
#: → (run-file sections, substances).
SectionsHook = Callable[
    [dict[str, Any], Callable[..., Measured], Callable[..., Measured], float, float],
    tuple[dict[str, dict[str, Any]], list[str]],
]


def _text(value: str | None, name: str, what: str) -> str:
    if not value or not str(value).strip():
        raise InputError(f"missing: {what}", field=name)
    return str(value).strip()


def build_sections(
    kind: str,
    p: dict[str, Any],
    amount: Callable[..., Measured],
    measured: Callable[..., Measured],
    T0: float,
    u_read: float,
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """Return (run-file sections, substances) of a planned ``kind`` run from the parameters ``p``.

    ``amount`` and ``measured`` are the plan's readers of a positive amount and a quantity (they
    name the parameter in their errors); ``u_read`` is the thermometer's reading uncertainty.
    """
    sections: SectionsHook | None = get_kind(kind).hook("plan_sections") if kind in PLAN_KINDS else None
    if sections is None:
        raise InputError(f"cannot plan a {kind!r} run; expected one of: {', '.join(PLAN_KINDS)}", field="kind")
    return sections(p, amount, measured, T0, u_read)


# ------------------------------------------------------------------ the kinds' ``plan_sections`` hooks


def dissolution_sections(
    p: dict[str, Any], amount: Callable[..., Measured], measured: Callable[..., Measured], T0: float, u_read: float
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """Water in the cup and a weighed solute."""
    formula = _text(p.get("formula"), "formula", "the solute's formula, e.g. KCl")
    return (
        {
            "water": {"volume": amount(p.get("water_volume"), "water_volume", "mL", p.get("volume_u"))},
            "solute": {"formula": formula, "mass": amount(p.get("mass"), "mass", "g", p.get("balance_u"))},
        },
        [formula],
    )


def neutralization_sections(
    p: dict[str, Any], amount: Callable[..., Measured], measured: Callable[..., Measured], T0: float, u_read: float
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """An acid stock in the cup and a base stock poured in (at the start temperature unless given)."""
    volume_u = p.get("volume_u")
    acid = _text(p.get("acid"), "acid", "the acid's formula, e.g. HCl")
    base = _text(p.get("base"), "base", "the base's formula, e.g. NaOH")
    tb = p.get("base_temperature")
    tb = (
        Measured(T0 - 273.15, u_read, "degC", "normal", f"{T0 - 273.15:.2f} ± {u_read:.2g} degC")
        if tb is None
        else measured(tb, "base_temperature", "K")
    )
    return (
        {
            "acid": {
                "formula": acid,
                "concentration": amount(p.get("acid_concentration"), "acid_concentration", "mol/L"),
                "volume": amount(p.get("acid_volume"), "acid_volume", "mL", volume_u),
            },
            "base": {
                "formula": base,
                "concentration": amount(p.get("base_concentration"), "base_concentration", "mol/L"),
                "volume": amount(p.get("base_volume"), "base_volume", "mL", volume_u),
                "temperature": tb,
            },
        },
        [acid, base],
    )


def electrical_sections(
    p: dict[str, Any], amount: Callable[..., Measured], measured: Callable[..., Measured], T0: float, u_read: float
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """Water in the cup and the heater's voltage, current and time on."""
    return (
        {
            "water": {"volume": amount(p.get("water_volume"), "water_volume", "mL", p.get("volume_u"))},
            "heater": {
                "voltage": amount(p.get("heater_voltage"), "heater_voltage", "V"),
                "current": amount(p.get("heater_current"), "heater_current", "A"),
                "duration": amount(p.get("heater_duration"), "heater_duration", "s"),
            },
        },
        [],
    )


def mixing_sections(
    p: dict[str, Any], amount: Callable[..., Measured], measured: Callable[..., Measured], T0: float, u_read: float
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """Cool water in the cup and warm water poured in (warmer than the start by more than 1 K)."""
    volume_u = p.get("volume_u")
    warm = measured(p.get("warm_temperature"), "warm_temperature", "K")
    if not warm.m_as("K") > T0 + 1.0:
        raise InputError(
            f"the warm water must be warmer than the start temperature ({T0 - 273.15:.1f} °C), got {warm.text!r}",
            field="warm_temperature",
        )
    return (
        {
            "water": {"volume": amount(p.get("water_volume"), "water_volume", "mL", volume_u)},
            "warm_water": {"volume": amount(p.get("warm_volume"), "warm_volume", "mL", volume_u), "temperature": warm},
        },
        [],
    )


def reaction_sections(
    p: dict[str, Any], amount: Callable[..., Measured], measured: Callable[..., Measured], T0: float, u_read: float
) -> tuple[dict[str, dict[str, Any]], list[str]]:
    """A solution and a weighed reagent; the expected ΔH must be given (no reference values)."""
    formula = _text(p.get("formula"), "formula", "the formula of the reagent added, e.g. Mg")
    if p.get("molar_enthalpy") is None:
        raise InputError(
            "a reaction has no reference value here: give the expected ΔH, e.g. -460 kJ/mol", field="molar_enthalpy"
        )
    mass = amount(p.get("mass"), "mass", "g", p.get("balance_u"))
    coefficient = int(p.get("coefficient") or 1)
    if coefficient < 1:
        raise InputError(f"expected a whole number ≥ 1, got {coefficient}", field="coefficient")
    return (
        {
            "solution": {"volume": amount(p.get("water_volume"), "water_volume", "mL", p.get("volume_u"))},
            "reaction": {"limiting_reagent": formula, "mass": mass, "coefficient": coefficient},
        },
        [formula],
    )


def solve_delta_t(f: Callable[[float], float], target: float) -> float:
    """Return the ΔT at which the model's main output ``f(ΔT)`` equals ``target`` (secant method).

    Linear models (enthalpies) converge in one step; a calibration's C = Q/ΔT − m·c in a few.
    """
    x0, x1 = 1.0, 2.0
    f0, f1 = f(x0) - target, f(x1) - target
    for _ in range(60):
        if f1 == f0 or not (math.isfinite(f0) and math.isfinite(f1)):
            break
        x2 = x1 - f1 * (x1 - x0) / (f1 - f0)
        if x2 == 0 or not math.isfinite(x2):
            break
        if abs(x2 - x1) <= 1e-10 * max(abs(x2), 1e-6):
            return x2
        x0, f0, x1 = x1, f1, x2
        f1 = f(x1) - target
    raise InputError(
        "the planned amounts give no temperature change that matches the expected result: check the amounts",
        field="amount",
    )
