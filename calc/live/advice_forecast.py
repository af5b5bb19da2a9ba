"""How the expanded uncertainty U of a live run would shrink with more after-period readings.

The starting point is the provisional analysis of the readings so far (the same uncertainty model
as the final analysis). Only two budget lines depend on the after period's length: the drift fits
("delta_t.fit") and the resolution floor of the drift slopes ("delta_t.drift_resolution"). Each is
split into a fore and an after share by the formulas the planner uses (:mod:`calc.plan`): a line
fitted to n readings over L seconds and extrapolated a distance d beyond its centre has the level
variance s²·f·(1/n + 12 (L/2 + d)²/(n L²)), and the slope floor is q/(L√12) shrunk by the dither.
The after share is then rescaled to a longer window (n grows with L at the current sampling rate);
every other line stays as it is, and so does the coverage factor. docs/methods.md §9.3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from calc.deltat.budget_terms import slope_floor
from calc.deltat.drift import fit_line, inflation
from calc.deltat.periods import AFTER_MAX_S

__all__ = ["Forecast", "forecast", "HORIZON_S", "STEP_S", "MIN_GAIN"]

#: "More readings" means this many seconds more when the advice judges whether to go on, s.
HORIZON_S = 120.0
#: The forecast's time grid, s.
STEP_S = 10.0
#: More readings that lower U by less than this fraction are not worth waiting for.
MIN_GAIN = 0.02


@dataclass(frozen=True)
class Forecast:
    """U now and U after more after-period readings (``expanded(extra_s)``)."""

    expanded_now: float
    k: float
    fixed_var: float  # variance of the main output from every line the after period does not change
    fit_fore: float  # the drift fits' fore share of the variance (output units²)
    fit_after: float  # … and its after share at the current length
    res_fore: float
    res_after: float
    after_length: float
    level_var: Any  # L -> level variance of the after line per reading variance (relative)
    floor_ratio: Any  # L -> (slope floor at L / slope floor now)²
    largest: str = ""  # label of the largest budget line the after period does not change

    def expanded(self, extra_s: float) -> float:
        """Return the forecast U after ``extra_s`` more seconds of after period (capped as the analysis caps it)."""
        if extra_s <= 0:
            return self.expanded_now
        L0 = self.after_length
        L = min(L0 + extra_s, max(AFTER_MAX_S, L0))
        var = (
            self.fixed_var
            + self.fit_fore
            + self.fit_after * self.level_var(L) / self.level_var(L0)
            + self.res_fore
            + self.res_after * self.floor_ratio(L)
        )
        return self.k * math.sqrt(max(var, 0.0))

    def gain(self, extra_s: float, horizon_s: float = HORIZON_S) -> float:
        """Return the fraction by which ``horizon_s`` more seconds would lower U, from ``extra_s`` on."""
        a = self.expanded(extra_s)
        return 0.0 if a <= 0 else 1.0 - self.expanded(extra_s + horizon_s) / a

    def first(self, test: Any, limit_s: float = AFTER_MAX_S + HORIZON_S) -> float | None:
        """Return the smallest extra time on the grid at which ``test(extra_s)`` holds (None: never)."""
        for extra in np.arange(0.0, limit_s + STEP_S, STEP_S):
            if test(float(extra)):
                return float(extra)
        return None


_AFTER_LINES = ("delta_t.fit", "delta_t.drift_resolution")


def _window(t: np.ndarray, y: np.ndarray, a: float, b: float) -> tuple[np.ndarray, np.ndarray]:
    m = (t >= a - 1e-9) & (t <= b + 1e-9)
    return t[m], y[m]


def forecast(analysis: Any, t: np.ndarray, y: np.ndarray) -> Forecast:
    """Return the forecast of U for ``analysis`` (a :class:`calc.analysis.Analysis`) of the readings t, y (K)."""
    gum, p = analysis.gum, analysis.periods
    q = analysis.spec.resolution_K
    contrib = {line.name: line.contribution for line in gum.budget}
    others = sorted((line for line in gum.budget if line.name not in _AFTER_LINES), key=lambda b: -b.contribution)
    c_fit, c_res = (contrib.get(name, 0.0) ** 2 for name in _AFTER_LINES)
    total = gum.uncertainties[gum.main] ** 2
    tf_, yf = _window(t, y, *p.fore)
    ta_, ya = _window(t, y, *p.after)
    fore, after = fit_line(tf_, yf), fit_line(ta_, ya)
    Lf, La = max(float(tf_[-1] - tf_[0]), 1.0), max(float(ta_[-1] - ta_[0]), 1.0)
    d = 0.5 * max(float(p.main_end - p.mixing_time), 0.0)
    rate_a = ta_.size / La  # readings per second in the after period

    def level(s: float, rho: float, n: float, L: float) -> float:
        return s * s * inflation(rho) * (1.0 / n + 12.0 * (L / 2.0 + d) ** 2 / (n * L * L))

    def level_after(L: float) -> float:
        return level(1.0, after.rho, max(rate_a * L, 2.0), L)

    v_f = level(fore.s, fore.rho, tf_.size, Lf)
    v_a = after.s**2 * level_after(La)
    share = v_a / (v_f + v_a) if v_f + v_a > 0 else 0.5
    uf, ua = slope_floor(q, fore.s, Lf), slope_floor(q, after.s, La)
    rshare = ua * ua / (uf * uf + ua * ua) if uf + ua > 0 else 0.5

    def floor_ratio(L: float) -> float:
        return (La / L) ** 2

    return Forecast(
        expanded_now=gum.expanded_uncertainty,
        k=gum.coverage_factor,
        fixed_var=max(total - c_fit - c_res, 0.0),
        fit_fore=c_fit * (1 - share),
        fit_after=c_fit * share,
        res_fore=c_res * (1 - rshare),
        res_after=c_res * rshare,
        after_length=La,
        level_var=level_after,
        floor_ratio=floor_ratio,
        largest=others[0].label if others else "",
    )
