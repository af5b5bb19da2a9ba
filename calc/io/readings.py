"""Read the thermometer's CSV log: time and temperature, one reading per line.

The file has two columns, time then temperature. Our own files start with the
header ``time_s,temperature_C``. Other headers name each column's unit in one
of these ways::

    t/s   T/K   temp/°C          name/unit
    time (s)   Temperature (°F)  name (unit) or name [unit]
    time_min   temperature_K     name_unit

Time units: ``s``, ``ms``, ``min``, ``h`` and clock times ``mm:ss`` or
``h:mm:ss`` (cells such as ``3:05`` or ``1:03:05``). Temperature units: ``°C``
(also ``C``, ``degC``, ``℃``), ``K`` and ``°F`` (also ``F``, ``degF``).
Columns after the second are ignored when a header names the first two as time
and temperature.

**A file without a header** must have exactly two numeric columns; they are read
as time in seconds (or clock times, if the first cell is one) and temperature
in degrees Celsius.

Cells are separated by ``,``, ``;`` or a tab (the first non-comment line decides).
Instrument exports (metadata lines, space-separated columns, a units row, date-time
stamps, several temperature columns) are first rewritten by :mod:`calc.io.logger_formats`.
With ``;`` or tab separators a decimal comma is accepted (``12,5;21,37``).
Blank lines and lines starting with ``#`` are skipped; a UTF-8 byte-order mark
is dropped. :func:`read_readings` reads UTF-8 and falls back to Windows-1252
(a common encoding of ``°`` in exported logs).

Checks that reject a file (:class:`calc.errors.InputError`, naming the line):
cells that are not numbers, NaN or infinite values, a time that goes back (a
repeated time stamp is kept; the analysis merges it, docs/methods.md §8.3), fewer than :data:`MIN_READINGS` readings, an unknown unit in the
header, and temperatures that do not fit the stated unit: a median above 150
when the unit is °C (looks like kelvin), a median below 150 when the unit is K
(looks like °C), or any reading outside −50…150 °C.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass

import numpy as np

from calc import limits
from calc.errors import InputError
from calc.io.files import read_limited
from calc.io.log_layout import CLOCK_RE, EXPECTED_HEADER, NUMBER_RE, Layout, read_layout, skipped, split_cells
from calc.io.logger_formats import normalize_export

__all__ = ["Readings", "read_readings", "parse_readings", "MIN_READINGS", "CELSIUS_RANGE"]

MIN_READINGS = 10
"""The fewest readings a log may have."""

CELSIUS_RANGE = (-50.0, 150.0)
"""Temperatures (°C) a coffee-cup calorimeter log can plausibly hold."""

_KELVIN_MEDIAN = 150.0  # a median above this in "°C" (or below it in "K") means the wrong unit
_KELVIN_OFFSET = 273.15  # 0 °C in kelvin (SI Brochure, 9th ed., 2.3.1)


_UNIT_SYMBOL = {"degC": "°C", "K": "K", "degF": "°F"}
_NONFINITE_RE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.IGNORECASE)
_Parsed = tuple[np.ndarray, np.ndarray, np.ndarray]  # times (s), temperatures, line numbers


@dataclass
class Readings:
    """The readings of one thermometer log, in seconds and kelvin.

    Attributes
    ----------
    time_s:
        Times in seconds, never decreasing (may start below zero; a repeated stamp is
        kept for the analysis to merge).
    temperature_K:
        Absolute temperatures in kelvin.
    lines:
        The 1-based line number of each reading in ``source``, for messages.
    source:
        The file name as given.
    time_unit:
        The time unit of the file: ``"s"``, ``"ms"``, ``"min"``, ``"h"``,
        ``"mm:ss"`` or ``"h:mm:ss"``.
    temperature_unit:
        The temperature unit of the file: ``"degC"``, ``"K"`` or ``"degF"``.
    """

    time_s: np.ndarray
    temperature_K: np.ndarray
    lines: np.ndarray
    source: str
    time_unit: str
    temperature_unit: str

    def __len__(self) -> int:
        """Return the number of readings."""
        return int(self.time_s.size)


def read_readings(
    path: str | os.PathLike[str], *, source: str | None = None, column: str | int | None = None
) -> Readings:
    """Read a thermometer log from ``path``.

    Parameters
    ----------
    path:
        The CSV file.
    source:
        The name to use in messages; defaults to ``path`` as given.
    column:
        The temperature column to read from an export with several (header name or
        1-based column number; :mod:`calc.io.logger_formats`).

    Returns the :class:`Readings`; raises :class:`InputError` if the file cannot be read, is not
    text, or fails a check of :func:`parse_readings`.
    """
    name = source if source is not None else os.fspath(path)
    data = read_limited(
        path, limit="readings_bytes", what="the readings file", expected="a CSV thermometer log", source=name
    )
    if b"\x00" in data:
        message = "this is not a text file (it contains NUL bytes); expected a CSV log"
        raise InputError(message, source=name)
    for encoding in ("utf-8-sig", "cp1252"):
        try:
            return parse_readings(data.decode(encoding), source=name, column=column)
        except UnicodeDecodeError:
            continue
    raise InputError("cannot decode the file; expected UTF-8 text", source=name)


def parse_readings(text: str, *, source: str, column: str | int | None = None) -> Readings:
    """Parse the text of a thermometer log.

    Parameters
    ----------
    text:
        The whole file.
    source:
        The file name, for messages.
    column:
        The temperature column to read (see :func:`read_readings`).

    Returns the :class:`Readings`; raises :class:`InputError`, naming the line and what was
    expected, for the problems listed in the module docstring.
    """
    limits.require_size(len(text), "readings_bytes", what=f"the readings file ({len(text)} characters)", source=source)
    lines = (text[1:] if text.startswith("\ufeff") else text).splitlines()
    limits.require_size(len(lines), "readings_rows", what=f"the readings file ({len(lines)} lines)", source=source)
    export = normalize_export(lines, column, source)  # instrument exports, line for line
    if export is not None:
        lines = export.lines
    first = next((i for i, line in enumerate(lines) if not skipped(line)), None)
    if first is None:
        message = f"the file is empty; expected {EXPECTED_HEADER} and at least "
        raise InputError(message + f"{MIN_READINGS} readings", source=source)
    layout = read_layout(lines[first], first, source)
    long_lines = max(map(len, lines)) > 3 * limits.get("cell_chars") + 8  # a cell may be over the limit
    parsed = (None if long_lines else _parse_fast(lines, layout)) or _parse_careful(lines, layout, source)
    return _checked(*parsed, layout, source)


def _parse_fast(lines: list[str], layout: Layout) -> _Parsed | None:
    """Convert all data lines at once; return None if anything needs a closer look.

    Only clean files take this path: ASCII, no blank or comment lines between
    readings, the same number of cells on every line, every cell a finite
    number. Anything else goes to :func:`_parse_careful`, which names the line.
    """
    if layout.seconds_per_unit is None:
        return None
    body = lines[layout.first_row :]
    while body and not body[-1].strip():
        body.pop()
    joined = "\n".join(body)
    if not body or not joined.isascii() or "_" in joined or '"' in joined:
        return None
    delimiter = layout.delimiter
    if delimiter != ",":
        joined = joined.replace(",", ".")
    # Every line must hold the same number of separators, else cells would pair up wrongly.
    raw = np.frombuffer(joined.encode("ascii"), dtype=np.uint8)
    line_of_byte = np.cumsum(raw == 10)
    per_line = np.bincount(line_of_byte[raw == ord(delimiter)], minlength=len(body))
    columns = int(per_line[0]) + 1
    if columns != (layout.columns or 2) or (per_line != per_line[0]).any():
        return None
    cells = joined.replace("\n", delimiter).split(delimiter)
    try:
        flat = np.fromiter(map(float, cells), dtype=np.float64, count=len(cells))
    except ValueError:
        return None
    values = flat.reshape(len(body), columns)[:, :2]
    if not np.isfinite(values).all():
        return None
    numbers = np.arange(layout.first_row + 1, layout.first_row + 1 + len(body), dtype=np.int64)
    with np.errstate(over="ignore"):  # an overflow to inf is reported by _checked, with its line
        times = values[:, 0] * layout.seconds_per_unit
    return times, values[:, 1].copy(), numbers


def _parse_careful(lines: list[str], layout: Layout, source: str) -> _Parsed:
    """Convert the data lines one by one, naming the line of the first problem."""
    times: list[float] = []
    temperatures: list[float] = []
    numbers: list[int] = []
    delimiter = layout.delimiter
    most = layout.columns or 2
    for index in range(layout.first_row, len(lines)):
        if skipped(lines[index]):
            continue
        line = index + 1
        cells = split_cells(lines[index], delimiter)
        for cell in cells:
            limits.require_size(
                len(cell),
                "cell_chars",
                what=f"the cell {limits.shorten(cell)!r} ({len(cell)} characters)",
                source=source,
                line=line,
            )
        if len(cells) < 2:
            shown = {"\t": "a tab", ";": "';'", ",": "','"}[delimiter]
            message = f"found 1 cell ({limits.shorten(cells[0])!r}); expected 2 cells, time and temperature, "
            raise InputError(message + f"separated by {shown}", source=source, line=line)
        if len(cells) > most:
            if layout.columns is None:
                found = f"found {len(cells)} cells but the file has no header"
                wanted = "two columns (time in s, temperature in °C), or " + EXPECTED_HEADER
            else:
                found = f"found {len(cells)} cells"
                wanted = f"at most {most} cells, as in the header"
            if delimiter == ",":
                wanted += "; with decimal commas, separate the cells with ';' or a tab"
            raise InputError(f"{found}; expected {wanted}", source=source, line=line)
        times.append(_time_cell(cells[0], layout, source, line))
        temperatures.append(_temperature_cell(cells[1], layout, source, line))
        numbers.append(line)
    return np.array(times, float), np.array(temperatures, float), np.array(numbers, np.int64)


def _number(cell: str, delimiter: str) -> float | None:
    """Return the number in ``cell`` (decimal comma allowed unless the separator is ',')."""
    if delimiter != ",":
        cell = cell.replace(",", ".")
    return float(cell) if NUMBER_RE.fullmatch(cell) else None


def _time_cell(cell: str, layout: Layout, source: str, line: int) -> float:
    """Return the time in seconds from one cell."""
    unit = layout.time_unit
    if layout.seconds_per_unit is None:
        clock = CLOCK_RE.fullmatch(cell.replace(",", ".") if layout.delimiter != "," else cell)
        if clock is None:
            message = f"the time cell {limits.shorten(cell)!r} is not a clock time; expected {unit} like '3:05'"
            raise InputError(message, source=source, line=line)
        sign, hours, minutes, seconds = clock.groups()
        if float(seconds) >= 60 or (hours is not None and float(minutes) >= 60):
            message = f"the time cell {limits.shorten(cell)!r} is not a valid clock time; expected {unit} "
            message += "with minutes and seconds below 60"
            raise InputError(message, source=source, line=line)
        # float(), not int(): int() refuses more than 4300 digits and a huge int
        # overflows when mixed with floats (found by the hostile-input tests).
        value = 3600.0 * float(hours or 0) + 60.0 * float(minutes) + float(seconds)
        if not np.isfinite(value):
            message = f"the time cell {limits.shorten(cell)!r} is too large; expected {unit} like '3:05'"
            raise InputError(message, source=source, line=line)
        return -value if sign == "-" else value
    number = _number(cell, layout.delimiter)
    if number is not None and np.isfinite(number):
        return number * layout.seconds_per_unit
    if CLOCK_RE.fullmatch(cell):
        said = "file has no header" if layout.header_line is None else f"header says {unit}"
        message = f"the time cell {limits.shorten(cell)!r} is a clock time but the {said}; expected a time in "
        message += f"{unit}, or 'time (mm:ss)' in the header"
    else:
        message = _not_a_number("time", cell, f"a time in {unit} like '12.5'")
    raise InputError(message, source=source, line=line)


def _temperature_cell(cell: str, layout: Layout, source: str, line: int) -> float:
    """Return the temperature, in the file's unit, from one cell."""
    value = _number(cell, layout.delimiter)
    if value is not None and np.isfinite(value):
        return value
    symbol = _UNIT_SYMBOL[layout.temperature_unit]
    message = _not_a_number("temperature", cell, f"a temperature in {symbol} like '21.37'")
    raise InputError(message, source=source, line=line)


