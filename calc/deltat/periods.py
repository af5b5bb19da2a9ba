"""Find the fore, main and after periods of a temperature log.

The mixing time (start of the main period) is taken from the run file when it is
given, otherwise found where the readings leave the fore-period drift line. The
end of the main period is found from the running corrected temperature change
D(t) = T(t) − T(t_m) − ∫ g(T) dt, which rises like the heat release itself and is
flat once release and probe lag are over (docs/methods.md §2.3: the after period must
start once the release rate is ≪ the drift, about 8–10 release time constants).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import cast

import numpy as np

from calc.deltat.changepoint import detect_mixing_time as _detect
from calc.deltat.drift import fit_line
from calc.errors import InputError

__all__ = ["Periods", "find_periods", "MIN_WINDOW_POINTS"]

#: Fewest readings accepted in the fore or after period.
MIN_WINDOW_POINTS = 8
#: Longest stretch after mixing searched for the end of the main period, s.
MAIN_SEARCH_S = 3600.0
#: Longest after period taken by default, s (the drift law is local; a long log is cut here).
AFTER_MAX_S = 1200.0


@dataclass
class Periods:
    """The three periods of a run, as times on the log's clock (seconds)."""

    fore: tuple[float, float]
    after: tuple[float, float]
    mixing_time: float
    u_mixing_time: float
    mixing_time_detected: bool
    main_end: float  # t_f, start of the after period
    release_time_constant: float | None = None  # rough τ of the rise, s
    warnings: list[str] = field(default_factory=list)


def detect_mixing_time(t: np.ndarray, y: np.ndarray, resolution: float) -> tuple[float, float]:
    """Return the detected mixing time and its standard uncertainty (s).

    A change-point search over the whole log (:mod:`calc.deltat.changepoint`); raises an
    :class:`InputError` naming ``mixing_time`` when the change is unclear.
    """
    found = _detect(t, y, resolution, min_fore_points=MIN_WINDOW_POINTS)
    return found.time, found.u


def _window_mask(t: np.ndarray, a: float, b: float) -> np.ndarray:
    return (t >= a - 1e-9) & (t <= b + 1e-9)


def find_periods(
    t: np.ndarray,
    y: np.ndarray,
    *,
    resolution: float,
    mixing_time: float | None = None,
    u_mixing_time: float = 0.0,
    fore: tuple[float, float] | None = None,
    after: tuple[float, float] | None = None,
    two_solution: bool = False,
    source: str | None = None,
    lines: np.ndarray | None = None,
) -> Periods:
    """Split a log into fore, main and after periods.

    Parameters
    ----------
    t, y:
        Times (s) and temperatures (K), increasing in time.
    resolution:
        Thermometer resolution in K (for detection thresholds).
    mixing_time, u_mixing_time:
        Time of mixing when the run file gives it.
    fore, after:
        Period overrides from the run file.
    two_solution:
        True when a second solution is poured in (the fore drift then belongs to
        a different system and must not be used to judge the after period).

    Raises
    ------
    InputError
        When a period has too few readings, naming the period and the lines.
    """
    warnings: list[str] = []
    detected = mixing_time is None
    if mixing_time is None:
        t_m, u_tm = detect_mixing_time(t, y, resolution)
    else:
        t_m, u_tm = float(mixing_time), float(u_mixing_time)
        if not (t[0] < t_m < t[-1]):
            raise InputError(
                f"mixing_time {t_m:g} s lies outside the log ({t[0]:g} s to {t[-1]:g} s)",
                field="mixing_time",
                source=source,
            )
    fa, fb = _fore_period(t, t_m, fore, source, lines, warnings)
    aa, ab, tau = _after_period(t, y, t_m, (fa, fb), after, two_solution, source, warnings)
    t_f = aa
    _check_after_period(t, (aa, ab), after is not None, source, lines, warnings)
    return Periods(
        fore=(fa, fb),
        after=(aa, ab),
        mixing_time=t_m,
        u_mixing_time=u_tm,
        mixing_time_detected=detected,
        main_end=t_f,
        release_time_constant=tau,
        warnings=warnings,
    )


