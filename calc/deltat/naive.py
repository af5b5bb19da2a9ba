"""ΔT method ``naive``: the extreme reading minus the last fore readings (docs/methods.md §2.5).

Biased low in magnitude; kept for comparison only.
"""

from __future__ import annotations

import math

import numpy as np

from calc.deltat.base import DeltaT, Log, method_term, need_windows, register_method, resolution_terms
from calc.deltat.constructions import NaiveConstruction
from calc.deltat.drift import fit_line

__all__ = ["naive"]


@register_method("naive")
def naive(log: Log) -> DeltaT:
    """Extreme reading minus the last fore reading (biased; for comparison only)."""
    tf_, yf_, _ta, ya_ = need_windows(log)
    t_m = log.periods.mixing_time
    fore = fit_line(tf_, yf_)
    start = float(np.mean(yf_[-5:]))
    post = log.y[log.t > t_m]
    after_mean = float(np.mean(ya_))
    end = float(np.max(post)) if after_mean >= start else float(np.min(post))
    value = end - start
    sigma = fore.s
    res_start, res_end = resolution_terms(log)
    return DeltaT(
        method="naive",
        value=value,
        u_fit=math.sqrt(sigma**2 + sigma**2 / min(5, yf_.size)),
        dof_fit=max(fore.dof, 1.0),
        u_resolution_start=res_start,
        u_resolution_end=res_end,
        u_method=method_term("naive", value),
        u_mixing_time=0.0,
        start_temperature=start,
        u_start_temperature=sigma,
        end_temperature=end,
        construction=NaiveConstruction(
            t_i=t_m,
            t_f=log.periods.main_end,
            fore_start=float(log.periods.fore[0]),
            start_level=start,
            extreme_level=end,
        ),
        warnings=[
            "naive ΔT (extreme reading minus initial) ignores the heat exchanged before the extreme "
            "and is biased low in magnitude (often by 2–10 %); use it for comparison only"
        ],
    )
