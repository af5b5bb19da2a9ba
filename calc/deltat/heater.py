"""An electrical heater's after period starts only once the heater is off.

The heat of an electrical calibration goes in from the switch-on (the run's mixing time)
for the stated duration; the probe and the stirring then need some seconds to follow.
The end of the main period found from the curve's shape alone can fall inside the heating
when the log ends soon after the heater stops, and the after-period drift is then the
heating itself (a short log then gave ΔT 10 % low). Here the after period never starts
before ``mixing time + duration + lag``:

* with at least :data:`HEATER_LAG_S` of readings after the heater stops and
  :data:`~calc.deltat.periods.MIN_WINDOW_POINTS` readings left, the after period starts there;
* with fewer readings, the lag is shortened down to :data:`MIN_LAG_S`, the change of ΔT
  when the after period starts half-way through what is left is added to the method term
  (rectangular half-width; the interval widens), and a warning says so;
* with too few readings even then, the run is refused with a message that says how much
  longer to record (or to give ``after_period``).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np

from calc.deltat.periods import MIN_WINDOW_POINTS, Periods
from calc.errors import InputError

if TYPE_CHECKING:  # for the annotations only: heater does not import base at run time
    from calc.deltat.base import DeltaT

__all__ = ["HEATER_LAG_S", "MIN_LAG_S", "heater_off_time", "after_heater_off", "lag_term", "widened", "heater_periods"]

#: Seconds between switching the heater off and the start of the after period: five probe time
#: constants of a few seconds plus mixing (common practice, no source).
HEATER_LAG_S = 30.0
#: The shortest lag accepted, with a widened uncertainty.
MIN_LAG_S = 10.0
#: An after period at least this long (and starting HEATER_LAG_S or more after switch-off) gets no
#: stability term: five minutes, as the warning advises (docs/methods.md §8.9).
SETTLED_AFTER_S = 300.0


def heater_off_time(mixing_time: float, duration_s: float) -> float:
    """Return the time (s, on the log's clock) the heater is switched off."""
    return mixing_time + duration_s


def after_heater_off(
    t: np.ndarray, periods: Periods, duration_s: float, *, after_given: bool, source: str | None
) -> tuple[tuple[float, float] | None, str]:
    """Return the after period to use instead of ``periods.after`` (None: keep it) and a warning.

    Raises
    ------
    InputError
        When the given after period starts before the heater is off, or the log holds too few
        readings after the heater stops.
    """
    t_off = heater_off_time(periods.mixing_time, duration_s)
    start, end = periods.after
    if after_given:
        if start < t_off - 1e-9:
            raise InputError(
                f"after_period starts at {start:g} s, before the heater is off at {t_off:g} s (mixing time + "
                f"duration); start it at least {HEATER_LAG_S:g} s after the heater is off",
                field="after_period",
                source=source,
            )
        return None, ""
    if start >= t_off + HEATER_LAG_S - 1e-9:
        return None, ""
    t_end = float(t[-1])
    for lag in (HEATER_LAG_S, 20.0, MIN_LAG_S):
        count = int(np.count_nonzero(t >= t_off + lag - 1e-9))
        if count >= MIN_WINDOW_POINTS:
            begin = float(t[np.searchsorted(t, t_off + lag - 1e-9)])
            warning = ""
            if lag < HEATER_LAG_S or t_end - begin < 120.0:
                warning = (
                    f"the log ends {t_end - t_off:.0f} s after the heater stops (at {t_off:.0f} s): the after period "
                    f"starts {lag:.0f} s after it and lasts {t_end - begin:.0f} s; the uncertainty is widened for the "
                    f"probe lag; record at least 5 minutes after the heater stops"
                )
            return (begin, t_end), warning
    dt = float(np.median(np.diff(t)))
    needed = t_off + MIN_LAG_S + MIN_WINDOW_POINTS * dt
    raise InputError(
        f"the log ends at {t_end:g} s, only {max(t_end - t_off, 0.0):.0f} s after the heater is off at {t_off:g} s "
        f"(mixing time + duration); record until at least {needed:.0f} s (5 minutes more are advised), or give "
        "after_period",
        field="heater.duration",
        source=source,
    )


def lag_term(
    dt_value: float, periods: Periods, t: np.ndarray, duration_s: float, redo: Callable[[tuple[float, float]], float]
) -> float:
    """Return the standard uncertainty (K) added for an after period that starts soon after the heater stops.

    ``redo(after)`` returns ΔT with another after period. The half-width is the change of ΔT when
    the after period starts half-way through the readings left (rectangular, u = a/√3); zero when the
    after period starts :data:`HEATER_LAG_S` or more after the heater stops and lasts :data:`SETTLED_AFTER_S`.
    """
    t_off = heater_off_time(periods.mixing_time, duration_s)
    start, end = periods.after
    if start >= t_off + HEATER_LAG_S - 1e-9 and end - start >= SETTLED_AFTER_S:
        return 0.0
    later = t[(t >= 0.5 * (start + end)) & (t <= end)]
    if later.size < MIN_WINDOW_POINTS // 2 or later[0] <= start:
        later = t[(t > start) & (t <= end)][-MIN_WINDOW_POINTS // 2 :]
    try:
        other = redo((float(later[0]), float(end)))
    except Exception:  # noqa: BLE001 - any failure of the check leaves the widest honest term
        return abs(dt_value) * 0.05 / math.sqrt(3.0)
    return abs(other - dt_value) / math.sqrt(3.0)


def widened(dt: DeltaT, extra_u: float) -> DeltaT:
    """Return ``dt`` with ``extra_u`` added in quadrature to its method term."""
    if extra_u <= 0:
        return dt
    return replace(dt, u_method=math.hypot(dt.u_method, extra_u))


def heater_periods(
    t: np.ndarray, periods: Periods, duration_s: float, *, after_given: bool, source: str | None
) -> Periods:
    """Return ``periods`` with the after period moved past the heater's switch-off when needed."""
    new_after, warning = after_heater_off(t, periods, duration_s, after_given=after_given, source=source)
    if new_after is None:
        return periods
    kept = [w for w in periods.warnings if not w.startswith(("the log ends too soon", "after period is short"))]
    return replace(periods, after=new_after, main_end=new_after[0], warnings=kept + ([warning] if warning else []))
