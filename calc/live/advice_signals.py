"""What the readings so far say, for the live advisor: the fore line, the change, and the warnings.

Everything here is cheap (a few vectorised passes over the log) because :func:`calc.live.advisor.advise`
runs on every new batch of readings. The spike screen and the change-point search are the analysis's
own (:mod:`calc.deltat.logprep`, :mod:`calc.deltat.changepoint`); docs/methods.md §9.2 and §9.4.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from calc.deltat.budget_terms import slope_floor
from calc.deltat.drift import LineFit, fit_line, inflation, lag1_autocorrelation
from calc.deltat.logprep import PreparedLog
from calc.deltat.periods import MIN_WINDOW_POINTS, detect_mixing_time
from calc.errors import InputError

__all__ = [
    "Warning_",
    "ForeState",
    "fore_state",
    "find_change",
    "noise_sd",
    "probe_out",
    "curved",
    "FORE_TARGET_S",
    "FORE_MIN_S",
    "FORE_DRIFT_LIMIT_K_PER_MIN",
    "NOISE_LIMIT_K",
    "STOPPED_AFTER_S",
]

#: Fore period the advice asks for before the addition, s (3–5 minutes are the usual advice;
#: docs/methods.md §1, common practice).
FORE_TARGET_S = 180.0
#: A fore period shorter than this gets the "fore_short" warning, s (the analysis warns below it too, §1).
FORE_MIN_S = 60.0
#: A fore drift steeper than this gets the "fore_drift" warning, K/min: the solution is then probably
#: not at room temperature (common practice, no source; the analysis itself warns above 0.1 K/min, §2.6).
FORE_DRIFT_LIMIT_K_PER_MIN = 0.05
#: Noise beyond the thermometer's own steps above which the log is called too noisy, K (common
#: practice, no source: a stirred cup read by a working probe scatters by a few millikelvin).
NOISE_LIMIT_K = 0.03
#: Readings are called stopped when the last one is older than this, s.
STOPPED_AFTER_S = 5.0
#: A drift change between the two halves of the fore period below this is steady whatever its
#: statistics, K/s (0.005 K/min; common practice, no source).
_STEADY_TOLERANCE = 0.005 / 60.0
#: Seconds after the mixing time before the probe-out screen starts (the change itself is a step).
_PROBE_SETTLE_S = 30.0


@dataclass(frozen=True)
class Warning_:
    """One warning of the advice: a code from the contract, a message, and a number (or None)."""

    code: str
    message: str
    value: float | None = None

    def to_dict(self) -> dict[str, str | float | None]:
        """Return the warning as plain JSON-ready values."""
        return {
            "code": self.code,
            "message": self.message,
            "value": None if self.value is None or not math.isfinite(self.value) else float(self.value),
        }


@dataclass(frozen=True)
class ForeState:
    """The fore period so far: its line, its length and whether its drift is steady."""

    line: LineFit
    start: float
    end: float
    steady: bool
    slope_k_per_min: float
    noise_k: float
    u_slope_k_per_min: float = 0.0  # standard uncertainty of the slope, with the resolution floor

    @property
    def drifting(self) -> bool:
        """True when the slope is beyond the limit by more than two standard uncertainties."""
        return abs(self.slope_k_per_min) > FORE_DRIFT_LIMIT_K_PER_MIN + 2.0 * self.u_slope_k_per_min

    @property
    def length(self) -> float:
        """Length of the fore period so far, s."""
        return self.end - self.start


def noise_sd(y: np.ndarray, q: float) -> float:
    """Return the noise beyond the thermometer's steps: robust SD from successive differences, less q²/12."""
    if y.size < 3:
        return 0.0
    d = np.diff(y)
    s = float(np.median(np.abs(d - np.median(d)))) * 1.4826 / math.sqrt(2.0)
    s = max(s, float(np.std(d)) / math.sqrt(2.0) if s == 0.0 else s)
    return math.sqrt(max(s * s - q * q / 12.0, 0.0))


def fore_state(t: np.ndarray, y: np.ndarray, q: float) -> ForeState | None:
    """Return the fore period's state from the readings ``t, y`` before any change (None: too few)."""
    if t.size < MIN_WINDOW_POINTS:
        return None
    line = fit_line(t, y)
    half = t.size // 2
    steady = True
    if half >= MIN_WINDOW_POINTS:
        a, b = fit_line(t[:half], y[:half]), fit_line(t[half:], y[half:])
        ua = math.hypot(math.sqrt(a.var_b), slope_floor(q, a.s, float(t[half - 1] - t[0])))
        ub = math.hypot(math.sqrt(b.var_b), slope_floor(q, b.s, float(t[-1] - t[half])))
        steady = abs(a.b - b.b) <= 3.0 * math.hypot(ua, ub) + _STEADY_TOLERANCE
    u_b = math.hypot(math.sqrt(line.var_b), slope_floor(q, line.s, float(t[-1] - t[0])))
    return ForeState(line, float(t[0]), float(t[-1]), steady, line.b * 60.0, noise_sd(y, q), u_b * 60.0)


