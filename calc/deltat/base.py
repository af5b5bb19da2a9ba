"""Corrected temperature change: the log and result types, the method terms and the method registry.

Every ΔT method takes the same :class:`Log` (times, temperatures, periods) and returns a
:class:`DeltaT`: the corrected (adiabatic-equivalent) change, its uncertainty components and its
typed construction (:mod:`calc.deltat.constructions`). One module per method registers it here
with :func:`register_method`; :mod:`calc.deltat.registry` imports them all, so its ``METHODS`` is
complete and its :func:`~calc.deltat.registry.corrected_delta_t` runs a method by name.

This module also holds the terms every method shares: the resolution terms of the start and end
levels, the rectangular method term and the straight-line fits next to the main period.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, cast

import numpy as np

from calc.deltat.constructions import Construction
from calc.deltat.drift import LineFit, fit_line
from calc.deltat.periods import Periods
from calc.deltat.quantisation import dither_variance
from calc.errors import AnalysisError

__all__ = [
    "Log",
    "DeltaT",
    "MethodFn",
    "METHODS",
    "DEFAULT_METHOD",
    "METHOD_TERMS",
    "LINE_WINDOW_MAX",
    "register_method",
    "method_term",
    "resolution_term",
    "resolution_terms",
    "sweep_factor",
    "need_windows",
    "line_fits",
    "read_lines_at",
]

#: Relative half-width of the rectangular "method" term of each method (fraction of |ΔT|).
#: Set from the trueness benchmark (tests/benchmarks/test_trueness.py: near noise-free simulated
#: runs of all five kinds over the parameter ranges of docs/methods.md §7.2): the largest 90th-percentile
#: error of the method over the kinds, rounded up (regnault-pfaundler: 0.037 % → 0.05 %). Measured 2026-12-02: regnault-pfaundler 0.037 %,
#: model-fit 0.32 % (heater pulses excluded: the model assumes first-order release and is flagged
#: there), equal-area 1.4 %, linear-extrapolation 2.5 %, naive 10.6 %.
METHOD_TERMS: dict[str, float] = {
    "regnault-pfaundler": 0.0005,
    "model-fit": 0.004,
    "equal-area": 0.015,
    "linear-extrapolation": 0.025,
    "naive": 0.11,
}

DEFAULT_METHOD = "regnault-pfaundler"


@dataclass
class Log:
    """A temperature log with its periods, ready for a ΔT method."""

    t: np.ndarray  # s
    y: np.ndarray  # K
    periods: Periods
    resolution: float  # K
    two_solution: bool = False
    _lines: dict[str, Any] = field(default_factory=dict, repr=False)

    def line(self, which: str) -> LineFit:
        """Return the straight-line fit of the whole 'fore' or 'after' period (cached)."""
        fit = self._lines.get(which)
        if fit is None:
            fit = self._lines[which] = fit_line(*self.window(which), q=self.resolution)
        return fit

    def window(self, which: str) -> tuple[np.ndarray, np.ndarray]:
        """Return the (t, y) readings of the 'fore' or 'after' period."""
        a, b = self.periods.fore if which == "fore" else self.periods.after
        m = (self.t >= a - 1e-9) & (self.t <= b + 1e-9)
        return self.t[m], self.y[m]


@dataclass
class DeltaT:
    """A corrected temperature change with its uncertainty components (kelvin)."""

    method: str
    value: float
    u_fit: float  # regression covariance, inflated for autocorrelation
    dof_fit: float
    u_resolution_start: float  # quantisation of the start level, rectangular
    u_resolution_end: float  # quantisation of the end level, rectangular
    u_method: float  # rectangular
    u_mixing_time: float  # contribution of the mixing-time uncertainty, K
    start_temperature: float  # K: T(t_i) (the fore level at mixing for two solutions)
    u_start_temperature: float  # from the fore fit alone
    end_temperature: float  # K: adiabatic end level T(t_i) + ΔT
    construction: Construction = field(default_factory=Construction)
    warnings: list[str] = field(default_factory=list)
    u_drift_resolution: float = 0.0  # quantisation floor of the drift slopes, rectangular
    u_model: float = 0.0  # model inadequacy (disagreement of applicable drift laws), rectangular
    #: ∂ΔT/∂(a hidden slope in the fore window's readings, in the after window's), s; None where
    #: the method has no fit to propagate it through (the drift correction's half-and-half split is used)
    slope_sensitivity_s: tuple[float, float] | None = None

    @property
    def u(self) -> float:
        """Combined standard uncertainty of ΔT."""
        return math.sqrt(
            self.u_fit**2
            + self.u_resolution_start**2
            + self.u_resolution_end**2
            + self.u_method**2
            + self.u_mixing_time**2
            + self.u_drift_resolution**2
            + self.u_model**2
        )


MethodFn = Callable[[Log], DeltaT]
#: Methods registered so far; :data:`calc.deltat.registry.METHODS` (the same dict) is complete.
METHODS: dict[str, MethodFn] = {}


def register_method(name: str) -> Callable[[MethodFn], MethodFn]:
    """Register a ΔT method under ``name`` (a decorator)."""

    def deco(fn: MethodFn) -> MethodFn:
        METHODS[name] = fn
        return fn

    return deco


def method_term(name: str, value: float) -> float:
    """Return the rectangular method term of ``name`` for a change ``value`` (K, standard uncertainty)."""
    return METHOD_TERMS.get(name, 0.01) * abs(value) / math.sqrt(3.0)


def sweep_factor(steps: float) -> float:
    """Return how much of a level's quantisation error survives a drift that sweeps ``steps`` steps.

    The quantisation error of a reading is a periodic function of where the signal sits within its
    step; its first harmonic is what a fit keeps (docs/methods.md §8.2). A level read at the edge of
    a window by a straight-line fit weights the readings by w(u) = 4 − 6u (u from the edge, 0 to 1,
    ∫w du = 1), so a drift through m steps leaves |∫ w(u) e^{2πimu} du| of that harmonic:
    1 at m = 0, about 1/m for large m (never more than 1).
    """
    a = 2.0 * math.pi * abs(steps)
    if a < 1e-6:
        return 1.0
    e = complex(math.cos(a), math.sin(a))
    i0 = (e - 1.0) / (1j * a)
    i1 = e / (1j * a) + (e - 1.0) / (a * a)
    return min(1.0, abs(4.0 * i0 - 6.0 * i1))


def resolution_term(q: float, s: float, steps: float = 0.0) -> float:
    """Return the standard uncertainty a thermometer resolution q leaves in a fitted level.

    Without dither a level read at resolution q is off by up to ±q/2 (rectangular, u = q/√12;
    GUM F.2.2.1). Two things dither the quantiser: noise of standard deviation σ, which shrinks
    the mean quantisation error like its first Fourier harmonic, exp(−2π²σ²/q²) (the classical
    result for quantisation of a signal with Gaussian noise), and a drift that sweeps the signal
    through ``steps`` steps over the window, which averages that harmonic out
    (:func:`sweep_factor`). σ is the residual SD less the quantisation share q²/12: the sawtooth a
    sweeping drift leaves in the residuals is quantisation, not noise, and the fit's own
    (autocorrelation-inflated) uncertainty already carries it.
    """
    if q <= 0:
        return 0.0
    sigma2 = dither_variance(s, q)
    factor = math.exp(-2.0 * math.pi**2 * sigma2 / (q * q))
    return q / math.sqrt(12.0) * factor * sweep_factor(steps)


def resolution_terms(log: Log) -> tuple[float, float]:
    """Return the resolution terms of the start and end levels (from the fore and after windows)."""
    cached = log._lines.get("resolution_terms")
    if cached is not None:
        return cast("tuple[float, float]", cached)
    out = []
    for which in ("fore", "after"):
        tw, _yw = log.window(which)
        if tw.size > 2:
            line = log.line(which)
            steps = abs(line.b) * float(tw[-1] - tw[0]) / log.resolution if log.resolution > 0 else 0.0
            out.append(resolution_term(log.resolution, line.s, steps))
        else:
            out.append(log.resolution / math.sqrt(12.0))
    log._lines["resolution_terms"] = (out[0], out[1])
    return out[0], out[1]


def need_windows(log: Log) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return the fore and after readings (t, y, t, y); raise when either has fewer than 3."""
    tf_, yf_ = log.window("fore")
    ta_, ya_ = log.window("after")
    if tf_.size < 3 or ta_.size < 3:
        raise AnalysisError("the fore or after period has fewer than 3 readings")
    return tf_, yf_, ta_, ya_


