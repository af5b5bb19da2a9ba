"""ΔT method ``linear-extrapolation``: straight fore and after drift lines extrapolated to the mixing time.

docs/methods.md §2.1. The lines are fitted to at most :data:`~calc.deltat.base.LINE_WINDOW_MAX`
of each period next to the main period.
"""

from __future__ import annotations

from calc.deltat.base import LINE_WINDOW_MAX, DeltaT, Log, line_fits, need_windows, read_lines_at, register_method
from calc.deltat.constructions import LineConstruction

__all__ = ["linear_extrapolation"]


@register_method("linear-extrapolation")
def linear_extrapolation(log: Log) -> DeltaT:
    """Fore and after drift lines extrapolated to the mixing time."""
    _tf, _yf, ta_, _ya = need_windows(log)
    t_m = log.periods.mixing_time
    fore, after = line_fits(log)
    construction = LineConstruction(
        t_i=t_m,
        t_f=log.periods.main_end,
        fore_line=(fore.a, fore.b, fore.t_mean),
        after_line=(after.a, after.b, after.t_mean),
        t_x=t_m,
    )
    u_tm = abs(after.b - fore.b) * log.periods.u_mixing_time
    dt = read_lines_at("linear-extrapolation", log, fore, after, t_m, u_mixing_time=u_tm, construction=construction)
    ext = (log.periods.main_end - t_m) + 0.5 * min(ta_[-1] - ta_[0], LINE_WINDOW_MAX)
    if abs(after.b - fore.b) * ext > 0.01 * abs(dt.value):
        dt.warnings.append(
            "linear extrapolation over a long after period: the drift lines are curved, so this method "
            "can be biased by more than 1 %; the default method does not have this bias"
        )
    return dt