def find_change(t: np.ndarray, y: np.ndarray, q: float, given: float | None) -> tuple[float, float] | None:
    """Return (mixing time, its u) once the readings show the change, else None.

    A mixing time in the run file counts once the log has passed it. Otherwise the analysis's own
    change-point search runs on the log so far (§8.1); its refusals (no clear change yet) mean "no
    change", and a found change must also stand clear of the fore line in the readings after it.
    """
    if given is not None:
        return (given, 0.0) if t[-1] > given else None
    if t.size < 2 * MIN_WINDOW_POINTS:
        return None
    try:
        t_m, u = detect_mixing_time(t, y, q)
    except InputError:
        return None
    before, after = t <= t_m, t > t_m
    if np.count_nonzero(before) < MIN_WINDOW_POINTS or np.count_nonzero(after) < 3:
        return None
    line = fit_line(t[before], y[before])
    last_t, last_y = t[after][-3:], y[after][-3:]
    off = np.abs(last_y - (line.a + line.b * (last_t - line.t_mean)))
    # off by 6 SDs of a reading about the extrapolated line: its own scatter and the line's
    # uncertainty there (inflated for correlated noise), so a short fore period's wander is no change
    spread = np.sqrt(line.s**2 + np.array([line.var_at(float(x)) for x in last_t]))
    if not np.all(off > np.maximum(6.0 * spread, 3.0 * q)):
        return None
    return float(t_m), float(u)


def probe_out(prep: PreparedLog, t_m: float, room: float, q: float) -> tuple[float, float] | None:
    """Return (time, step in K) of the first sudden step towards ``room`` after the change, else None.

    The median of three readings is compared with the median of the ten before them (skipping
    two): a probe lifted out of the liquid moves towards the room's temperature by more than eight
    noise SDs, three resolution steps and a fifth of its distance from the room. Single wild
    readings are already gone (the spike screen).
    """
    keep = prep.t > t_m + _PROBE_SETTLE_S
    t, y = prep.t[keep], prep.y[keep]
    if y.size < 16:
        return None
    win = np.lib.stride_tricks.sliding_window_view
    ref_w = np.median(win(y, 10), axis=1)  # ref_w[i]: median of y[i:i+10]
    now_w = np.median(win(np.concatenate([y, [y[-1], y[-1]]]), 3), axis=1)  # now_w[j]: median of y[j:j+3]
    j = np.arange(12, y.size)
    ref, now = ref_w[j - 12], now_w[j]
    dev = now - ref
    gap = room - ref
    s = noise_sd(y, q)
    thr = max(8.0 * s, 3.0 * q, 1e-6)
    hit = (
        (np.sign(dev) == np.sign(gap))
        & (np.abs(dev) > thr)
        & (np.abs(dev) > 0.2 * np.abs(gap))
        & (np.abs(gap) > max(10.0 * s, 5.0 * q))
    )
    idx = np.flatnonzero(hit)
    if not idx.size:
        return None
    return float(t[int(j[idx[0]])]), float(dev[idx[0]])


def curved(t: np.ndarray, y: np.ndarray) -> bool:
    """True when a window still bends like the end of the change rather than a steady drift.

    A parabola is fitted; the window is curved when its slope changes across the window by more
    than 0.005 K/min and by more than four standard uncertainties (inflated for correlated noise).
    """
    if t.size < MIN_WINDOW_POINTS:
        return True
    x = (t - t.mean()) / max(float(np.ptp(t)), 1e-9)
    design = np.column_stack([np.ones_like(x), x, x * x])
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    resid = y - design @ coef
    f = inflation(lag1_autocorrelation(resid))
    s2 = float(resid @ resid) / max(t.size - 3.0 * f, 0.2 * t.size, 1.0)
    cov = np.linalg.pinv(design.T @ design) * s2 * f
    change = 4.0 * float(coef[2])  # slope change over the window (x from −½ to ½), K per window length
    u_change = 4.0 * math.sqrt(max(cov[2, 2], 0.0))
    length = max(float(np.ptp(t)), 1e-9)
    return abs(change) / length > _STEADY_TOLERANCE and abs(change) > 4.0 * u_change
