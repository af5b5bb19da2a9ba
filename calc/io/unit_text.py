"""Units as written in run files and as described in messages (:mod:`calc.io.quantities`).

Spellings pint does not read (``°C``, ``deg F``) are rewritten into pint's names; a unit's dimension
is described in words with an example (``"a volume like '100.0 ± 0.1 mL'"``); :func:`check_unit`
says what is wrong with a written unit against the expected one.
"""

from __future__ import annotations

import re
from functools import lru_cache

from calc.io.units import parse_unit

__all__ = [
    "describe_dimension",
    "canonical_unit",
    "check_unit",
    "expectation",
    "article",
    "describe",
    "is_absolute_temperature",
    "is_time",
    "TEXT",
    "PM_IN_UNIT_RE",
]

_PM = r"(?:±|\+/-|\+-)"
PM_IN_UNIT_RE = re.compile(_PM)
TEXT = "\x00"  # stands for the whole entry in cached problem messages

# Spellings that pint does not read (or reads as something else) mapped to pint names.
UNIT_SPELLINGS = {
    "°C": "degC",
    "℃": "degC",
    "ºC": "degC",
    "° C": "degC",
    "deg C": "degC",
    "°F": "degF",
    "℉": "degF",
    "ºF": "degF",
    "° F": "degF",
    "deg F": "degF",
    "°K": "K",
}

# (reference unit, words, example) for describing dimensions in messages.
DIMENSIONS: tuple[tuple[str, str, str], ...] = (
    ("", "dimensionless number", "0.50 ± 0.01"),
    ("mL", "volume", "100.0 ± 0.1 mL"),
    ("g", "mass", "5.000 ± 0.001 g"),
    ("mol", "amount of substance", "0.0500 ± 0.0002 mol"),
    ("mol/L", "amount concentration", "1.000 ± 0.005 mol/L"),
    ("mol/kg", "molality", "1.000 ± 0.005 mol/kg"),
    ("g/mL", "density", "1.00 ± 0.01 g/mL"),
    ("g/mol", "molar mass", "58.44 ± 0.01 g/mol"),
    ("K", "temperature", "21.50 ± 0.05 °C"),
    ("s", "time", "180 ± 1 s"),
    ("J", "energy", "1500 ± 10 J"),
    ("kJ/mol", "molar energy", "-57.0 ± 0.5 kJ/mol"),
    ("J/K", "heat capacity", "25 ± 3 J/K"),
    ("J/(g*K)", "specific heat capacity", "4.18 ± 0.01 J/(g*K)"),
    ("J/(mol*K)", "molar heat capacity", "75.3 ± 0.1 J/(mol*K)"),
    ("W", "power", "10.00 ± 0.05 W"),
    ("W/K", "heat-loss coefficient", "0.010 ± 0.002 W/K"),
    ("K/s", "temperature drift rate", "0.0010 ± 0.0002 K/s"),
    ("1/s", "rate", "0.010 ± 0.001 1/s"),
    ("V", "voltage", "12.00 ± 0.01 V"),
    ("A", "current", "1.500 ± 0.002 A"),
    ("ohm", "resistance", "8.00 ± 0.01 ohm"),
    ("C", "electric charge", "100.0 ± 0.1 C"),
    ("F", "capacitance", "1.0 ± 0.1 F"),
    ("m", "length", "0.100 ± 0.001 m"),
    ("m**2", "area", "0.0100 ± 0.0001 m**2"),
    ("Pa", "pressure", "101325 ± 100 Pa"),
)

RELATIVE_UNITS = ("%", "percent", "ppm", "permille", "‰")


def describe_dimension(unit: str) -> str:
    """Return the dimension of ``unit`` in words, e.g. ``"volume"`` for ``"mL"``.

    Unknown dimensions are described by pint's dimensionality, e.g.
    ``"quantity of dimension [length] ** 4"``.

    Raises
    ------
    pint.UndefinedUnitError
        If ``unit`` is not a unit.
    """
    return describe(canonical_unit(unit))