#: Longest drift window used by the straight-line methods, s. Straight lines fitted to
#: long windows of an exponential drift are biased (docs/methods.md §2.1–2.2); 5 minutes next to
#: the main period is the usual advice.
LINE_WINDOW_MAX = 300.0


def line_fits(log: Log) -> tuple[LineFit, LineFit]:
    """Fit straight lines to at most LINE_WINDOW_MAX of each period, next to the main period."""
    tf_, yf_ = log.window("fore")
    ta_, ya_ = log.window("after")
    mf = tf_ >= tf_[-1] - LINE_WINDOW_MAX
    ma = ta_ <= ta_[0] + LINE_WINDOW_MAX
    if np.count_nonzero(mf) < 8:
        mf = np.ones_like(tf_, dtype=bool)
    if np.count_nonzero(ma) < 8:
        ma = np.ones_like(ta_, dtype=bool)
    return fit_line(tf_[mf], yf_[mf], q=log.resolution), fit_line(ta_[ma], ya_[ma], q=log.resolution)


def read_lines_at(
    method: str,
    log: Log,
    fore: LineFit,
    after: LineFit,
    t_x: float,
    *,
    u_mixing_time: float,
    construction: Construction,
) -> DeltaT:
    """Return the ΔT of a straight-line method: the after line minus the fore line at ``t_x``.

    The fit term is both lines' variance at ``t_x``; ``u_mixing_time`` is the method's own term for
    the uncertainty of ``t_x``.
    """
    value = after.at(t_x) - fore.at(t_x)
    var = after.var_at(t_x) + fore.var_at(t_x)
    res_start, res_end = resolution_terms(log)
    return DeltaT(
        method=method,
        value=value,
        u_fit=math.sqrt(var),
        dof_fit=min(fore.dof, after.dof),
        u_resolution_start=res_start,
        u_resolution_end=res_end,
        u_method=method_term(method, value),
        u_mixing_time=u_mixing_time,
        start_temperature=fore.at(t_x),
        u_start_temperature=math.sqrt(fore.var_at(t_x)),
        end_temperature=after.at(t_x),
        construction=construction,
    )
