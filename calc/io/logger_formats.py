"""Instrument exports: turn what data loggers write into the plain two-column log.

:func:`calc.io.readings.parse_readings` reads a log with one header line and ``,``, ``;``
or tab separators. Instruments export more than that; this module rewrites such a
file, line for line (so every line number in a message still points into the file as
uploaded), into a two-column log the reader already checks:

* metadata before the data: ``#`` comments, ``##KEY value`` lines and ``key: value``
  lines (the ``##`` and ``key: value`` entries are kept in :attr:`Export.metadata`);
* columns separated by spaces (a run of spaces or tabs is one separator; a header
  cell's bracketed unit may follow its name after a space: ``Time (s) T1 (°C)``);
* a units row under the header (``Time T1 T2`` then ``s °C °C``);
* time stamps as date-times (``2026-03-04 10:15:02``, ``2026-03-04T10:15:02.5``,
  ``04.03.2026 10:15:02``) or clock times of day (``10:15:02``) in a column named
  time (or date + time) without a unit: they become seconds since the first reading
  (across midnight, too);
* several temperature columns: the run file's ``temperature_column`` picks one by its
  header name (``"T2"``) or by its column number in the file, counted from 1 as in a
  spreadsheet (``3``). With two or more temperature columns and no choice, the file is
  refused with a message that names them.

A file that needs none of this is returned untouched (the fast path of the reader).
"""

from __future__ import annotations

import datetime as _dt
import re
from collections.abc import Callable
from dataclasses import dataclass, field

from calc.errors import InputError

__all__ = ["Export", "normalize_export", "TEMPERATURE_COLUMN_HELP"]

TEMPERATURE_COLUMN_HELP = (
    'set temperature_column in the run file to the column\'s header name (e.g. "T2") or to its '
    "column number counted from 1 (e.g. 3)"
)