def _not_a_number(column: str, cell: str, expected: str) -> str:
    """Return the message for a cell that is not a finite number."""
    if not cell:
        return f"the {column} cell is empty; expected {expected}"
    if _NONFINITE_RE.fullmatch(cell) or NUMBER_RE.fullmatch(cell.replace(",", ".")):
        return f"the {column} cell {limits.shorten(cell)!r} is not finite (NaN or infinity); expected {expected}"
    return f"the {column} cell {limits.shorten(cell)!r} is not a number; expected {expected}"


def _checked(times: np.ndarray, temperatures: np.ndarray, numbers: np.ndarray, layout: Layout, source: str) -> Readings:
    """Check count, temperature plausibility and time order; convert to kelvin."""
    count = times.size
    if count < MIN_READINGS:
        found = "no readings" if count == 0 else f"only {count} reading" + "s" * (count != 1)
        message = f"found {found}; expected at least {MIN_READINGS} lines of time and temperature"
        line = int(numbers[-1]) if count else layout.header_line
        raise InputError(message, source=source, line=line)
    # A time finite as written can overflow in seconds ("1e308" in hours);
    # found by the hostile-input tests, which got a log with an infinite time.
    too_large = np.flatnonzero(~np.isfinite(times))
    if too_large.size:
        message = f"a time of more than {np.finfo(float).max:.3g} s cannot be represented; "
        message += f"expected a time in {layout.time_unit}"
        raise InputError(message, source=source, line=int(numbers[too_large[0]]))
    unit = layout.temperature_unit
    symbol = _UNIT_SYMBOL[unit]
    said = "the file has no header, so they are read as °C"
    if layout.header_line is not None:
        said = f"the header says {symbol}"
    median = float(np.median(temperatures))
    looks_like = ""
    if unit == "degC" and median > _KELVIN_MEDIAN:
        looks_like, wanted = "kelvin", "°C values, or a header such as 'time_s,temperature_K'"
    elif unit == "K" and median < _KELVIN_MEDIAN:
        looks_like, wanted = "°C", "kelvin values, or a header such as 'time_s,temperature_C'"
    if looks_like:
        message = f"the temperatures look like {looks_like} (median {median:g}) but {said}"
        raise InputError(f"{message}; expected {wanted}", source=source, line=layout.header_line)
    kelvin = _to_kelvin(temperatures, unit)
    low, high = (limit + _KELVIN_OFFSET for limit in CELSIUS_RANGE)
    outside = np.flatnonzero((kelvin < low) | (kelvin > high))
    if outside.size:
        i = int(outside[0])
        message = (
            f"the temperature {temperatures[i]:g} {symbol} is outside the range "
            f"{_from_kelvin(low, unit):.6g} to {_from_kelvin(high, unit):.6g} {symbol}"
            + (" (-50 to 150 °C)" if unit != "degC" else "")
            + " expected in a solution calorimeter; check the unit in the header"
        )
        raise InputError(message, source=source, line=int(numbers[i]))
    steps = np.diff(times)
    # a repeated time stamp is kept (the analysis merges it); a time going back is refused
    if not (steps >= 0).all() or (times == times[0]).all():
        if (times == times[0]).all():
            message = f"all {count} times are equal ({times[0]:g} s); expected strictly "
            message += "increasing times in the first column"
            raise InputError(message, source=source, line=int(numbers[1]))
        i = int(np.flatnonzero(steps < 0)[0])
        message = (
            f"the time {times[i + 1]:g} s is before the time {times[i]:g} s on line "
            f"{int(numbers[i])}; expected increasing times"
        )
        raise InputError(message, source=source, line=int(numbers[i + 1]))
    return Readings(times, kelvin, numbers, source, layout.time_unit, unit)


def _to_kelvin(values: np.ndarray, unit: str) -> np.ndarray:
    """Convert temperatures in ``unit`` to kelvin.

    °C: T/K = t/°C + 273.15 (SI Brochure, 9th ed.); °F: T/K = (t/°F + 459.67)·5/9.
    """
    if unit == "degC":
        return values + _KELVIN_OFFSET
    if unit == "degF":
        return (values + 459.67) * (5.0 / 9.0)
    return values.astype(np.float64, copy=True)


def _from_kelvin(kelvin: float, unit: str) -> float:
    """Convert one temperature in kelvin to ``unit`` (the inverse of :func:`_to_kelvin`)."""
    if unit == "degC":
        return kelvin - _KELVIN_OFFSET
    return kelvin * 1.8 - 459.67 if unit == "degF" else kelvin
