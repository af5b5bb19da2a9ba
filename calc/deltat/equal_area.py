"""ΔT method ``equal-area``: the fore and after lines read at the equal-area time t_x = t_f − ∫F dt.

docs/methods.md §2.2. F = (y − T_i)/(T_f − T_i) is the fraction of the change reached; the lines
are those of :func:`~calc.deltat.base.line_fits`.
"""

from __future__ import annotations

import math

import numpy as np

from calc.deltat.base import DeltaT, Log, line_fits, need_windows, read_lines_at, register_method
from calc.deltat.constructions import EqualAreaConstruction
from calc.errors import AnalysisError

__all__ = ["equal_area"]


def _trapz_between(t: np.ndarray, y: np.ndarray, a: float, ya: float, b: float, yb: float) -> float:
    """∫_a^b y dt by the trapezoid rule on the readings strictly inside (a, b) plus the given end values."""
    m = (t > a) & (t < b)
    idx = np.flatnonzero(m)
    tt = np.concatenate([[a], t[idx], [b]])
    yy = np.concatenate([[ya], y[idx], [yb]])
    d = np.diff(tt)
    w = np.zeros(tt.size)
    w[:-1] += 0.5 * d
    w[1:] += 0.5 * d
    return float(np.dot(w, yy))


def _fraction_time(log: Log, T_i: float, T_f: float, frac: float) -> float | None:
    """Return the first time after mixing at which the fraction ``frac`` of the change is reached."""
    m = log.t > log.periods.mixing_time
    F = (log.y[m] - T_i) / (T_f - T_i)
    idx = np.flatnonzero(F >= frac)
    return float(log.t[m][idx[0]]) if idx.size else None


@register_method("equal-area")
def equal_area(log: Log) -> DeltaT:
    """Fore and after drift lines taken at the equal-area time t_x = t_f − ∫F dt."""
    need_windows(log)
    t_i = log.periods.mixing_time
    t_f = log.periods.main_end
    fore, after = line_fits(log)
    T_i = fore.at(t_i)
    T_f = after.at(t_f)
    if abs(T_f - T_i) <= 0:
        raise AnalysisError("no temperature change between the fore and after periods")
    integ = _trapz_between(log.t, log.y, t_i, T_i, t_f, T_f)
    # ∫F dt with F = (y − T_i)/(T_f − T_i)
    intF = (integ - T_i * (t_f - t_i)) / (T_f - T_i)
    t_x = t_f - intF
    u_tx = float(np.median(np.diff(log.t))) / math.sqrt(12.0)
    construction = EqualAreaConstruction(
        t_i=t_i,
        t_f=t_f,
        fore_line=(fore.a, fore.b, fore.t_mean),
        after_line=(after.a, after.b, after.t_mean),
        t_x=t_x,
        sixty_percent_time=_fraction_time(log, T_i, T_f, 0.6),
    )
    return read_lines_at(
        "equal-area", log, fore, after, t_x, u_mixing_time=abs(after.b - fore.b) * u_tx, construction=construction
    )
