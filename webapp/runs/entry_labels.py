"""The words of the new-run form: titles and hints of sections and fields, the units offered, special controls.

Read by :mod:`webapp.runs.entry_form`, which builds the form from the run-file schema.
"""

from __future__ import annotations

SECTION_TITLES = {
    "info": "About the run",
    "calorimeter": "Calorimeter",
    "thermometer": "Thermometer",
    "water": "Water in the cup",
    "solute": "Solute",
    "acid": "Acid (in the cup)",
    "base": "Base (poured in)",
    "heater": "Heater",
    "heater_2": "Second heater pulse",
    "warm_water": "Warm water (poured in)",
    "solution": "Solution in the cup",
    "reaction": "Reaction",
    "mixture": "Final mixture",
    "reference": "Reference value",
    "": "Timing and method",
}
SECTION_HINTS = {
    "mixture": "Optional: when blank, the solution's specific heat capacity comes from a property model.",
    "reference": "Optional: when blank, the reference value is chosen from the substances.",
    "calorimeter": "Choose the calorimeter: its heat capacity in force is used when the field is left blank.",
}
LABELS = {
    "heat_capacity": "Heat capacity",
    "specific_heat_capacity": "Specific heat capacity",
    "limiting_reagent": "Limiting reagent (formula)",
    "formula": "Formula",
    "equivalents": "Equivalents per formula unit",
    "coefficient": "Coefficient of the limiting reagent",
    "mixing_time": "Mixing time",
    "fore_period": "Fore period",
    "after_period": "After period",
    "method": "Corrected-ΔT method",
    "temperature_column": "Temperature column of the log",
    "date": "Date",
    "name": "Name",
}
HINTS = {
    "water.density": "blank: from IAPWS-95 at the run's temperature",
    "solution.density": "blank: from IAPWS-95 at the run's temperature",
    "acid.density": "blank: from a property model",
    "base.density": "blank: from a property model",
    "warm_water.density": "blank: from IAPWS-95",
    "acid.equivalents": "H⁺ given per formula unit (blank: from the formula)",
    "base.equivalents": "OH⁻ taken per formula unit (blank: from the formula)",
    "mixing_time": "blank: detected from the curve",
    "fore_period": "in seconds on the log's clock; blank: found from the log",
    "after_period": "in seconds on the log's clock; blank: found from the log",
    "temperature_column": "only for a log with several temperature columns: its header name (T2) or column number "
    "counted from 1 (3)",
    "heater.start": "when the heater is switched on, in seconds on the log's clock",
    "heater_2.start": "when the second pulse is switched on, in seconds on the log's clock",
    "solute.purity": "mass fraction, 0 to 1",
    "reaction.amount": "give the amount, or the mass with the limiting reagent",
    "reaction.mass": "mass of the limiting reagent, with its formula",
    "thermometer.resolution": "the smallest step the thermometer shows",
    "calorimeter.heat_capacity": "blank: the calibration in force of the calorimeter chosen",
    "calorimeter.type": "foam-cups, dewar, jacketed or other; blank: the type of the calorimeter chosen",
}
#: units offered for each unit of the schema (the first is the default)
UNITS = {
    "mL": ("mL", "L", "cm^3"),
    "g": ("g", "mg", "kg"),
    "mol/L": ("mol/L", "mmol/L"),
    "g/mL": ("g/mL", "g/cm^3", "kg/L"),
    "J/K": ("J/K", "kJ/K"),
    "J/(g*K)": ("J/(g*K)", "J/(kg*K)", "kJ/(kg*K)"),
    "V": ("V", "mV"),
    "A": ("A", "mA"),
    "s": ("s", "min"),
    "mol": ("mol", "mmol"),
    "K": ("degC", "K", "degF"),
}
RESOLUTION_UNITS = ("K", "mK", "degC")
#: which special control a field gets instead of a plain input
SPECIAL = {
    "calorimeter.name": "calorimeter",
    "info.group": "group",
    "info.notes": "long",
    "info.date": "date",
    "reference.name": "reference",
}
SECTION_ORDER_FIRST = ("calorimeter", "thermometer")
SECTION_ORDER_LAST = ("mixture", "", "reference", "info")
