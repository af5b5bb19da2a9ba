"""Checks of what the live advisor is given: the run file without readings, the arrays, the target U."""

from __future__ import annotations

import math
import tomllib
from collections.abc import Sequence
from typing import Any

import numpy as np

from calc import limits
from calc.errors import InputError
from calc.io.runfile import RunSpec, parse_run
from calc.kinds import get_kind

__all__ = ["checked_spec", "checked_arrays", "checked_target", "LIVE_READINGS_NAME"]

#: The readings path a live run file gets when it names none (nothing is read from it).
LIVE_READINGS_NAME = "live-readings.csv"


def checked_spec(run_text: Any, source: str) -> RunSpec:
    """Return the parsed run file; a missing ``readings`` key is allowed (the readings come live)."""
    if not isinstance(run_text, str):
        raise InputError("expected the run file's TOML text", source=source, field="run_file")
    try:
        has_readings = "readings" in tomllib.loads(run_text)
    except (tomllib.TOMLDecodeError, RecursionError, ValueError):
        has_readings = True  # parse_run reports the error with its line
    if has_readings:
        return parse_run(run_text, source=source)
    return parse_run(f'readings = "{LIVE_READINGS_NAME}"\n' + run_text, source=source)


def checked_arrays(
    times_s: Sequence[float], temps_c: Sequence[float], source: str, celsius: tuple[float, float]
) -> tuple[np.ndarray, np.ndarray]:
    """Return times (s) and temperatures (°C) as float arrays after checking them."""
    t = _numbers(times_s, "times_s", source)
    y = _numbers(temps_c, "temps_c", source)
    if t.size != y.size:
        raise InputError(
            f"holds {y.size} temperatures for {t.size} times; expected one per time", source=source, field="temps_c"
        )
    limits.require_size(t.size, "readings_rows", what=f"{t.size} readings", source=source, field="times_s")
    back = np.flatnonzero(np.diff(t) < 0)
    if back.size:
        i = int(back[0]) + 1
        raise InputError(
            f"reading {i + 1} goes back in time ({t[i]:g} s after {t[i - 1]:g} s); expected times that never decrease",
            source=source,
            field="times_s",
        )
    out = np.flatnonzero((y < celsius[0]) | (y > celsius[1]))
    if out.size:
        i = int(out[0])
        raise InputError(
            f"reading {i + 1} is {y[i]:g} °C; expected {celsius[0]:g} to {celsius[1]:g} °C",
            source=source,
            field="temps_c",
        )
    return t, y


def _numbers(values: Any, name: str, source: str) -> np.ndarray:
    try:
        a = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError("expected a list of numbers", source=source, field=name) from None
    if a.ndim != 1:
        raise InputError("expected a flat list of numbers", source=source, field=name)
    bad = np.flatnonzero(~np.isfinite(a))
    if bad.size:
        raise InputError(f"reading {int(bad[0]) + 1} is not a finite number", source=source, field=name)
    return a


def checked_target(target_u: Any, spec: RunSpec) -> float | None:
    """Return the target U in the main output's unit (None: the default of docs/methods.md §9.3, set later)."""
    unit = get_kind(spec.kind).main_unit
    if target_u is None:
        return None
    if (
        isinstance(target_u, bool)
        or not isinstance(target_u, (int, float))
        or not math.isfinite(target_u)
        or target_u <= 0
    ):
        raise InputError(f"expected a positive number in {unit}, got {target_u!r}", field="target_u")
    return float(target_u)
