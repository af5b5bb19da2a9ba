"""The run file's schema: the sections and fields of each kind, and the top-level fields.

:mod:`calc.io.runfile` validates a run file against it; the kinds and their required sections are
those of :mod:`calc.kinds`.
"""

from __future__ import annotations

from calc.kinds import get_kind, kind_names

__all__ = ["KINDS", "SCHEMA", "REQUIRED_SECTIONS", "TOP_FIELDS", "CALORIMETER_TYPES", "Field"]

KINDS = kind_names()

# A field is (kind of value, expected unit or None, required).
#  "q"   measured quantity with units ("value ± u unit")
#  "dq"  a temperature *difference* such as a resolution (degC counts as K)
#  "n"   dimensionless measured quantity (bare number or "value ± u")
#  "s"   free string
#  "f"   chemical formula (string)
#  "i"   positive integer
#  "d"   a date (or date and time) in ISO 8601, as a string or a TOML date
Field = tuple[str, str | None, bool]

_INFO: dict[str, Field] = {
    "title": ("s", None, False),
    "operator": ("s", None, False),
    "bench": ("s", None, False),
    "date": ("d", None, False),
    "notes": ("s", None, False),
    "sample": ("s", None, False),
    "group": ("s", None, False),
}
_CAL: dict[str, Field] = {"heat_capacity": ("q", "J/K", True), "name": ("s", None, False), "type": ("s", None, False)}
_CAL_OPTIONAL: dict[str, Field] = {
    "heat_capacity": ("q", "J/K", False),
    "name": ("s", None, False),
    "type": ("s", None, False),
}
#: Calorimeter types (``[calorimeter] type``); their plausible heat capacities are in calc.checks.
CALORIMETER_TYPES = ("foam-cups", "dewar", "jacketed", "other")
_THERMO: dict[str, Field] = {"resolution": ("dq", "K", True), "name": ("s", None, False)}
_MIXTURE: dict[str, Field] = {"specific_heat_capacity": ("q", "J/(g*K)", False)}
_WATER: dict[str, Field] = {"volume": ("q", "mL", True), "density": ("q", "g/mL", False)}
_REFERENCE: dict[str, Field] = {"name": ("s", None, False)}

_COMMON: dict[str, dict[str, Field]] = {
    "info": _INFO,
    "thermometer": _THERMO,
    "mixture": _MIXTURE,
    "reference": _REFERENCE,
}
#: what both calibrations have: water in the cup and a calorimeter whose heat capacity they find
_CALIBRATION: dict[str, dict[str, Field]] = {**_COMMON, "calorimeter": _CAL_OPTIONAL, "water": _WATER}

SCHEMA: dict[str, dict[str, dict[str, Field]]] = {
    "dissolution": {
        **_COMMON,
        "calorimeter": _CAL,
        "water": _WATER,
        "solute": {
            "formula": ("f", None, True),
            "mass": ("q", "g", True),
            "purity": ("n", "", False),
            "name": ("s", None, False),
        },
    },
    "neutralization": {
        **_COMMON,
        "calorimeter": _CAL,
        "acid": {
            "formula": ("f", None, True),
            "concentration": ("q", "mol/L", True),
            "volume": ("q", "mL", True),
            "density": ("q", "g/mL", False),
            "equivalents": ("i", None, False),
            "temperature": ("q", "K", False),
        },
        "base": {
            "formula": ("f", None, True),
            "concentration": ("q", "mol/L", True),
            "volume": ("q", "mL", True),
            "density": ("q", "g/mL", False),
            "temperature": ("q", "K", True),
            "equivalents": ("i", None, False),
        },
    },
    "electrical-calibration": {
        **_CALIBRATION,
        "heater": {
            "voltage": ("q", "V", True),
            "current": ("q", "A", True),
            "duration": ("q", "s", True),
        },
    },
    "mixing-calibration": {
        **_CALIBRATION,
        "warm_water": {
            "volume": ("q", "mL", True),
            "temperature": ("q", "K", True),
            "density": ("q", "g/mL", False),
        },
    },
    "reaction": {
        **_COMMON,
        "calorimeter": _CAL,
        "solution": _WATER,
        "solute": {
            "formula": ("f", None, True),
            "mass": ("q", "g", True),
            "name": ("s", None, False),
        },
        "reaction": {
            "equation": ("s", None, False),
            "limiting_reagent": ("f", None, False),
            "amount": ("q", "mol", False),
            "mass": ("q", "g", False),
            "coefficient": ("i", None, False),
        },
    },
}

_HEATER_AT: dict[str, Field] = {
    "voltage": ("q", "V", True),
    "current": ("q", "A", True),
    "duration": ("q", "s", True),
    "start": ("q", "s", True),
}
SCHEMA["dissolution-with-calibration"] = {
    **_COMMON,
    "calorimeter": {"name": ("s", None, False), "type": ("s", None, False)},
    "water": _WATER,
    "solute": SCHEMA["dissolution"]["solute"],
    "heater": _HEATER_AT,
    "heater_2": _HEATER_AT,
}

#: Sections every run of a kind must have (:mod:`calc.kinds`).
REQUIRED_SECTIONS: dict[str, tuple[str, ...]] = {k: get_kind(k).required_sections for k in KINDS}

TOP_FIELDS: dict[str, Field] = {
    "kind": ("s", None, True),
    "readings": ("s", None, True),
    "mixing_time": ("q", "s", False),
    "fore_period": ("p", "s", False),
    "after_period": ("p", "s", False),
    "method": ("s", None, False),
    "temperature_column": ("c", None, False),
}
