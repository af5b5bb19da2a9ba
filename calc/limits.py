"""The one table of limits on what a caller can make cupcal do, and the one number checker.

Every quantity a caller controls that costs time or memory (Monte Carlo trials, planner grid,
readings size, formula size, imports) and every number read from a run file or a request has
a limit here. A limit that is passed raises :class:`LimitExceeded` (a size: the web answers
413) or :class:`calc.errors.InputError` (a value out of range: 400); both name the limit.

Defaults are in :data:`DEFAULTS`. The web notebook overrides them with its ``LIMITS`` setting
(``webapp/README.md``); the command line with the environment ``CUPCAL_LIMITS`` (JSON, the same
keys). :func:`current` returns the limits in force; :func:`use` sets them for a block of code.

The physical bounds (:data:`PHYSICAL_BOUNDS`) are far beyond any coffee-cup calorimetry and
are there to refuse nonsense (a mass of 1e308 g) before it reaches the arithmetic; they are
common practice for input validation, no source.
"""

from __future__ import annotations

import contextlib
import contextvars
import json
import math
import os
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from calc.errors import InputError

__all__ = [
    "DEFAULTS",
    "PHYSICAL_BOUNDS",
    "LimitExceeded",
    "Limit",
    "current",
    "use",
    "require_number",
    "require_size",
    "bounds_for_unit",
]


@dataclass(frozen=True)
class Limit:
    """One limit: its default value, unit and what it bounds."""

    default: float
    unit: str
    what: str


#: every limit: name → (default, unit, what it bounds); README.md lists the same table
TABLE: dict[str, Limit] = {
    "monte_carlo_trials": Limit(200_000, "trials", "Monte Carlo trials of one analysis"),
    "run_file_bytes": Limit(256 * 1024, "bytes", "size of one run file"),
    "readings_bytes": Limit(4 * 1024 * 1024, "bytes", "size of one readings file"),
    "readings_rows": Limit(100_000, "rows", "rows of one readings file"),
    "cell_chars": Limit(64, "characters", "length of one cell of a readings file"),
    "shown_chars": Limit(60, "characters", "length of a piece of input quoted in an error message"),
    "formula_chars": Limit(100, "characters", "length of a chemical formula"),
    "formula_count": Limit(1000, "atoms", "atoms of one element in a formula"),
    "formula_atoms": Limit(5000, "atoms", "atoms in one formula"),
    "molar_mass": Limit(100_000, "g/mol", "molar mass of a formula"),
    "equivalents": Limit(10, "", "equivalents of an acid or base"),
    "number_digits": Limit(50, "digits", "digits of one number in a request"),
    "json_depth": Limit(32, "levels", "nesting of a JSON request body"),
    "import_files": Limit(2000, "files", "run files in one import (a term of a large class)"),
    "import_total_bytes": Limit(
        64 * 1024 * 1024, "bytes", "run files and readings of one import, a shared readings file once per use"
    ),
    "webhook_timeout_s": Limit(5, "s", "time to wait for a webhook receiver"),
    "webhook_response_bytes": Limit(64 * 1024, "bytes", "bytes read from a webhook receiver's answer"),
    "sign_in_failures": Limit(5, "attempts", "failed sign-ins per account or address before back-off"),
}

DEFAULTS: dict[str, float] = {name: limit.default for name, limit in TABLE.items()}

#: unit of a run-file field → (least, greatest) value in that unit (exclusive 0 means "positive")
PHYSICAL_BOUNDS: dict[str, tuple[float, float]] = {
    "g": (0.0, 10_000.0),  # a mass in a cup: at most 10 kg
    "mL": (0.0, 100_000.0),  # at most 100 L
    "mol/L": (0.0, 100.0),  # no solution is more concentrated (pure water is 55 mol/L)
    "g/mL": (0.0, 25.0),  # denser than any element (osmium 22.6 g/mL)
    "J/K": (-1e6, 1e6),
    "J/(g*K)": (0.0, 100.0),
    "K": (0.0, 1000.0),  # an absolute temperature
    "V": (0.0, 10_000.0),
    "A": (0.0, 1000.0),
    "s": (0.0, 1e6),  # about 11 days
    "mol": (0.0, 1000.0),
    "resolution_K": (1e-9, 10.0),
    "": (0.0, 1e6),
}

_CURRENT: contextvars.ContextVar[dict[str, float] | None] = contextvars.ContextVar("cupcal_limits", default=None)


class LimitExceeded(InputError):
    """A size limit was passed (the web answers 413); ``limit`` names it."""

    def __init__(
        self, message: str, *, limit: str, source: str | None = None, field: str | None = None, line: int | None = None
    ) -> None:
        super().__init__(message, source=source, field=field, line=line)
        self.limit = limit


def _from_environment() -> dict[str, float]:
    raw = os.environ.get("CUPCAL_LIMITS")
    if not raw:
        return {}
    try:
        data = json.loads(raw)
    except ValueError:
        raise InputError(
            'expected a JSON object of limits, like {"monte_carlo_trials": 10000}', field="CUPCAL_LIMITS"
        ) from None
    return checked(data, "CUPCAL_LIMITS")


