"""The header of an instrument export: which column holds the time, which the temperature, in which unit.

A header cell names its unit in brackets (``Time (s)``, ``T1 [°C]``), after a slash or an underscore
(``T1/K``, ``time_s``), or in a units row under the header; a time column without a unit holds
date-times or clock times (:mod:`calc.io.time_stamps`). Used by :mod:`calc.io.logger_formats`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from calc.errors import InputError

__all__ = [
    "DATE_NAMES",
    "TEMPERATURE_COLUMN_HELP",
    "TIME_NAMES",
    "Column",
    "choose_temperature",
    "is_time",
    "is_units_row",
    "parse_header_cell",
    "time_columns",
    "unit_key",
]

TEMPERATURE_COLUMN_HELP = (
    'set temperature_column in the run file to the column\'s header name (e.g. "T2") or to its '
    "column number counted from 1 (e.g. 3)"
)

_BRACKET_RE = re.compile(r"(.*?)\s*[(\[]\s*(.*?)\s*[)\]]")


_TIME_UNITS = {
    "s",
    "sec",
    "secs",
    "second",
    "seconds",
    "ms",
    "min",
    "mins",
    "minute",
    "minutes",
    "h",
    "hr",
    "hour",
    "hours",
    "mm:ss",
    "m:ss",
    "min:s",
    "min:sec",
    "h:mm:ss",
    "hh:mm:ss",
    "h:m:s",
}
_TEMPERATURE_UNITS = {
    "c",
    "°c",
    "ºc",
    "℃",
    "degc",
    "deg c",
    "° c",
    "celsius",
    "k",
    "kelvin",
    "f",
    "°f",
    "ºf",
    "℉",
    "degf",
    "deg f",
    "° f",
    "fahrenheit",
}
TIME_NAMES = {
    "time",
    "t",
    "elapsed",
    "elapsed time",
    "elapsed_time",
    "clock",
    "zeit",
    "datetime",
    "date time",
    "date/time",
    "date_time",
    "timestamp",
    "time stamp",
    "zeitstempel",
}
DATE_NAMES = {"date", "datum", "day"}
_TEMPERATURE_NAME_RE = re.compile(
    r"(?:t|temp|temperature|temperatur|theta|θ|tc|probe|sensor|ch|channel)[ _\-.]?\d{0,3}", re.IGNORECASE
)


@dataclass
class Column:
    """One header cell: the name, the unit it gives (if any) and the cell as written."""

    name: str
    unit: str | None  # lower-case unit key, None when the header gives none
    written: str  # the cell as written


_MAX_CELL = 100  # longer header cells are not parsed: _BRACKET_RE backtracks quadratically in runs of spaces


def unit_key(cell: str) -> str | None:
    cell = cell.strip()
    if len(cell) > _MAX_CELL:
        return None
    bracket = _BRACKET_RE.fullmatch(cell)
    if bracket is not None and not bracket.group(1):
        cell = bracket.group(2)
    key = cell.lower()
    return key if key in _TIME_UNITS or key in _TEMPERATURE_UNITS else None


def is_units_row(cells: list[str], width: int) -> bool:
    known = [c for c in cells if unit_key(c)]
    return bool(known) and len(cells) <= width and all(unit_key(c) or c in ("-", "") for c in cells)


def parse_header_cell(cell: str) -> Column:
    if len(cell) > _MAX_CELL:
        return Column(cell[:_MAX_CELL], None, cell[:_MAX_CELL])
    bracket = _BRACKET_RE.fullmatch(cell)
    if bracket is not None and unit_key(bracket.group(2)):
        return Column(bracket.group(1).strip(), unit_key(bracket.group(2)), cell)
    for sep in ("/", "_"):
        if sep in cell:
            name, _, unit = cell.rpartition(sep) if sep == "_" else cell.partition(sep)
            if unit_key(unit) and name.strip():
                return Column(name.strip(), unit_key(unit), cell)
    return Column(cell, None, cell)


def is_time(col: Column) -> bool:
    if col.unit is not None and col.unit in _TIME_UNITS:
        return True
    return col.unit is None and col.name.lower() in TIME_NAMES


def is_temperature(col: Column) -> bool:
    if col.unit is not None:
        return col.unit in _TEMPERATURE_UNITS
    return bool(_TEMPERATURE_NAME_RE.fullmatch(col.name)) and col.name.lower() not in TIME_NAMES


def choose_temperature(columns: list[Column], column: str | int | None, source: str) -> int:
    """Return the index of the temperature column to read."""
    names = ", ".join(f"{i + 1}: {c.written!r}" for i, c in enumerate(columns))
    if column is not None:
        if isinstance(column, int):
            if not 1 <= column <= len(columns):
                message = f"column {column} does not exist: the log has {len(columns)} columns ({names})"
                raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
            index = column - 1
        else:
            wanted = column.strip().lower()
            found = [i for i, c in enumerate(columns) if wanted in (c.name.lower(), c.written.lower())]
            if len(found) != 1:
                what = "no column" if not found else f"{len(found)} columns"
                message = f"{what} of the log is named {column!r} (columns: {names})"
                raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
            index = found[0]
        if is_time(columns[index]):
            message = f"column {index + 1} ({columns[index].written!r}) holds the time, not a temperature"
            raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
        return index
    temps = [i for i, c in enumerate(columns) if is_temperature(c)]
    if len(temps) == 1:
        return temps[0]
    if not temps:
        message = f"found no temperature column in the header ({names})"
    else:
        listed = ", ".join(f"{i + 1}: {columns[i].written!r}" for i in temps)
        message = f"the log has {len(temps)} temperature columns ({listed}) and the run file does not say which to use"
    raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")


def time_columns(columns: list[Column], source: str, line: int) -> list[int]:
    """Return the index of the time column, or of the date and time columns."""
    for i, col in enumerate(columns):
        if col.name.lower() in DATE_NAMES and col.unit is None:
            if i + 1 < len(columns) and is_time(columns[i + 1]) and columns[i + 1].unit is None:
                return [i, i + 1]
        if is_time(col):
            return [i]
    names = ", ".join(repr(c.written) for c in columns)
    message = f"found no time column in the header ({names}); expected a column named like 'time (s)' or 'Time' "
    raise InputError(message + "with a units row under the header", source=source, line=line)