def _fore_period(
    t: np.ndarray,
    t_m: float,
    fore: tuple[float, float] | None,
    source: str | None,
    lines: np.ndarray | None,
    warnings: list[str],
) -> tuple[float, float]:
    """Return the fore period (given, or from the start to the last reading before mixing); check its readings."""
    if fore is not None:
        fa, fb = fore
        if fb > t_m + 1e-9:
            raise InputError(
                f"fore_period ends at {fb:g} s, after the mixing time {t_m:g} s",
                field="fore_period",
                source=source,
            )
    else:
        fa, fb = float(t[0]), float(t[t <= t_m][-1]) if np.any(t <= t_m) else float(t[0])
    nfore = int(np.count_nonzero(_window_mask(t, fa, fb)))
    if nfore < MIN_WINDOW_POINTS:
        where = (
            f" (lines {int(lines[0])}–{int(lines[min(nfore, len(lines)) - 1])})" if lines is not None and nfore else ""
        )
        raise InputError(
            f"too few readings before mixing: {nfore} in the fore period{where}, "
            f"at least {MIN_WINDOW_POINTS} expected (3–5 minutes of readings are advised)",
            field="fore_period" if fore is not None else None,
            source=source,
        )
    if fb - fa < 60.0:
        warnings.append(f"fore period is short ({fb - fa:.0f} s); 3–5 minutes of drift before mixing are advised")
    return fa, fb


def _after_period(
    t: np.ndarray,
    y: np.ndarray,
    t_m: float,
    fore: tuple[float, float],
    after: tuple[float, float] | None,
    two_solution: bool,
    source: str | None,
    warnings: list[str],
) -> tuple[float, float, float | None]:
    """Return the after period (given, or from the end of the main period found in the log) and the rough τ."""
    if after is not None:
        aa, ab = after
        if aa < t_m:
            raise InputError(
                f"after_period starts at {aa:g} s, before the mixing time {t_m:g} s",
                field="after_period",
                source=source,
            )
        return aa, ab, None
    dt = float(np.median(np.diff(t)))
    t_f, ab, tau, w = _find_main_end(t, y, t_m, fore, dt, two_solution)
    warnings.extend(w)
    return t_f, ab, tau


def _check_after_period(
    t: np.ndarray,
    after: tuple[float, float],
    given: bool,
    source: str | None,
    lines: np.ndarray | None,
    warnings: list[str],
) -> None:
    """Refuse an after period with too few readings; warn about a short one."""
    aa, ab = after
    nafter = int(np.count_nonzero(_window_mask(t, aa, ab)))
    if nafter < MIN_WINDOW_POINTS:
        last_line = f" (the log ends at line {int(lines[-1])})" if lines is not None else ""
        raise InputError(
            f"too few readings after mixing: {nafter} in the after period{last_line}, "
            f"at least {MIN_WINDOW_POINTS} expected (5–10 minutes of readings after the change are advised)",
            field="after_period" if given else None,
            source=source,
        )
    if ab - aa < 120.0:
        warnings.append(f"after period is short ({ab - aa:.0f} s); at least 5 minutes after the change are advised")


def _preliminary_law(
    t: np.ndarray, y: np.ndarray, tp: np.ndarray, yp: np.ndarray, fore: tuple[float, float], two_solution: bool
) -> tuple[float, float, float]:
    """Return a rough drift law (g_f, T_f, k) from the late half of the post-mixing log and the fore period."""
    half = tp.size // 2
    late = fit_line(tp[half:], yp[half:])
    g_f, T_f = late.b, late.a
    k = 0.0
    if not two_solution:
        fm = _window_mask(t, *fore)
        fl = fit_line(t[fm], y[fm])
        dT = T_f - fl.a
        noise = max(late.s, fl.s, 1e-4)
        if abs(dT) > 20 * noise:
            k = (fl.b - g_f) / dT
            if not (0.0 <= k < 1 / 300.0):
                k = 0.0
    return g_f, T_f, k


