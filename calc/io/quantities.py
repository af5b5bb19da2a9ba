"""Parse measured quantities written as ``"value ± u unit"``.

Run files give every measured quantity as a string such as ``"100.0 ± 0.1 mL"``
(``"+/-"`` may stand for ``"±"``), where ``u`` is a *standard* uncertainty in the
same unit as the value. A value written without ``±`` gets the default
uncertainty of half a unit of its last written digit, read as a rectangular
distribution (GUM, JCGM 100:2008, 4.3.7: a half-width ``a`` gives ``u = a/√3``)::

    u = 0.5 * 10**(-decimals) / sqrt(3)

where ``decimals`` counts the digits after the decimal point minus the written
exponent: ``"100 mL"`` has 0 decimals (u = 0.5/√3 mL) and ``"1.20e-3 mol"`` has
2 + 3 = 5 (u = 0.5e-5/√3 mol).

Times may also be written on a clock, ``"3:00"`` (minutes:seconds) or
``"1:02:03"`` (hours:minutes:seconds); they are returned in seconds.

Temperatures are absolute: ``"25.0 °C"`` is 298.15 K through ``m_as("K")``, while
its uncertainty converts as a difference (``u_as("K")``: 1 °C of u is 1 K).

The unit parse and the conversion factors are cached per unit string, so parsing
thousands of run files does not rebuild pint objects for every quantity.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import cast

from calc.errors import InputError
from calc.io.unit_text import (
    TEXT,
    canonical_unit,
    check_unit,
    describe_dimension,
    expectation,
    is_absolute_temperature,
    is_time,
)
from calc.io.units import Q_, ureg

__all__ = ["Measured", "parse_measured", "describe_dimension", "default_uncertainty"]

_SQRT3 = math.sqrt(3.0)

_NUM = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_PM = r"(?:±|\+/-|\+-)"
# re.ASCII: "\d" is 0-9 only. Without it "٣ mL" (an Arabic-Indic three) or a
# full-width "１" was read as a number, found by the hostile-input tests.
_MEASURED_RE = re.compile(
    rf"\s*(?P<open>\()?\s*(?P<value>{_NUM})\s*"
    rf"(?:{_PM}\s*(?P<u>{_NUM}))?\s*(?(open)\))\s*(?P<unit>.*?)\s*",
    re.ASCII,
)
_CLOCK_RE = re.compile(
    r"\s*(?P<sign>[+-])?(?:(?P<h>\d+):)?(?P<m>\d+):(?P<s>\d\d(?:\.\d*)?)\s*"
    rf"(?:{_PM}\s*(?P<u>{_NUM})\s*(?P<unit>.*?))?\s*",
    re.ASCII,
)
_NONFINITE_RE = re.compile(r"\s*\(?\s*[+-]?(?:nan|inf|infinity)\b", re.IGNORECASE)
# Longest entry read. Hostile-input tests found that pint's unit parser and the
# clock pattern take time quadratic in the length (a 20 000-character unit took
# ~3 s); real entries such as "(0.0500 ± 0.0002) mol/L" are far shorter.
MAX_ENTRY_LENGTH = 200


@dataclass(frozen=True, slots=True)
class Measured:
    """A measured value with its standard uncertainty and unit.

    Attributes
    ----------
    value:
        The magnitude in ``unit``.
    u:
        The standard uncertainty in ``unit`` (never negative).
    unit:
        The pint unit string, e.g. ``"mL"`` or ``"degC"``; ``""`` if dimensionless.
    distribution:
        ``"normal"`` when the text stated ``±``, ``"rectangular"`` for the
        last-digit default.
    text:
        The original text, for messages and provenance.
    """

    value: float
    u: float
    unit: str
    distribution: str
    text: str

    def m_as(self, unit: str) -> float:
        """Return the value converted to ``unit`` (offset-aware: 25 degC is 298.15 K).

        Raises
        ------
        pint.DimensionalityError
            If ``unit`` has another dimension.
        """
        scale, offset = _affine(self.unit, unit)
        return self.value * scale + offset

    def u_as(self, unit: str) -> float:
        """Return the uncertainty converted to ``unit`` as a difference (1 degC of u is 1 K)."""
        return self.u * _affine(self.unit, unit)[0]

    def to(self, unit: str) -> Measured:
        """Return the same measurement expressed in ``unit``."""
        scale, offset = _affine(self.unit, unit)
        return Measured(self.value * scale + offset, self.u * scale, unit, self.distribution, self.text)


def default_uncertainty(number_text: str) -> float:
    """Return the default standard uncertainty of a number written without ``±``.

    Half a unit of the last written digit, rectangular: ``0.5·10**(-d)/√3`` where
    ``d`` is the number of digits after the decimal point minus the exponent.

    Parameters
    ----------
    number_text:
        The number as written, e.g. ``"100"``, ``"21.50"`` or ``"1.20e-3"``.
    """
    mantissa, _, exponent = number_text.strip().lower().partition("e")
    _, _, fraction = mantissa.partition(".")
    # float() reads any exponent; int() refuses more than 4300 digits and
    # 10.0**400 overflows (both found by the hostile-input tests on "0e400").
    # Exponents this large give inf (or 0), which the caller rejects.
    shift = float(exponent) if exponent else 0.0
    try:
        return cast(float, 0.5 * 10.0 ** (shift - len(fraction)) / _SQRT3)
    except OverflowError:
        return math.inf


def parse_measured(text: str | int | float, *, field: str, expected: str, source: str | None = None) -> Measured:
    """Parse ``"value ± u unit"`` into a :class:`Measured` of the expected dimension.

    Parameters
    ----------
    text:
        The run-file entry: a string such as ``"100.0 ± 0.1 mL"``, ``"25.0 °C"``,
        ``"3:00"`` (a time), at most :data:`MAX_ENTRY_LENGTH` characters; or a
        bare number, accepted only when ``expected`` is ``""`` (dimensionless).
    field:
        The dotted run-file field, named in error messages.
    expected:
        A reference unit whose dimension the quantity must have (``"mL"``,
        ``"K"`` for an absolute temperature, ``"s"``, ``""`` for dimensionless…).
    source:
        The run file, named in error messages.

    Returns
    -------
    Measured
        Value and uncertainty in the unit as written (clock times in ``"s"``;
        ``°C`` spelled ``"degC"``, ``°F`` spelled ``"degF"``).

    Raises
    ------
    InputError
        For an empty entry, a missing or unknown unit, a wrong dimension, a
        non-finite value, a negative or non-finite uncertainty, or a
        temperature below absolute zero.
    """
    if isinstance(text, str):
        if len(text) > MAX_ENTRY_LENGTH:
            problem = f"the entry is {len(text)} characters long (at most {MAX_ENTRY_LENGTH})"
            raise _error(problem, expected, field, source)
        written = text.replace("−", "-") if "−" in text else text
        if ":" in written:
            clock = _CLOCK_RE.fullmatch(written)
            if clock is not None:
                if not is_time(expected):
                    raise _error(f"got the clock time {text!r}", expected, field, source)
                return _parse_clock(clock, text, field=field, expected=expected, source=source)
        match = _MEASURED_RE.fullmatch(written)
        if match is not None:
            value_text, u_text, unit_text = match.group("value", "u", "unit")
            return _build(value_text, u_text, unit_text, text, field, expected, source)
        raise _unreadable(text, field=field, expected=expected, source=source)
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return _bare_number(text, field=field, expected=expected, source=source)
    if text is None:
        raise _error("the entry is missing", expected, field, source)
    raise _error(f"got a {type(text).__name__} ({_shown(text)})", expected, field, source)


def _bare_number(text: int | float, *, field: str, expected: str, source: str | None) -> Measured:
    """Return a bare number as a dimensionless :class:`Measured` (refused when a unit is expected)."""
    try:
        number = repr(text)
    except ValueError:  # an int beyond Python's 4300-digit int-to-str limit (found by tests)
        number = "(a whole number of thousands of digits)"
    if expected != "":
        raise _error(f"missing unit: got the bare number {number}", expected, field, source)
    try:
        value = float(text)
    except OverflowError:
        value = math.inf
    if not math.isfinite(value):
        raise _error(f"the value {number} is not finite", expected, field, source)
    return Measured(value, default_uncertainty(number), "", "rectangular", number)


def _shown(value: object) -> str:
    """Return the repr of ``value`` cut to a few dozen characters (a list may be huge)."""
    try:
        text = repr(value)
    except (RecursionError, ValueError):
        return "(too large to show)"
    return text if len(text) <= 60 else text[:57] + "..."


def _build(
    value_text: str,
    u_text: str | None,
    unit_text: str,
    text: str,
    field: str,
    expected: str,
    source: str | None,
) -> Measured:
    """Check the parts of a matched entry and build the :class:`Measured`."""
    value = float(value_text)
    if not math.isfinite(value):
        raise _error(f"the value in {text!r} is too large to represent", expected, field, source)
    if value == 0.0 and re.search(r"[1-9]", value_text.lower().partition("e")[0]):
        # "1e-400" reads as 0.0: refuse rather than silently change the value.
        raise _error(f"the value in {text!r} is too small to represent", expected, field, source)
    if u_text is None:
        u = default_uncertainty(value_text)
        if not math.isfinite(u):
            problem = f"the default uncertainty of {text!r} is too large; write 'value ± u unit'"
            raise _error(problem, expected, field, source)
        distribution = "rectangular"
    else:
        u = float(u_text)
        if not math.isfinite(u):
            raise _error(f"the uncertainty in {text!r} is not finite", expected, field, source)
        if u < 0:
            problem = f"the uncertainty in {text!r} is negative; a standard uncertainty is >= 0"
            raise _error(problem, expected, field, source)
        distribution = "normal"
    unit, unit_problem = check_unit(unit_text, expected)
    if unit_problem is not None:
        raise _error(unit_problem.replace(TEXT, repr(text)), expected, field, source)
    measured = Measured(value, u, unit, distribution, text)
    if is_absolute_temperature(expected) and measured.m_as("K") < 0:
        raise _error(f"{text!r} is below absolute zero", expected, field, source)
    return measured


def _unreadable(text: str, *, field: str, expected: str, source: str | None) -> InputError:
    """Return the InputError for a string that does not read as a measurement."""
    stripped = text.strip()
    if not stripped:
        return _error("the entry is empty", expected, field, source)
    if _NONFINITE_RE.match(text):
        return _error(f"the value in {text!r} is not finite", expected, field, source)
    if stripped.startswith("("):
        problem = f"could not read {text!r}; write '(value ± u) unit' or 'value ± u unit'"
        return _error(problem, expected, field, source)
    return _error(f"{text!r} does not start with a number", expected, field, source)


def _parse_clock(clock: re.Match[str], text: str, *, field: str, expected: str, source: str | None) -> Measured:
    """Turn a matched ``m:ss`` / ``h:mm:ss`` time into seconds."""
    # float(), not int(): int() refuses more than 4300 digits and a huge int
    # overflows when mixed with floats (both found by the hostile-input tests).
    hours = float(clock.group("h") or 0)
    minutes = float(clock.group("m"))
    seconds_text = clock.group("s")
    seconds = float(seconds_text)
    if seconds >= 60 or (clock.group("h") is not None and minutes >= 60):
        raise _error(f"{text!r} is not a valid m:ss or h:mm:ss time", expected, field, source)
    value = 3600.0 * hours + 60.0 * minutes + seconds
    if not math.isfinite(value):
        raise _error(f"the time {text!r} is too large to represent", expected, field, source)
    if clock.group("sign") == "-":
        value = -value
    if clock.group("u") is None:
        return Measured(value, default_uncertainty(seconds_text), "s", "rectangular", text)
    u = float(clock.group("u"))
    if not math.isfinite(u) or u < 0:
        problem = f"the uncertainty in {text!r} must be a finite number >= 0"
        raise _error(problem, expected, field, source)
    unit_text = clock.group("unit")
    if not unit_text:
        problem = f"{text!r} gives no unit for the uncertainty, e.g. '3:00 ± 2 s'"
        raise _error(problem, expected, field, source)
    unit, unit_problem = check_unit(unit_text, "s")
    if unit_problem is not None:
        raise _error(unit_problem.replace(TEXT, repr(text)), expected, field, source)
    u_s = u * _affine(unit, "s")[0]
    if not math.isfinite(u_s):  # e.g. "1:00 ± 1e308 h" overflows in seconds
        raise _error(f"the uncertainty in {text!r} is too large", expected, field, source)
    return Measured(value, u_s, "s", "normal", text)


def _error(problem: str, expected: str, field: str, source: str | None) -> InputError:
    """Build the InputError for ``problem``, saying what was expected."""
    joiner = ", " if problem.startswith("got ") else "; "
    message = f"expected {expectation(expected)}{joiner}{problem}"
    return InputError(message, field=field, source=source)


@lru_cache(maxsize=2048)
def _affine(unit: str, target: str) -> tuple[float, float]:
    """Return (scale, offset) with ``value_in_target = value * scale + offset``.

    ``scale`` alone converts differences (uncertainties). Offset units (degC,
    degF) get their scale from the ratio of root-unit factors, so 1 degC of
    difference is exactly 1 K.
    """
    unit, target = canonical_unit(unit), canonical_unit(target)
    if unit == target:
        return 1.0, 0.0
    offset = float(Q_(0.0, unit).m_as(target))
    if offset == 0.0:
        return float(Q_(1.0, unit).m_as(target)), 0.0
    # pint types the factor as any number, complex included; a unit's factor to its root units is real
    unit_factor = cast(float, ureg.get_root_units(unit)[0])
    target_factor = cast(float, ureg.get_root_units(target)[0])
    return float(unit_factor) / float(target_factor), offset
