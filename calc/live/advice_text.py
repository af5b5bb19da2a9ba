"""The words of the live advice: each kind's own action, durations and the status lines."""

from __future__ import annotations

import math

from calc import formatting

__all__ = ["ADD_NOW", "UNDER_WAY", "duration", "amount_text", "target_text", "DEFAULT_TARGET", "default_target"]

#: What the person at the bench does at the mixing time, by run kind.
ADD_NOW = {
    "dissolution": "add the solid now",
    "reaction": "add the solid now",
    "neutralization": "add the base now",
    "electrical-calibration": "switch the heater on now",
    "mixing-calibration": "pour in the warm water now",
}

#: The main period's status line, by run kind.
UNDER_WAY = {
    "dissolution": "reaction under way",
    "reaction": "reaction under way",
    "neutralization": "reaction under way",
    "electrical-calibration": "heating under way",
    "mixing-calibration": "mixing under way",
}

#: Target expanded uncertainty U when none is given, by the main output's unit (docs/methods.md §9.3):
#: (floor, share of the value): the larger of 1 kJ/mol and 2 % of a molar enthalpy, the larger of
#: 2 J/K and 10 % of a calorimeter heat capacity (a small difference of large heat capacities).
#: Common practice, no source: about what a careful coffee-cup run reaches.
DEFAULT_TARGET = {"kJ/mol": (1.0, 0.02), "J/K": (2.0, 0.10)}


def default_target(unit: str, value: float) -> float:
    """Return the default target U for a main output of ``value`` in ``unit``."""
    floor, share = DEFAULT_TARGET[unit]
    return max(floor, share * abs(value)) if math.isfinite(value) else floor


def duration(seconds: float) -> str:
    """Return a wait in plain words: "40 s" below 90 s (to 10 s), else whole minutes ("3 min")."""
    if seconds < 90.0:
        return f"{max(10, int(math.ceil(seconds / 10.0)) * 10)} s"
    return f"{int(math.ceil(seconds / 60.0))} min"


def amount_text(value: float, unit: str) -> str:
    """Return an uncertainty as the status lines show it: two significant digits, trailing zeros trimmed."""
    return formatting.number(value, unit, digits=2, trim=True)


def target_text(target: float, unit: str) -> str:
    """Return "U ≤ 0.5 kJ/mol" for a target."""
    return "U ≤ " + amount_text(target, unit)
