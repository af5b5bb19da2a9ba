"""The first line of a thermometer log: its separator, header and units (:mod:`calc.io.readings`).

A header names each column and its unit (``time_s``, ``t/s``, ``time (min)``, ``Temperature (°F)``);
without one the columns are time in seconds (or clock times) and temperature in degrees Celsius.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from calc import limits
from calc.errors import InputError

__all__ = [
    "Layout",
    "read_layout",
    "split_cells",
    "skipped",
    "TIME_UNITS",
    "TEMPERATURE_UNITS",
    "UNITS_HELP",
    "EXPECTED_HEADER",
    "NUMBER_RE",
    "CLOCK_RE",
]

OWN_HEADER = "time_s,temperature_C"
# header unit (lower case) -> (canonical name, seconds per unit; None for clock times).
# 1 min = 60 s and 1 h = 3600 s (SI Brochure, 9th ed., Table 8).
TIME_UNITS: dict[str, tuple[str, float | None]] = {
    **dict.fromkeys(("s", "sec", "secs", "second", "seconds"), ("s", 1.0)),
    "ms": ("ms", 1e-3),
    **dict.fromkeys(("min", "mins", "minute", "minutes"), ("min", 60.0)),
    **dict.fromkeys(("h", "hr", "hour", "hours"), ("h", 3600.0)),
    **dict.fromkeys(("mm:ss", "m:ss", "min:s", "min:sec"), ("mm:ss", None)),
    **dict.fromkeys(("h:mm:ss", "hh:mm:ss", "h:m:s"), ("h:mm:ss", None)),
}
TEMPERATURE_UNITS: dict[str, str] = {
    **dict.fromkeys(("c", "°c", "ºc", "℃", "degc", "deg c", "° c", "celsius"), "degC"),
    **dict.fromkeys(("k", "kelvin"), "K"),
    **dict.fromkeys(("f", "°f", "ºf", "℉", "degf", "deg f", "° f", "fahrenheit"), "degF"),
}
_TIME_NAMES = {"time", "elapsed", "elapsed time", "elapsed_time", "clock", "zeit"}
_TEMPERATURE_NAMES = {"temp", "temperature", "theta", "θ", "temperatur"}
EXPECTED_HEADER = "a header like 'time_s,temperature_C', 't/s;T/K' or 'time (min),Temperature (°F)'"
UNITS_HELP = "s, ms, min, h, mm:ss or h:mm:ss for time and °C, K or °F for temperature"


# re.ASCII: "\d" is 0-9 only. Without it a cell "٣" (an Arabic-Indic three)
# was read as 3 by the line-by-line path (found by the hostile-input tests).
NUMBER_RE = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?", re.ASCII)
CLOCK_RE = re.compile(r"([+-])?(?:(\d+):)?(\d+):(\d\d(?:\.\d*)?)", re.ASCII)
_BRACKET_RE = re.compile(r"(.*?)\s*[(\[]\s*(.*?)\s*[)\]]")
# _BRACKET_RE backtracks in time quadratic in a run of spaces ("time" + 20 000
# spaces + "(s" took ~2 s; found by the hostile-input tests), so longer header
# cells are refused before it runs. Real ones are like "Temperature (°F)".
_MAX_HEADER_CELL = 100


@dataclass(frozen=True)
class Layout:
    """What the first non-comment line says about the file."""

    delimiter: str
    header_line: int | None  # 1-based line of the header, None if there is none
    first_row: int  # 0-based index (into the list of lines) of the first data line
    time_unit: str
    seconds_per_unit: float | None  # None for clock times
    temperature_unit: str
    columns: int | None  # header columns; None without a header


def skipped(line: str) -> bool:
    """Tell whether ``line`` is blank or a comment."""
    stripped = line.strip()
    return not stripped or stripped.startswith("#")


def split_cells(line: str, delimiter: str) -> list[str]:
    """Split a line into unquoted, stripped cells, dropping trailing empty cells after two."""
    cells = []
    for cell in line.split(delimiter):
        cell = cell.strip()
        if len(cell) >= 2 and cell[0] == cell[-1] == '"':
            cell = cell[1:-1].strip()
        cells.append(cell)
    while len(cells) > 2 and not cells[-1]:
        cells.pop()
    return cells


def read_layout(line: str, index: int, source: str) -> Layout:
    """Work out separator, header and units from the first non-comment line."""
    if line.strip() == OWN_HEADER:
        return Layout(",", index + 1, index + 1, "s", 1.0, "degC", 2)
    delimiter = "\t" if "\t" in line else ";" if ";" in line else ","
    cells = split_cells(line, delimiter)
    first_cell = cells[0].replace(",", ".") if delimiter != "," else cells[0]
    if NUMBER_RE.fullmatch(first_cell):
        return Layout(delimiter, None, index, "s", 1.0, "degC", None)
    if CLOCK_RE.fullmatch(first_cell):
        unit = "h:mm:ss" if first_cell.count(":") == 2 else "mm:ss"
        return Layout(delimiter, None, index, unit, None, "degC", None)
    number = index + 1
    if len(cells) < 2:
        message = (
            f"could not read the first line {limits.shorten(cells[0])!r} as a header or as two numbers; "
            f"expected {EXPECTED_HEADER}, or two numeric columns (time in s, temperature "
            "in °C) separated by ',', ';' or a tab"
        )
        raise InputError(message, source=source, line=number)
    kind0, unit0 = _header_cell(cells[0], "first", source, number)
    kind1, unit1 = _header_cell(cells[1], "second", source, number)
    if (kind0, kind1) != ("time", "temperature"):
        message = (
            f"the header names {kind0} ({limits.shorten(cells[0])!r}) then {kind1} ({limits.shorten(cells[1])!r}); "
            "expected time in the first column and temperature in the second"
        )
        raise InputError(message, source=source, line=number)
    time_unit, seconds = TIME_UNITS[unit0]
    unit = TEMPERATURE_UNITS[unit1]
    return Layout(delimiter, number, index + 1, time_unit, seconds, unit, len(cells))


def _header_cell(cell: str, column: str, source: str, line: int) -> tuple[str, str]:
    """Return ("time" | "temperature", unit key) for one header cell."""
    if len(cell) > _MAX_HEADER_CELL:
        message = f"the header cell ({column} column) is {len(cell)} characters long; expected "
        raise InputError(message + EXPECTED_HEADER, source=source, line=line)
    bracket = _BRACKET_RE.fullmatch(cell)
    if bracket is not None:
        name, unit = bracket.groups()
    elif "/" in cell or "_" in cell:
        name, _, unit = cell.partition("/") if "/" in cell else cell.rpartition("_")
        name, unit = name.strip(), unit.strip()
    else:
        message = f"the header cell {limits.shorten(cell)!r} ({column} column) gives no unit; expected "
        raise InputError(message + EXPECTED_HEADER, source=source, line=line)
    key = unit.lower()
    kind = "time" if key in TIME_UNITS else "temperature" if key in TEMPERATURE_UNITS else ""
    if not kind:
        message = f"unknown unit {unit!r} in the header cell {limits.shorten(cell)!r} ({column} column)"
        raise InputError(f"{message}; expected {UNITS_HELP}", source=source, line=line)
    named = {"t": "time", "T": "temperature"}.get(name)
    if named is None:
        lowered = name.lower()
        named = "time" if lowered in _TIME_NAMES else None
        named = "temperature" if lowered in _TEMPERATURE_NAMES else named
    if named is not None and named != kind:
        message = f"the header cell {limits.shorten(cell)!r} names a {named} but gives the {kind} unit {unit!r}"
        raise InputError(f"{message}; expected {UNITS_HELP}", source=source, line=line)
    return kind, key
