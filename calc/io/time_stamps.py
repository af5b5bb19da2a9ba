"""Time stamps of instrument exports: date-times and clock times of day read as seconds.

:func:`stamp_seconds` reads one stamp (``2026-03-04 10:15:02``, ``2026-03-04T10:15:02.5``,
``04.03.2026 10:15:02`` or ``10:15:02``); :class:`ElapsedClock` turns the stamps of a log into
seconds since its first reading, across midnight for clock times of day (:mod:`calc.io.logger_formats`).
"""

from __future__ import annotations

import datetime as _dt
import re

from calc.errors import InputError

__all__ = ["CLOCK_LIKE_RE", "CLOCK_RE", "DATE_RE", "STAMP_RE", "ElapsedClock", "stamp_seconds"]

DATE_RE = re.compile(r"(\d{4})[-/](\d{1,2})[-/](\d{1,2})|(\d{1,2})\.(\d{1,2})\.(\d{4})", re.ASCII)
CLOCK_RE = re.compile(r"(\d{1,2}):(\d{2}):(\d{2}(?:[.,]\d+)?)", re.ASCII)
CLOCK_LIKE_RE = re.compile(r"[+-]?(?:\d+:)?\d+:\d\d(?:[.,]\d*)?", re.ASCII)
STAMP_RE = re.compile(r"(\S+)[T ](\S+)", re.ASCII)


def stamp_seconds(stamp: str, source: str, line: int) -> float:
    """Return seconds (on an arbitrary origin) of a date-time or a clock time of day."""
    date_part, clock_part = "", stamp
    found = STAMP_RE.fullmatch(stamp)
    if found is not None:
        date_part, clock_part = found.groups()
    clock = CLOCK_RE.fullmatch(clock_part)
    date = DATE_RE.fullmatch(date_part) if date_part else None
    if clock is None or (date_part and date is None):
        message = f"the time stamp {stamp!r} is not a date-time or clock time; expected e.g. "
        raise InputError(message + "'2026-03-04 10:15:02' or '10:15:02'", source=source, line=line)
    hours, minutes, seconds = int(clock.group(1)), int(clock.group(2)), float(clock.group(3).replace(",", "."))
    if hours > 23 or minutes > 59 or seconds >= 61:
        raise InputError(f"the time stamp {stamp!r} is not a valid time of day", source=source, line=line)
    total = 3600.0 * hours + 60.0 * minutes + seconds
    if date is not None:
        y, m, d = (
            (date.group(1), date.group(2), date.group(3))
            if date.group(1)
            else (date.group(6), date.group(5), date.group(4))
        )
        try:
            ordinal = _dt.date(int(y), int(m), int(d)).toordinal()
        except ValueError:
            raise InputError(f"the date in {stamp!r} does not exist", source=source, line=line) from None
        total += 86400.0 * ordinal
    return total


class ElapsedClock:
    """Seconds since the first stamp read; a clock time of day that passes midnight goes on counting."""

    def __init__(self) -> None:
        self._zero: float | None = None
        self._previous = 0.0
        self._day = 0.0

    def elapsed(self, stamp: str, source: str, line: int) -> float:
        """Return the seconds of ``stamp`` (line ``line`` of ``source``) since the first stamp read."""
        seconds = stamp_seconds(stamp, source, line)
        if self._zero is None:
            self._zero = seconds
        elapsed = seconds - self._zero + self._day
        if elapsed < self._previous - 12 * 3600 and ":" in stamp and not DATE_RE.match(stamp):
            self._day += 86400.0  # a clock time of day that passed midnight
            elapsed += 86400.0
        self._previous = elapsed
        return elapsed
