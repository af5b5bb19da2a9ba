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

import re
from collections.abc import Callable
from dataclasses import dataclass, field

from calc.errors import InputError
from calc.io.log_columns import (
    DATE_NAMES,
    TEMPERATURE_COLUMN_HELP,
    TIME_NAMES,
    Column,
    choose_temperature,
    is_units_row,
    parse_header_cell,
    time_columns,
    unit_key,
)
from calc.io.time_stamps import CLOCK_LIKE_RE, CLOCK_RE, DATE_RE, STAMP_RE, ElapsedClock

__all__ = ["Export", "normalize_export", "TEMPERATURE_COLUMN_HELP"]

_META_RE = re.compile(r"[A-Za-z][\w .\-/()]{0,60}:(?:\s.*)?")
_HASH_META_RE = re.compile(r"##\s*([A-Za-z][\w.\-]*)\s*[:=]?\s*(.*)")
_NUMBER_RE = re.compile(r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?", re.ASCII)


@dataclass
class Export:
    """An instrument export rewritten as a two-column log."""

    lines: list[str]
    metadata: dict[str, str] = field(default_factory=dict)
    column: str = ""  # the header of the temperature column read, when chosen from several


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
    if all(_is_number(c) or CLOCK_LIKE_RE.fullmatch(c) for c in cells):
        return _headerless(out, first, splitter, column, source, metadata)
    columns = [parse_header_cell(c) for c in cells]
    units_row = _next_data_line(out, first)
    if units_row is not None and is_units_row(splitter(out[units_row]), len(columns)):
        for col, unit in zip(columns, splitter(out[units_row]), strict=False):
            key = unit_key(unit)
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
    stamped = bool(row) and bool(STAMP_RE.fullmatch(row[0]) or CLOCK_RE.fullmatch(row[0]))
    first_col = parse_header_cell(cells[0])
    if stamped and first_col.unit is None and first_col.name.lower() in TIME_NAMES | DATE_NAMES:
        return True  # date-times or clock times of day under a unit-less time header
    return is_units_row(row, len(cells))


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


def _rewrite(
    out: list[str],
    first: int,
    columns: list[Column],
    splitter: Callable[[str], list[str]],
    column: str | int | None,
    source: str,
    metadata: dict[str, str],
) -> Export:
    time_idx = time_columns(columns, source, first + 1)
    temp = choose_temperature(columns, column, source)
    tcol = columns[temp]
    if tcol.unit is None:
        message = f"the temperature column {tcol.written!r} gives no unit; expected a unit in the header "
        raise InputError(
            message + "('T1 (°C)', 'T1/K') or a units row under it ('s °C')", source=source, line=first + 1
        )
    tunit = columns[time_idx[-1]].unit
    out[first] = f"time ({tunit or 's'})\ttemperature ({tcol.unit})"
    stamps = tunit is None
    width = len(columns)
    clock = ElapsedClock()
    for i in range(first + 1, len(out)):
        stripped = out[i].strip()
        if not stripped or stripped.startswith("#"):
            continue
        cells = splitter(out[i])
        if stamps and len(cells) == width + 1 and len(time_idx) == 1 and DATE_RE.fullmatch(cells[time_idx[0]]):
            cells[time_idx[0] : time_idx[0] + 2] = [f"{cells[time_idx[0]]} {cells[time_idx[0] + 1]}"]
        if len(cells) <= max(temp, time_idx[-1]):
            message = f"found {len(cells)} cells; expected {width} cells as in the header (line {first + 1})"
            raise InputError(message, source=source, line=i + 1)
        stamp = " ".join(cells[j] for j in time_idx)
        if stamps:
            stamp = f"{clock.elapsed(stamp, source, i + 1):.6f}".rstrip("0").rstrip(".")
        out[i] = f"{stamp}\t{cells[temp]}"
    return Export(out, metadata, tcol.written)


def _headerless(
    out: list[str],
    first: int,
    splitter: Callable[[str], list[str]],
    column: str | int | None,
    source: str,
    metadata: dict[str, str],
) -> Export:
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