@lru_cache(maxsize=256)
def expectation(expected: str) -> str:
    """Return words such as ``"a volume like '100.0 ± 0.1 mL'"`` for a reference unit."""
    words, example = words_and_example(canonical_unit(expected))
    if is_absolute_temperature(expected):
        return f"a temperature like '{example}' (°C, degC, K or °F)"
    if is_time(expected):
        return f"a time like '{example}' (s, min, h, or m:ss like '3:00')"
    if words.startswith("quantity of dimension"):
        return f"a {words} like '1.0 ± 0.1 {expected}'"
    return f"{article(words)} {words} like '{example}'"


def article(words: str) -> str:
    """Return "a" or "an" for ``words``."""
    return "an" if words and words[0] in "aeiou" else "a"


def canonical_unit(unit: str) -> str:
    """Return ``unit`` with degree signs rewritten into the names pint reads."""
    unit = unit.strip()
    spelled = UNIT_SPELLINGS.get(unit)
    if spelled is not None:
        return spelled
    if "°" in unit or "℃" in unit or "℉" in unit:
        for written, name in UNIT_SPELLINGS.items():
            unit = unit.replace(written, name)
    return unit


@lru_cache(maxsize=1)
def _dimension_table() -> dict[object, tuple[str, str]]:
    """Map pint dimensionalities to (words, example)."""
    return {parse_unit(ref).dimensionality: (words, ex) for ref, words, ex in DIMENSIONS}


def words_and_example(unit: str) -> tuple[str, str]:
    """Return (words, example) for the dimension of an already canonical unit."""
    dimensionality = parse_unit(unit).dimensionality
    found = _dimension_table().get(dimensionality)
    if found is not None:
        return found
    return f"quantity of dimension {dimensionality}", f"1.0 ± 0.1 {unit}"


def describe(unit: str) -> str:
    """Return the words for the dimension of an already canonical unit."""
    return words_and_example(unit)[0]


@lru_cache(maxsize=64)
def is_absolute_temperature(expected: str) -> bool:
    """Tell whether ``expected`` is a temperature unit (absolute temperatures)."""
    return parse_unit(canonical_unit(expected)).dimensionality == parse_unit("K").dimensionality


@lru_cache(maxsize=64)
def is_time(expected: str) -> bool:
    """Tell whether ``expected`` is a time unit."""
    return parse_unit(expected).dimensionality == parse_unit("s").dimensionality


@lru_cache(maxsize=2048)
def check_unit(unit_text: str, expected: str) -> tuple[str, str | None]:
    """Return (canonical unit, problem) for a written unit and an expected one.

    ``problem`` is ``None`` when the unit is fine, else a message in which
    ``TEXT`` stands for the whole entry. Cached: the same few units repeat
    across thousands of run files.
    """
    t = TEXT
    if PM_IN_UNIT_RE.match(unit_text):
        return unit_text, f"the uncertainty after '±' in {t} is not a finite number"
    if PM_IN_UNIT_RE.search(unit_text):
        return unit_text, f"got {t}; write the uncertainty before the unit: 'value ± u unit'"
    if re.match(r",\d", unit_text):
        return unit_text, f"{t} uses a decimal comma; write a decimal point"
    if unit_text[:1] == ":":
        return unit_text, f"could not read {t}; write clock times as m:ss or h:mm:ss, no unit"
    if unit_text and unit_text[0] in ".0123456789":
        return unit_text, f"could not read {t} as one number followed by a unit"
    unit = canonical_unit(unit_text)
    expected_unit = parse_unit(canonical_unit(expected))
    if not unit:
        if expected_unit.dimensionless:
            return "", None
        return "", f"missing unit in {t}"
    if expected != "" and any(rel in unit for rel in RELATIVE_UNITS):
        return unit, (
            f"got {t}; a relative (%) uncertainty is not accepted, "
            "give the standard uncertainty in the unit of the value"
        )
    try:
        parsed = parse_unit(unit)
    except Exception:  # pint raises several types for unreadable units
        return unit, f"unknown unit '{unit_text}' in {t}"
    if parsed.dimensionality != expected_unit.dimensionality:
        got = describe(unit)
        hint = ""
        if is_absolute_temperature(expected) and unit in ("C", "F"):
            hint = f"; '{unit}' is the {got} unit, write °{unit} or deg{unit} for degrees"
        return unit, f"got {t} ({article(got)} {got}){hint}"
    if is_absolute_temperature(expected) and "delta_" in unit:
        return unit, f"got the temperature difference {t}; give an absolute temperature"
    return unit, None
