"""Corrected temperature change: the methods and their uncertainties.

Every method takes the same :class:`Log` (times, temperatures, periods) and
returns a :class:`DeltaT`: the corrected (adiabatic-equivalent) change, its
uncertainty components and what is needed to draw the construction.

Methods (name → function), registered in :data:`METHODS`:

``regnault-pfaundler`` (default)
    Newtonian Regnault–Pfaundler: one Newtonian drift law dT/dt = g(T) fitted
    jointly to the fore and after periods; ΔT = T(t_f) − T(t_i) − ∫ g(T) dt over
    the main period, the integral taken on the readings (docs/methods.md §2.3).
    Two-solution runs take the drift law from the after period alone and start
    from the fore line's value at the mixing time.
``linear-extrapolation``
    Straight fore and after drift lines extrapolated to the mixing time (docs/methods.md §2.1).
``equal-area``
    Fore and after lines evaluated at the equal-area time t_x = t_f − ∫F dt (docs/methods.md §2.2).
``model-fit``
    Least-squares fit of an explicit heat-exchange model (Newtonian exchange,
    first-order release, first-order probe lag) to all readings (docs/methods.md §2.4).
``naive``
    Extreme reading minus the last fore reading (docs/methods.md §2.5). Biased; for comparison only.

To add a method: write ``def _my_method(log: Log) -> DeltaT`` and register it
with :func:`register_method`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from calc.deltat.drift import LineFit, fit_line, fit_newton_joint, fit_newton_single
from calc.errors import AnalysisError, InputError
from calc.deltat.periods import Periods

__all__ = [
    "Log",
    "DeltaT",
    "METHODS",
    "DEFAULT_METHOD",
    "METHOD_TERMS",
    "register_method",
    "corrected_delta_t",
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


@dataclass
class Log:
    """A temperature log with its periods, ready for a ΔT method."""

    t: np.ndarray  # s
    y: np.ndarray  # K
    periods: Periods
    resolution: float  # K
    two_solution: bool = False
    _lines: dict = field(default_factory=dict, repr=False)

    def line(self, which: str) -> LineFit:
        """Return the straight-line fit of the whole 'fore' or 'after' period (cached)."""
        fit = self._lines.get(which)
        if fit is None:
            fit = self._lines[which] = fit_line(*self.window(which))
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
    construction: dict = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    u_drift_resolution: float = 0.0  # quantisation floor of the drift slopes, rectangular
    u_model: float = 0.0  # model inadequacy (disagreement of applicable drift laws), rectangular

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
METHODS: dict[str, MethodFn] = {}
DEFAULT_METHOD = "regnault-pfaundler"


def register_method(name: str) -> Callable[[MethodFn], MethodFn]:
    """Register a ΔT method under ``name`` (a decorator)."""

    def deco(fn: MethodFn) -> MethodFn:
        METHODS[name] = fn
        return fn

    return deco


def corrected_delta_t(log: Log, method: str = DEFAULT_METHOD) -> DeltaT:
    """Return the corrected temperature change of ``log`` by ``method``.

    Raises
    ------
    InputError
        For an unknown method name.
    """
    try:
        fn = METHODS[method]
    except KeyError:
        raise InputError(
            f"unknown method '{method}'; expected one of: {', '.join(sorted(METHODS))}",
            field="method",
        ) from None
    dt = fn(log)
    _common_warnings(log, dt)
    return dt


# --------------------------------------------------------------------- helpers


def _trapz_between(t: np.ndarray, y: np.ndarray, a: float, ya: float, b: float, yb: float) -> tuple[float, np.ndarray, np.ndarray]:
    """∫_a^b y dt by the trapezoid rule on readings strictly inside (a, b) plus given end values.

    Returns the integral, the inner readings' weights and their indices.
    """
    m = (t > a) & (t < b)
    idx = np.flatnonzero(m)
    tt = np.concatenate([[a], t[idx], [b]])
    yy = np.concatenate([[ya], y[idx], [yb]])
    d = np.diff(tt)
    w = np.zeros(tt.size)
    w[:-1] += 0.5 * d
    w[1:] += 0.5 * d
    return float(np.dot(w, yy)), w[1:-1], idx


def _trapz_parts(t: np.ndarray, y: np.ndarray, a: float, b: float) -> tuple[float, float, float, np.ndarray]:
    """Split ∫_a^b y dt (trapezoid rule) into the readings' part and the end values' weights.

    Returns (inner, w_a, w_b, w_inner) with ∫ = inner + w_a·y(a) + w_b·y(b), so the end
    levels (fit parameters) can vary without recomputing the sum over the readings.
    """
    m = (t > a) & (t < b)
    idx = np.flatnonzero(m)
    tt = np.concatenate([[a], t[idx], [b]])
    d = np.diff(tt)
    w = np.zeros(tt.size)
    w[:-1] += 0.5 * d
    w[1:] += 0.5 * d
    return float(np.dot(w[1:-1], y[idx])), float(w[0]), float(w[-1]), w[1:-1]


def _method_term(name: str, value: float) -> float:
    return METHOD_TERMS.get(name, 0.01) * abs(value) / math.sqrt(3.0)


def resolution_term(q: float, s: float, span: float = 0.0) -> float:
    """Return the standard uncertainty a thermometer resolution q leaves in a fitted level.

    Without dither a level read at resolution q is off by up to ±q/2 (rectangular, u = q/√12;
    GUM F.2.2.1). Two things dither the quantiser: noise of standard deviation σ, which shrinks
    the mean quantisation error like its first Fourier harmonic, exp(−2π²σ²/q²) (the classical
    result for quantisation of a signal with Gaussian noise). σ is the residual SD less the
    quantisation share q²/12, so a drift that merely steps through the levels earns no
    credit (measured on simulated runs: crediting it left the intervals too short).
    """
    if q <= 0:
        return 0.0
    sigma2 = max(s * s - q * q / 12.0, 0.0)
    factor = math.exp(-2.0 * math.pi**2 * sigma2 / (q * q))
    return q / math.sqrt(12.0) * factor


def _res_terms(log: Log) -> tuple[float, float]:
    """Return the resolution terms of the start and end levels (from the fore and after windows)."""
    cached = log._lines.get("resolution_terms")
    if cached is not None:
        return cached
    out = []
    for which in ("fore", "after"):
        tw, _yw = log.window(which)
        if tw.size > 2:
            out.append(resolution_term(log.resolution, log.line(which).s))
        else:
            out.append(log.resolution / math.sqrt(12.0))
    log._lines["resolution_terms"] = (out[0], out[1])
    return out[0], out[1]


def _numgrad(f: Callable[[np.ndarray], float], p: np.ndarray, cov: np.ndarray) -> np.ndarray:
    g = np.empty(p.size)
    sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
    for i in range(p.size):
        h = sd[i] * 1e-3 if sd[i] > 0 and math.isfinite(sd[i]) else 1e-8 * max(abs(p[i]), 1.0)
        pp = p.copy()
        pm = p.copy()
        pp[i] += h
        pm[i] -= h
        g[i] = (f(pp) - f(pm)) / (2 * h)
    return g


def _quad_form(g: np.ndarray, cov: np.ndarray) -> float:
    v = float(g @ cov @ g)
    return v if v > 0 and math.isfinite(v) else 0.0


#: Longest drift window used by the straight-line methods, s. Straight lines fitted to
#: long windows of an exponential drift are biased (docs/methods.md §2.1–2.2); 5 minutes next to
#: the main period is the usual advice.
LINE_WINDOW_MAX = 300.0


def _line_fits(log: Log) -> tuple[LineFit, LineFit]:
    """Fit straight lines to at most LINE_WINDOW_MAX of each period, next to the main period."""
    tf_, yf_ = log.window("fore")
    ta_, ya_ = log.window("after")
    mf = tf_ >= tf_[-1] - LINE_WINDOW_MAX
    ma = ta_ <= ta_[0] + LINE_WINDOW_MAX
    if np.count_nonzero(mf) < 8:
        mf = np.ones_like(tf_, dtype=bool)
    if np.count_nonzero(ma) < 8:
        ma = np.ones_like(ta_, dtype=bool)
    return fit_line(tf_[mf], yf_[mf]), fit_line(ta_[ma], ya_[ma])


def _classic_k(fore: LineFit, after: LineFit) -> float:
    dT = after.a - fore.a
    if abs(dT) < 1e-6:
        return 0.0
    k = (fore.b - after.b) / dT
    return k if 0.0 <= k < 1 / 300.0 else 0.0


def _need(log: Log) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    tf_, yf_ = log.window("fore")
    ta_, ya_ = log.window("after")
    if tf_.size < 3 or ta_.size < 3:
        raise AnalysisError("the fore or after period has fewer than 3 readings")
    return tf_, yf_, ta_, ya_


# --------------------------------------------------------------------- methods


@register_method("regnault-pfaundler")
def _regnault_pfaundler(log: Log) -> DeltaT:
    """Newtonian Regnault–Pfaundler: one drift law fitted to both periods, exchange integrated on the readings."""
    tf_, yf_, ta_, ya_ = _need(log)
    t_i = log.periods.mixing_time
    t_f = log.periods.main_end
    fore = log.line("fore")
    after = log.line("after")
    t, y = log.t, log.y
    warnings: list[str] = []
    inner, w_a, w_b, w = _trapz_parts(t, y, t_i, t_f)
    if log.two_solution:
        # Drift law of the final system from the after period alone; start level from the fore line.
        nf = fit_newton_single(ta_, ya_, t_f, k0=0.0)
        T_A = fore.at(t_i)
        var_TA = fore.var_at(t_i)

        def dT_of(p: np.ndarray) -> float:
            y_f, g_f, k = p
            integ = inner + w_a * T_A + w_b * y_f
            return (y_f - T_A) - g_f * (t_f - t_i) - k * (y_f * (t_f - t_i) - integ)

        # the start level (fore line) enters with sensitivity −1 − k·(first half-interval) ≈ −1
        extra_var, dof, i_k = var_TA, min(nf.dof, fore.dof), 2
        not_newtonian = (
            "after-period drift is not Newtonian (exchange constant k < 0): "
            "room temperature change, evaporation or an unfinished process?"
        )
        specific = {"after_newton": (*(float(v) for v in nf.params), t_f)}
        start, u_start = T_A, math.sqrt(var_TA)
    else:
        nf = fit_newton_joint(tf_, yf_, ta_, ya_, t_i, t_f, k0=_classic_k(fore, after))

        def dT_of(p: np.ndarray) -> float:
            y_i, y_f, g_i, k = p
            integ = inner + w_a * y_i + w_b * y_f
            return (y_f - y_i) - g_i * (t_f - t_i) - k * (y_i * (t_f - t_i) - integ)

        extra_var, dof, i_k = 0.0, nf.dof, 3
        not_newtonian = (
            "drift is not Newtonian (exchange constant k < 0): room temperature change, "
            "evaporation, a heating stir plate or an unfinished process?"
        )
        specific = {"newton_joint": tuple(float(v) for v in nf.params)}
        start, u_start = float(nf.params[0]), math.sqrt(max(nf.cov[0, 0], 0.0))
    p = nf.params
    k = nf.k
    value = dT_of(p)
    var = _quad_form(_numgrad(dT_of, p, nf.cov), nf.cov) + extra_var + (k * nf.s) ** 2 * float(np.dot(w, w))
    u_k = math.sqrt(max(nf.cov[i_k, i_k], 0.0))
    if k < 0 and abs(k) > 2 * u_k:
        warnings.append(not_newtonian)
    construction = {
        "k_per_s": k,
        "u_k_per_s": u_k,
        "convergence_temperature_K": nf.convergence_temperature(),
        **specific,
        "fore_line": (fore.a, fore.b, fore.t_mean),
        "t_i": t_i,
        "t_f": t_f,
    }
    construction["after_line"] = (after.a, after.b, after.t_mean)
    construction["autocorrelation"] = nf.rho
    construction["residual_sd_K"] = nf.s
    return DeltaT(
        method="regnault-pfaundler",
        value=value,
        u_fit=math.sqrt(var),
        dof_fit=dof,
        u_resolution_start=_res_terms(log)[0],
        u_resolution_end=_res_terms(log)[1],
        u_method=_method_term("regnault-pfaundler", value),
        u_mixing_time=0.0,  # the Newtonian correction needs no exact mixing time
        start_temperature=start,
        u_start_temperature=u_start,
        end_temperature=start + value,
        construction=construction,
        warnings=warnings,
    )


@register_method("linear-extrapolation")
def _linear(log: Log) -> DeltaT:
    """Fore and after drift lines extrapolated to the mixing time."""
    tf_, yf_, ta_, ya_ = _need(log)
    t_m = log.periods.mixing_time
    fore, after = _line_fits(log)
    value = after.at(t_m) - fore.at(t_m)
    var = after.var_at(t_m) + fore.var_at(t_m)
    u_tm = abs(after.b - fore.b) * log.periods.u_mixing_time
    warnings = []
    ext = (log.periods.main_end - t_m) + 0.5 * min(ta_[-1] - ta_[0], LINE_WINDOW_MAX)
    if abs(after.b - fore.b) * ext > 0.01 * abs(value):
        warnings.append(
            "linear extrapolation over a long after period: the drift lines are curved, so this method "
            "can be biased by more than 1 %; the default method does not have this bias"
        )
    return DeltaT(
        method="linear-extrapolation",
        value=value,
        u_fit=math.sqrt(var),
        dof_fit=min(fore.dof, after.dof),
        u_resolution_start=_res_terms(log)[0],
        u_resolution_end=_res_terms(log)[1],
        u_method=_method_term("linear-extrapolation", value),
        u_mixing_time=u_tm,
        start_temperature=fore.at(t_m),
        u_start_temperature=math.sqrt(fore.var_at(t_m)),
        end_temperature=after.at(t_m),
        construction={
            "fore_line": (fore.a, fore.b, fore.t_mean),
            "after_line": (after.a, after.b, after.t_mean),
            "t_x": t_m,
            "t_i": t_m,
            "t_f": log.periods.main_end,
        },
        warnings=warnings,
    )


@register_method("equal-area")
def _equal_area(log: Log) -> DeltaT:
    """Fore and after drift lines taken at the equal-area time t_x = t_f − ∫F dt."""
    tf_, yf_, ta_, ya_ = _need(log)
    t_i = log.periods.mixing_time
    t_f = log.periods.main_end
    fore, after = _line_fits(log)
    T_i = fore.at(t_i)
    T_f = after.at(t_f)
    if abs(T_f - T_i) <= 0:
        raise AnalysisError("no temperature change between the fore and after periods")
    integ, _, _ = _trapz_between(log.t, log.y, t_i, T_i, t_f, T_f)
    # ∫F dt with F = (y − T_i)/(T_f − T_i)
    intF = (integ - T_i * (t_f - t_i)) / (T_f - T_i)
    t_x = t_f - intF
    value = after.at(t_x) - fore.at(t_x)
    u_tx = float(np.median(np.diff(log.t))) / math.sqrt(12.0)
    var = after.var_at(t_x) + fore.var_at(t_x)
    return DeltaT(
        method="equal-area",
        value=value,
        u_fit=math.sqrt(var),
        dof_fit=min(fore.dof, after.dof),
        u_resolution_start=_res_terms(log)[0],
        u_resolution_end=_res_terms(log)[1],
        u_method=_method_term("equal-area", value),
        u_mixing_time=abs(after.b - fore.b) * u_tx,
        start_temperature=fore.at(t_x),
        u_start_temperature=math.sqrt(fore.var_at(t_x)),
        end_temperature=after.at(t_x),
        construction={
            "fore_line": (fore.a, fore.b, fore.t_mean),
            "after_line": (after.a, after.b, after.t_mean),
            "t_x": t_x,
            "t_i": t_i,
            "t_f": t_f,
            "sixty_percent_time": _fraction_time(log, T_i, T_f, 0.6),
        },
    )


def _fraction_time(log: Log, T_i: float, T_f: float, frac: float) -> float | None:
    m = log.t > log.periods.mixing_time
    F = (log.y[m] - T_i) / (T_f - T_i)
    idx = np.flatnonzero(F >= frac)
    return float(log.t[m][idx[0]]) if idx.size else None


@register_method("naive")
def _naive(log: Log) -> DeltaT:
    """Extreme reading minus the last fore reading (biased; for comparison only)."""
    tf_, yf_, ta_, ya_ = _need(log)
    t_m = log.periods.mixing_time
    fore = fit_line(tf_, yf_)
    start = float(np.mean(yf_[-5:]))
    post = log.y[log.t > t_m]
    end_guess = after_mean = float(np.mean(ya_))
    if after_mean >= start:
        end = float(np.max(post))
    else:
        end = float(np.min(post))
    del end_guess
    value = end - start
    sigma = fore.s
    return DeltaT(
        method="naive",
        value=value,
        u_fit=math.sqrt(sigma**2 + sigma**2 / min(5, yf_.size)),
        dof_fit=max(fore.dof, 1.0),
        u_resolution_start=_res_terms(log)[0],
        u_resolution_end=_res_terms(log)[1],
        u_method=_method_term("naive", value),
        u_mixing_time=0.0,
        start_temperature=start,
        u_start_temperature=sigma,
        end_temperature=end,
        construction={"t_i": t_m, "t_f": log.periods.main_end},
        warnings=[
            "naive ΔT (extreme reading minus initial) ignores the heat exchanged before the extreme "
            "and is biased low in magnitude (often by 2–10 %); use it for comparison only"
        ],
    )


# --------------------------------------------------------------------- warnings


def _common_warnings(log: Log, dt: DeltaT) -> None:
    q = log.resolution
    if abs(dt.value) < 10 * q:
        dt.warnings.append(
            f"|ΔT| = {abs(dt.value):.3g} K is under 10 × the thermometer resolution ({q:g} K): "
            "use a finer thermometer or more substance"
        )
    g_i = log.line("fore").b
    g_f = log.line("after").b
    duration = max(log.periods.main_end - log.periods.mixing_time, 1.0)
    big = max(abs(g_i), abs(g_f)) * duration
    if big > 0.2 * abs(dt.value) or max(abs(g_i), abs(g_f)) * 60 > 0.1:
        dt.warnings.append(
            f"large drift ({max(abs(g_i), abs(g_f)) * 60:.3g} K/min): "
            "let the solutions reach room temperature, use a lid and check the stir plate"
        )
    for w in log.periods.warnings:
        if w not in dt.warnings:
            dt.warnings.append(w)


@register_method("model-fit")
def _model_fit(log: Log) -> DeltaT:
    """Explicit model (exchange, first-order release, probe lag) fitted by least squares."""
    # Lives in calc.deltat.modelfit, imported on first use: it needs scipy.optimize, whose import
    # would otherwise slow every start of the command line.
    from calc.deltat.modelfit import model_fit

    return model_fit(log)