_META_RE = re.compile(r"[A-Za-z][\w .\-/()]{0,60}:(?:\s.*)?")
_HASH_META_RE = re.compile(r"##\s*([A-Za-z][\w.\-]*)\s*[:=]?\s*(.*)")
_NUMBER_RE = re.compile(r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?", re.ASCII)
_BRACKET_RE = re.compile(r"(.*?)\s*[(\[]\s*(.*?)\s*[)\]]")
_DATE_RE = re.compile(r"(\d{4})[-/](\d{1,2})[-/](\d{1,2})|(\d{1,2})\.(\d{1,2})\.(\d{4})", re.ASCII)
_CLOCK_RE = re.compile(r"(\d{1,2}):(\d{2}):(\d{2}(?:[.,]\d+)?)", re.ASCII)
_CLOCK_LIKE_RE = re.compile(r"[+-]?(?:\d+:)?\d+:\d\d(?:[.,]\d*)?", re.ASCII)
_STAMP_RE = re.compile(r"(\S+)[T ](\S+)", re.ASCII)

_TIME_UNITS = {"s", "sec", "secs", "second", "seconds", "ms", "min", "mins", "minute", "minutes",
               "h", "hr", "hour", "hours", "mm:ss", "m:ss", "min:s", "min:sec", "h:mm:ss", "hh:mm:ss",
               "h:m:s"}
_TEMPERATURE_UNITS = {"c", "°c", "ºc", "℃", "degc", "deg c", "° c", "celsius", "k", "kelvin", "f", "°f",
                      "ºf", "℉", "degf", "deg f", "° f", "fahrenheit"}
_TIME_NAMES = {"time", "t", "elapsed", "elapsed time", "elapsed_time", "clock", "zeit", "datetime",
               "date time", "date/time", "date_time", "timestamp", "time stamp", "zeitstempel"}
_DATE_NAMES = {"date", "datum", "day"}
_TEMPERATURE_NAME_RE = re.compile(
    r"(?:t|temp|temperature|temperatur|theta|θ|tc|probe|sensor|ch|channel)[ _\-.]?\d{0,3}", re.IGNORECASE
)


@dataclass
class Export:
    """An instrument export rewritten as a two-column log."""

    lines: list[str]
    metadata: dict[str, str] = field(default_factory=dict)
    column: str = ""  # the header of the temperature column read, when chosen from several


@dataclass
class _Column:
    name: str
    unit: str | None  # lower-case unit key, None when the header gives none
    written: str  # the cell as written


def normalize_export(lines: list[str], column: str | int | None, source: str) -> Export | None:
    """Return ``lines`` rewritten as a two-column log, or None when they need no rewriting.

    Raises
    ------
    InputError
        Naming the line or the field ``temperature_column`` and what to do.
    """
    metadata: dict[str, str] = {}
    out = list(lines)
    first = _blank_metadata(out, metadata)
    if first is None:
        return None
    header = out[first]
    plain = any(sep in header for sep in ",;\t") and first == _first_plain(lines)
    if plain and column is None and not _needs_rewrite(out, first, header):
        return None
    splitter = _splitter(header)
    cells = splitter(header)
    if len(cells) < 2:
        return None  # one cell: the reader's own message explains what a log needs
    if all(_is_number(c) or _CLOCK_LIKE_RE.fullmatch(c) for c in cells):
        return _headerless(out, first, splitter, column, source, metadata)
    columns = [_parse_header_cell(c) for c in cells]
    units_row = _next_data_line(out, first)
    if units_row is not None and _is_units_row(splitter(out[units_row]), len(columns)):
        for col, unit in zip(columns, splitter(out[units_row]), strict=False):
            key = _unit_key(unit)
            if col.unit is None and key:
                col.unit = key
        out[units_row] = ""
    return _rewrite(out, first, columns, splitter, column, source, metadata)


def _first_plain(lines: list[str]) -> int | None:
    return next((i for i, line in enumerate(lines) if line.strip() and not line.strip().startswith("#")), None)


def _blank_metadata(out: list[str], metadata: dict[str, str]) -> int | None:
    """Blank the ``key: value`` lines before the data, collect metadata; return the header's index."""
    for i, line in enumerate(out):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            found = _HASH_META_RE.fullmatch(stripped)
            if found:
                metadata[found.group(1)] = found.group(2).strip()
            continue
        if _META_RE.fullmatch(stripped) and not any(sep in stripped for sep in ",;\t"):
            key, _, value = stripped.partition(":")
            metadata[key.strip()] = value.strip()
            out[i] = ""
            continue
        return i
    return None


def _needs_rewrite(out: list[str], first: int, header: str) -> bool:
    """Tell whether a separated file needs rewriting: more than two columns, or a units row."""
    splitter = _splitter(header)
    cells = splitter(header)
    if all(_is_number(c) for c in cells):
        return False
    if len(cells) > 2:
        return True
    nxt = _next_data_line(out, first)
    if nxt is None:
        return False
    row = splitter(out[nxt])
    stamped = bool(row) and bool(_STAMP_RE.fullmatch(row[0]) or _CLOCK_RE.fullmatch(row[0]))
    first_col = _parse_header_cell(cells[0])
    if stamped and first_col.unit is None and first_col.name.lower() in _TIME_NAMES | _DATE_NAMES:
        return True  # date-times or clock times of day under a unit-less time header
    return _is_units_row(row, len(cells))


def _splitter(header: str) -> Callable[[str], list[str]]:
    for sep in ("\t", ";", ","):
        if sep in header:
            def split(line: str, sep: str = sep) -> list[str]:
                return [c.strip().strip('"').strip() for c in line.split(sep)]

            return split
    return _split_spaces


def _split_spaces(line: str) -> list[str]:
    """Split on runs of white space, keeping a bracketed unit with the name before it."""
    cells: list[str] = []
    for token in line.split():
        if cells and token[0] in "([" and not _is_number(cells[-1]) and not _closed(cells[-1]):
            cells[-1] = f"{cells[-1]} {token}"
        elif cells and cells[-1].count("(") > cells[-1].count(")"):
            cells[-1] = f"{cells[-1]} {token}"
        else:
            cells.append(token)
    return cells


def _closed(cell: str) -> bool:
    return cell.endswith((")", "]"))


def _is_number(cell: str) -> bool:
    return bool(_NUMBER_RE.fullmatch(cell))


def _next_data_line(out: list[str], after: int) -> int | None:
    for i in range(after + 1, len(out)):
        if out[i].strip() and not out[i].strip().startswith("#"):
            return i
    return None


_MAX_CELL = 100  # longer header cells are not parsed: _BRACKET_RE backtracks quadratically in runs of spaces


def _unit_key(cell: str) -> str | None:
    cell = cell.strip()
    if len(cell) > _MAX_CELL:
        return None
    bracket = _BRACKET_RE.fullmatch(cell)
    if bracket is not None and not bracket.group(1):
        cell = bracket.group(2)
    key = cell.lower()
    return key if key in _TIME_UNITS or key in _TEMPERATURE_UNITS else None


def _is_units_row(cells: list[str], width: int) -> bool:
    known = [c for c in cells if _unit_key(c)]
    return bool(known) and len(cells) <= width and all(_unit_key(c) or c in ("-", "") for c in cells)


def _parse_header_cell(cell: str) -> _Column:
    if len(cell) > _MAX_CELL:
        return _Column(cell[:_MAX_CELL], None, cell[:_MAX_CELL])
    bracket = _BRACKET_RE.fullmatch(cell)
    if bracket is not None and _unit_key(bracket.group(2)):
        return _Column(bracket.group(1).strip(), _unit_key(bracket.group(2)), cell)
    for sep in ("/", "_"):
        if sep in cell:
            name, _, unit = cell.rpartition(sep) if sep == "_" else cell.partition(sep)
            if _unit_key(unit) and name.strip():
                return _Column(name.strip(), _unit_key(unit), cell)
    return _Column(cell, None, cell)


def _is_time(col: _Column) -> bool:
    if col.unit is not None and col.unit in _TIME_UNITS:
        return True
    return col.unit is None and col.name.lower() in _TIME_NAMES


def _is_temperature(col: _Column) -> bool:
    if col.unit is not None:
        return col.unit in _TEMPERATURE_UNITS
    return bool(_TEMPERATURE_NAME_RE.fullmatch(col.name)) and col.name.lower() not in _TIME_NAMES


def _choose(columns: list[_Column], column: str | int | None, source: str) -> int:
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
        if _is_time(columns[index]):
            message = f"column {index + 1} ({columns[index].written!r}) holds the time, not a temperature"
            raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
        return index
    temps = [i for i, c in enumerate(columns) if _is_temperature(c)]
    if len(temps) == 1:
        return temps[0]
    if not temps:
        message = f"found no temperature column in the header ({names})"
    else:
        listed = ", ".join(f"{i + 1}: {columns[i].written!r}" for i in temps)
        message = f"the log has {len(temps)} temperature columns ({listed}) and the run file does not say which to use"
    raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")


def _time_columns(columns: list[_Column], source: str, line: int) -> list[int]:
    """Return the index of the time column, or of the date and time columns."""
    for i, col in enumerate(columns):
        if col.name.lower() in _DATE_NAMES and col.unit is None:
            if i + 1 < len(columns) and _is_time(columns[i + 1]) and columns[i + 1].unit is None:
                return [i, i + 1]
        if _is_time(col):
            return [i]
    names = ", ".join(repr(c.written) for c in columns)
    message = f"found no time column in the header ({names}); expected a column named like 'time (s)' or 'Time' "
    raise InputError(message + "with a units row under the header", source=source, line=line)


def _rewrite(out: list[str], first: int, columns: list[_Column], splitter: Callable[[str], list[str]],
             column: str | int | None, source: str,
             metadata: dict[str, str]) -> Export:
    time_idx = _time_columns(columns, source, first + 1)
    temp = _choose(columns, column, source)
    tcol = columns[temp]
    if tcol.unit is None:
        message = f"the temperature column {tcol.written!r} gives no unit; expected a unit in the header "
        raise InputError(message + "('T1 (°C)', 'T1/K') or a units row under it ('s °C')", source=source,
                         line=first + 1)
    tunit = columns[time_idx[-1]].unit
    out[first] = f"time ({tunit or 's'})\ttemperature ({tcol.unit})"
    stamps = tunit is None
    width = len(columns)
    zero: float | None = None
    previous = 0.0
    day = 0.0
    for i in range(first + 1, len(out)):
        stripped = out[i].strip()
        if not stripped or stripped.startswith("#"):
            continue
        cells = splitter(out[i])
        if stamps and len(cells) == width + 1 and len(time_idx) == 1 and _DATE_RE.fullmatch(cells[time_idx[0]]):
            cells[time_idx[0]: time_idx[0] + 2] = [f"{cells[time_idx[0]]} {cells[time_idx[0] + 1]}"]
        if len(cells) <= max(temp, time_idx[-1]):
            message = f"found {len(cells)} cells; expected {width} cells as in the header (line {first + 1})"
            raise InputError(message, source=source, line=i + 1)
        stamp = " ".join(cells[j] for j in time_idx)
        if stamps:
            seconds = _stamp_seconds(stamp, source, i + 1)
            if zero is None:
                zero = seconds
            elapsed = seconds - zero + day
            if elapsed < previous - 12 * 3600 and ":" in stamp and not _DATE_RE.match(stamp):
                day += 86400.0  # a clock time of day that passed midnight
                elapsed += 86400.0
            previous = elapsed
            stamp = f"{elapsed:.6f}".rstrip("0").rstrip(".")
        out[i] = f"{stamp}\t{cells[temp]}"
    return Export(out, metadata, tcol.written)


def _stamp_seconds(stamp: str, source: str, line: int) -> float:
    """Return seconds (on an arbitrary origin) of a date-time or a clock time of day."""
    date_part, clock_part = "", stamp
    found = _STAMP_RE.fullmatch(stamp)
    if found is not None:
        date_part, clock_part = found.groups()
    clock = _CLOCK_RE.fullmatch(clock_part)
    date = _DATE_RE.fullmatch(date_part) if date_part else None
    if clock is None or (date_part and date is None):
        message = f"the time stamp {stamp!r} is not a date-time or clock time; expected e.g. "
        raise InputError(message + "'2026-03-04 10:15:02' or '10:15:02'", source=source, line=line)
    hours, minutes, seconds = int(clock.group(1)), int(clock.group(2)), float(clock.group(3).replace(",", "."))
    if hours > 23 or minutes > 59 or seconds >= 61:
        raise InputError(f"the time stamp {stamp!r} is not a valid time of day", source=source, line=line)
    total = 3600.0 * hours + 60.0 * minutes + seconds
    if date is not None:
        y, m, d = (date.group(1), date.group(2), date.group(3)) if date.group(1) else (
            date.group(6), date.group(5), date.group(4))
        try:
            ordinal = _dt.date(int(y), int(m), int(d)).toordinal()
        except ValueError:
            raise InputError(f"the date in {stamp!r} does not exist", source=source, line=line) from None
        total += 86400.0 * ordinal
    return total


def _headerless(out: list[str], first: int, splitter: Callable[[str], list[str]], column: str | int | None,
                source: str,
                metadata: dict[str, str]) -> Export:
    """A log without a header: time, then temperatures; pick one by number when several."""
    width = len(splitter(out[first]))
    index = 1
    if column is not None:
        if not isinstance(column, int):
            message = f"the log has no header, so no column is named {column!r}"
            raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
        if not 2 <= column <= width:
            message = f"column {column} does not hold a temperature: the log has {width} columns, time first"
            raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
        index = column - 1
    elif width > 2:
        message = f"the log has no header and {width} columns"
        raise InputError(f"{message}; {TEMPERATURE_COLUMN_HELP}", source=source, field="temperature_column")
    for i in range(first, len(out)):
        stripped = out[i].strip()
        if not stripped or stripped.startswith("#"):
            continue
        cells = splitter(out[i])
        if len(cells) <= index:
            message = f"found {len(cells)} cells; expected {width} as on line {first + 1}"
            raise InputError(message, source=source, line=i + 1)
        out[i] = f"{cells[0]}\t{cells[index]}"
    return Export(out, metadata)