def checked(overrides: Any, where: str = "LIMITS") -> dict[str, float]:
    """Return ``overrides`` as a mapping of known limits to positive numbers.

    :raise InputError: for an unknown name or a value that is not a positive number
    """
    if not isinstance(overrides, Mapping):
        raise InputError("expected a mapping of limit names to numbers", field=where)
    out: dict[str, float] = {}
    for name, value in overrides.items():
        if name not in TABLE:
            raise InputError(f"unknown limit {name!r}; known: {', '.join(TABLE)}", field=f"{where}.{name}")
        out[name] = require_number(value, f"the limit {name}", field=f"{where}.{name}", minimum=0, maximum=1e15)
    return out


def current() -> dict[str, float]:
    """Return the limits in force (defaults, then ``CUPCAL_LIMITS``, then :func:`use`)."""
    found = _CURRENT.get()
    if found is None:
        found = {**DEFAULTS, **_from_environment()}
        _CURRENT.set(found)
    return found


def get(name: str) -> float:
    """Return the limit ``name`` in force."""
    return current()[name]


@contextlib.contextmanager
def use(overrides: Mapping[str, Any] | None) -> Iterator[dict[str, float]]:
    """Use the defaults updated with ``overrides`` inside the block."""
    token = _CURRENT.set({**DEFAULTS, **checked(overrides or {})})
    try:
        yield _CURRENT.get() or {}
    finally:
        _CURRENT.reset(token)


def set_for_context(overrides: Mapping[str, Any] | None) -> None:
    """Set the limits of the current context (a web request) to the defaults updated with ``overrides``."""
    _CURRENT.set({**DEFAULTS, **checked(overrides or {})})


def _shown(x: Any) -> str:
    if isinstance(x, int) and not isinstance(x, bool):
        digits = len(str(abs(x))) if abs(x) < 10**100 else None
        return f"{x}" if digits is not None else "a whole number of more than 100 digits"
    if isinstance(x, float):
        return f"{x:.6g}"
    text = repr(x)
    return text if len(text) <= 40 else text[:37] + "..."


def require_number(
    x: Any,
    what: str,
    *,
    field: str | None = None,
    minimum: float | None = None,
    maximum: float | None = None,
    source: str | None = None,
    exclusive_minimum: bool = False,
    whole: bool = False,
) -> float:
    """Return ``x`` as a finite float within ``[minimum, maximum]``, or raise :class:`InputError` naming ``field``.

    ``x`` may be an int or a float (never a bool or text); an int too large for a float, an
    infinity or NaN, or a value out of range is refused with a message that says what was
    expected. ``exclusive_minimum`` refuses ``minimum`` itself; ``whole`` refuses fractions.
    """
    if isinstance(x, bool) or not isinstance(x, (int, float)):
        raise InputError(f"{what}: expected a number, got {_shown(x)}", field=field, source=source)
    try:
        value = float(x)
    except OverflowError:
        value = math.inf if x > 0 else -math.inf
    if not math.isfinite(value):
        raise InputError(f"{what}: expected a finite number, got {_shown(x)}", field=field, source=source)
    if whole and not value.is_integer():
        raise InputError(f"{what}: expected a whole number, got {_shown(x)}", field=field, source=source)
    low_fail = minimum is not None and (value <= minimum if exclusive_minimum else value < minimum)
    if low_fail or (maximum is not None and value > maximum):
        raise InputError(
            f"{what}: expected {_range(minimum, maximum, exclusive_minimum)}, got {_shown(x)}",
            field=field,
            source=source,
        )
    return value


def _num(x: float) -> str:
    return str(int(x)) if float(x).is_integer() and abs(x) < 1e15 else f"{x:g}"


def _range(minimum: float | None, maximum: float | None, exclusive: bool) -> str:
    low = None if minimum is None else (f"more than {_num(minimum)}" if exclusive else f"at least {_num(minimum)}")
    high = None if maximum is None else f"at most {_num(maximum)}"
    return " and ".join(p for p in (low, high) if p) or "a number"


def require_size(
    size: float,
    name: str,
    *,
    what: str | None = None,
    source: str | None = None,
    field: str | None = None,
    line: int | None = None,
) -> None:
    """Raise :class:`LimitExceeded` when ``size`` passes the limit ``name``."""
    limit = get(name)
    if size > limit:
        spec = TABLE[name]
        raise LimitExceeded(
            f"{what or spec.what} is over the limit {name} = {_num(limit)} {spec.unit}".rstrip(),
            limit=name,
            source=source,
            field=field,
            line=line,
        )


def bounds_for_unit(unit: str) -> tuple[float, float]:
    """Return the physical bounds of a quantity stated in ``unit`` (a key of :data:`PHYSICAL_BOUNDS`)."""
    return PHYSICAL_BOUNDS.get(unit, (-math.inf, math.inf))


def shorten(text: str, limit: int | None = None) -> str:
    """Return ``text`` cut to the ``shown_chars`` limit (for quoting input in a message)."""
    n = int(limit if limit is not None else get("shown_chars"))
    return text if len(text) <= n else text[: max(n - 1, 1)] + "…"