def _running_change(
    t: np.ndarray, y: np.ndarray, t_m: float, tp: np.ndarray, yp: np.ndarray, law: tuple[float, float, float]
) -> np.ndarray:
    """Return D(t) = T(t) − T(t_m) − ∫ g(T) dt at the readings after mixing."""
    g_f, T_f, k = law
    # y at the mixing time: the fore line's value is the best start level
    i_m = int(np.searchsorted(t, t_m))
    y_m = float(y[max(i_m - 1, 0)])
    g = g_f + k * (T_f - yp)  # drift at each reading
    # cumulative trapezoid of the drift from t_m
    tt = np.concatenate([[t_m], tp])
    gg = np.concatenate([[g_f + k * (T_f - y_m)], g])
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (gg[1:] + gg[:-1]) * np.diff(tt))])[1:]
    return cast(np.ndarray, yp - y_m - cum)


def _smoothed(D: np.ndarray, dt: float) -> np.ndarray:
    """Return D smoothed over ~15 s (running mean), to find its crossings robustly."""
    w = max(1, int(round(15.0 / dt)))
    if w > 1 and D.size > 3 * w:
        kernel = np.ones(w) / w
        Ds = np.convolve(D, kernel, mode="same")
        Ds[: w // 2] = D[: w // 2]
        return Ds
    return D


def _find_main_end(
    t: np.ndarray,
    y: np.ndarray,
    t_m: float,
    fore: tuple[float, float],
    dt: float,
    two_solution: bool,
) -> tuple[float, float, float | None, list[str]]:
    """Return (t_f, end of log, rough τ, warnings) from the running corrected change."""
    warnings: list[str] = []
    # the release is judged on at most MAIN_SEARCH_S after mixing: in a long log the drift law
    # of the late readings (room temperature change) says nothing about the main period
    post = (t > t_m) & (t <= t_m + MAIN_SEARCH_S)
    tp = t[post]
    yp = y[post]
    if tp.size < 2 * MIN_WINDOW_POINTS:
        return float(tp[0]) if tp.size else t_m, float(t[-1]), None, warnings
    D = _running_change(t, y, t_m, tp, yp, _preliminary_law(t, y, tp, yp, fore, two_solution))
    plateau = float(np.median(D[int(0.7 * D.size) :]))
    if plateau == 0:
        return float(tp[0]), float(t[-1]), None, warnings
    frac = _smoothed(D, dt) / plateau

    def first_cross(level: float) -> float | None:
        idx = np.flatnonzero(frac >= level)
        return float(tp[idx[0]]) if idx.size else None

    t50 = first_cross(0.5)
    t90 = first_cross(0.9)
    if t50 is None or t90 is None:
        return float(tp[0]), float(t[-1]), None, warnings
    tau = max((t90 - t50) / math.log(5.0), dt)
    t_f = t90 + 6.0 * tau
    min_after = max(MIN_WINDOW_POINTS * dt, 60.0)
    t_end = min(float(t[-1]), t_f + AFTER_MAX_S)
    if t_end - t_f < min_after:
        t_f_new = t_end - min_after
        warnings.append(
            f"the log ends too soon after mixing: the after period should start near {t_f - t_m:.0f} s "
            f"after mixing (release not finished before), but only {t_end - t_m:.0f} s were recorded; "
            "record longer after the change"
        )
        t_f = max(t_f_new, t90)
    # snap to a reading
    j = int(np.searchsorted(t, t_f))
    t_f = float(t[min(j, t.size - 1)])
    return t_f, t_end, float(t90 - t_m) / math.log(10.0), warnings
