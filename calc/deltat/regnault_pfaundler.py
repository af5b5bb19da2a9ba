"""ΔT method ``regnault-pfaundler`` (the default): Newtonian Regnault–Pfaundler.

One Newtonian drift law dT/dt = g(T) is fitted jointly to the fore and after periods;
ΔT = T(t_f) − T(t_i) − ∫ g(T) dt over the main period, the integral taken on the readings
(docs/methods.md §2.3). Two-solution runs take the drift law from the after period alone and
start from the fore line's value at the mixing time.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, cast

import numpy as np

from calc.deltat.base import DeltaT, Log, method_term, need_windows, register_method, resolution_terms
from calc.deltat.constructions import AfterNewtonConstruction, JointNewtonConstruction, NewtonianConstruction
from calc.deltat.drift import (
    LineFit,
    NewtonFit,
    decay_integral,
    fit_line,
    fit_newton_joint,
    fit_newton_single,
    pooled_lag1,
)
from calc.deltat.quantisation import split_sawtooth

__all__ = ["regnault_pfaundler", "classic_k", "fore_curvature"]

_NOT_NEWTONIAN_TWO = (
    "after-period drift is not Newtonian (exchange constant k < 0): "
    "room temperature change, evaporation or an unfinished process?"
)
_NOT_NEWTONIAN_ONE = (
    "drift is not Newtonian (exchange constant k < 0): room temperature change, "
    "evaporation, a heating stir plate or an unfinished process?"
)


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


def _numgrad(f: Callable[[np.ndarray], float], p: np.ndarray, cov: np.ndarray) -> np.ndarray:
    """Central-difference gradient of ``f`` at ``p``, steps of 1/1000 of each parameter's SD."""
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


def classic_k(fore: LineFit, after: LineFit) -> float:
    """Return the exchange constant from the two drift lines' slopes and levels (0 when implausible)."""
    dT = after.a - fore.a
    if abs(dT) < 1e-6:
        return 0.0
    k = (fore.b - after.b) / dT
    return k if 0.0 <= k < 1 / 300.0 else 0.0


def fore_curvature(log: Log, fore: LineFit, k: float) -> tuple[float, float, float]:
    """Return what a Newtonian fore drift adds to the straight fore line's value at the mixing time (K).

    Before mixing the contents follow T' = k_A (T_∞ − T), so T'' = −k_A T' ≈ −k_A b: the drift is
    bent, and a straight line fitted over the fore window and carried to t_i misses by
    (T''/2)·G, G the line's own extrapolation of (t − t_i)² to t_i (about −L²/6 for a window of
    length L ending at t_i). The returned correction is k_A b G/2, with k_A taken as the after
    law's k (the exchange constant of the cup before mixing is not fitted); the caller takes the
    correction itself as the half-width of a rectangular term, i.e. k_A anywhere in 0–2k
    (docs/methods.md §8.8).

    Returned as the bent curve's departure from the straight line, q0 + q1 u + q2 u² with u = t − t_i:
    (T''/2)·(u² − P(u)), P the straight line fitted to u² over the window; q0 = q(t_i) is the correction.
    """
    tf_, _ = log.window("fore")
    if k <= 0.0 or tf_.size < 3:
        return (0.0, 0.0, 0.0)
    t_i = log.periods.mixing_time
    P = fit_line(tf_, (tf_ - t_i) ** 2)
    half_curv = -0.5 * k * fore.b  # T''/2
    return (-half_curv * P.at(t_i), -half_curv * P.b, half_curv)


@dataclass(frozen=True)
class _Setup:
    """What differs between one- and two-solution runs: the fit, ΔT(parameters) and the start level."""

    fit: NewtonFit
    delta_t_of: Callable[[np.ndarray], float]
    extra_var: float  # variance entering besides the fit parameters (the fore line's level)
    dof: float
    i_k: int  # index of k in the parameters
    not_newtonian: str
    start: float
    u_start: float
    fore_bend: tuple[float, float, float] = (0.0, 0.0, 0.0)  # two solutions: the bent fore drift (fore_curvature)


def _one_noise_correlation(log: Log, fore: LineFit, nf: NewtonFit) -> tuple[LineFit, NewtonFit]:
    """Refit both windows with the larger of their own and the pooled noise correlation.

    One stirrer and one logger: the fore and after windows share a correlation time, and a short
    window alone reads it low (docs/methods.md §8.4).
    """
    tf_, yf_ = log.window("fore")
    ta_, ya_ = log.window("after")
    y_f, g_f, k = (float(v) for v in nf.params)
    resid_f = yf_ - (fore.a + fore.b * (tf_ - fore.t_mean))
    resid_a = ya_ - (y_f + g_f * decay_integral(k, ta_ - float(nf.t_f)))
    # the thermometer's sawtooth is not noise (docs/methods.md §8.2)
    noise_f = split_sawtooth(resid_f, yf_ - resid_f, log.resolution)[0]
    noise_a = split_sawtooth(resid_a, ya_ - resid_a, log.resolution)[0]
    rho = max(fore.rho, nf.rho, pooled_lag1(noise_f, noise_a))
    if rho > fore.rho:
        fore = fit_line(tf_, yf_, rho_min=rho, q=log.resolution)
    if rho > nf.rho:
        nf = fit_newton_single(ta_, ya_, float(nf.t_f), k0=k, rho_min=rho, q=log.resolution)
    return fore, nf


def _two_solution(log: Log, fore: LineFit, parts: tuple[float, float, float]) -> _Setup:
    """Drift law of the final system from the after period alone; start level from the fore line."""
    inner, w_a, w_b = parts
    t_i, t_f = log.periods.mixing_time, log.periods.main_end
    ta_, ya_ = log.window("after")
    nf = fit_newton_single(ta_, ya_, t_f, k0=0.0, q=log.resolution)
    fore, nf = _one_noise_correlation(log, fore, nf)
    quad = fore_curvature(log, fore, max(nf.k, 0.0))
    bend = quad[0]
    T_A = fore.at(t_i) + bend
    var_TA = fore.var_at(t_i) + bend * bend / 3.0

    def dT_of(p: np.ndarray) -> float:
        y_f, g_f, k = p
        integ = inner + w_a * T_A + w_b * y_f
        return cast(float, (y_f - T_A) - g_f * (t_f - t_i) - k * (y_f * (t_f - t_i) - integ))

    # the start level (fore line) enters with sensitivity −1 − k·(first half-interval) ≈ −1
    return _Setup(nf, dT_of, var_TA, min(nf.dof, fore.dof), 2, _NOT_NEWTONIAN_TWO, T_A, math.sqrt(var_TA), quad)


def _one_solution(log: Log, fore: LineFit, after: LineFit, parts: tuple[float, float, float]) -> _Setup:
    """One Newtonian law fitted to the fore and after periods together."""
    inner, w_a, w_b = parts
    t_i, t_f = log.periods.mixing_time, log.periods.main_end
    tf_, yf_, ta_, ya_ = need_windows(log)
    nf = fit_newton_joint(tf_, yf_, ta_, ya_, t_i, t_f, k0=classic_k(fore, after), q=log.resolution)

    def dT_of(p: np.ndarray) -> float:
        y_i, y_f, g_i, k = p
        integ = inner + w_a * y_i + w_b * y_f
        return cast(float, (y_f - y_i) - g_i * (t_f - t_i) - k * (y_i * (t_f - t_i) - integ))

    start, u_start = float(nf.params[0]), math.sqrt(max(nf.cov[0, 0], 0.0))
    return _Setup(nf, dT_of, 0.0, nf.dof, 3, _NOT_NEWTONIAN_ONE, start, u_start)


def _construction(log: Log, setup: _Setup, u_k: float, fore: LineFit, after: LineFit) -> NewtonianConstruction:
    nf = setup.fit
    common: dict[str, Any] = dict(
        t_i=log.periods.mixing_time,
        t_f=log.periods.main_end,
        k_per_s=nf.k,
        u_k_per_s=u_k,
        convergence_temperature_K=nf.convergence_temperature(),
        fore_line=(fore.a, fore.b, fore.t_mean),
        after_line=(after.a, after.b, after.t_mean),
        autocorrelation=nf.rho,
        residual_sd_K=nf.s,
    )
    if log.two_solution:
        y_f, g_f, k_f = (float(v) for v in nf.params)  # the after period's own law: three parameters
        after_newton = (y_f, g_f, k_f, log.periods.main_end)
        return AfterNewtonConstruction(**common, after_newton=after_newton, fore_bend=setup.fore_bend)
    y_i, y_f, g_i, k = (float(v) for v in nf.params)
    return JointNewtonConstruction(**common, newton_joint=(y_i, y_f, g_i, k))


@register_method("regnault-pfaundler")
def regnault_pfaundler(log: Log) -> DeltaT:
    """Newtonian Regnault–Pfaundler: one drift law fitted to both periods, exchange integrated on the readings."""
    need_windows(log)
    fore, after = log.line("fore"), log.line("after")
    inner, w_a, w_b, w = _trapz_parts(log.t, log.y, log.periods.mixing_time, log.periods.main_end)
    parts = (inner, w_a, w_b)
    setup = _two_solution(log, fore, parts) if log.two_solution else _one_solution(log, fore, after, parts)
    nf, k = setup.fit, setup.fit.k
    value = setup.delta_t_of(nf.params)
    grad = _numgrad(setup.delta_t_of, nf.params, nf.cov)
    var = _quad_form(grad, nf.cov) + setup.extra_var + (k * nf.s) ** 2 * float(np.dot(w, w))
    u_k = math.sqrt(max(nf.cov[setup.i_k, setup.i_k], 0.0))
    warnings = [setup.not_newtonian] if k < 0 and abs(k) > 2 * u_k else []
    res_start, res_end = resolution_terms(log)
    return DeltaT(
        method="regnault-pfaundler",
        value=value,
        u_fit=math.sqrt(var),
        dof_fit=setup.dof,
        u_resolution_start=res_start,
        u_resolution_end=res_end,
        u_method=method_term("regnault-pfaundler", value),
        u_mixing_time=0.0,  # the Newtonian correction needs no exact mixing time
        start_temperature=setup.start,
        u_start_temperature=setup.u_start,
        end_temperature=setup.start + value,
        construction=_construction(log, setup, u_k, fore, after),
        warnings=warnings,
        slope_sensitivity_s=_slope_sensitivity(log, setup, grad, w_a),
    )


def _slope_sensitivity(log: Log, setup: _Setup, grad: np.ndarray, w_a: float) -> tuple[float, float] | None:
    """Return ∂ΔT/∂b for a slope b hidden in the fore window's readings, and in the after window's (s).

    A thermometer's staircase can hide a slope in a window (docs/methods.md §8.2). Its effect on ΔT
    goes through this method's own fit: readings moved by b·(t − t̄) over one window move the
    parameters by (JᵀJ)⁻¹Jᵀ·ramp (linearised at the solution) and ΔT by its gradient times that.
    One Newtonian law for both windows lets the long window pin the short one's slope, which a
    half-and-half split of the main period cannot see. Two solutions: the fore line's level at
    the mixing time moves by b·(t_i − t̄), and ΔT takes it with −1 + k·w_a.
    """
    nf = setup.fit
    J = nf.jacobian
    if J is None or not np.all(np.isfinite(J)):
        return None
    tf_, _ = log.window("fore")
    ta_, _ = log.window("after")

    def through_fit(ramp: np.ndarray) -> float:
        moved, *_ = np.linalg.lstsq(J, ramp, rcond=None)
        return float(grad @ moved)

    # the ramps pivot on each window's centre, where a straight line's level and slope are
    # independent; in a flat staircase this counts part of the edge level's error again (§8.2)
    ramp_f, ramp_a = tf_ - float(tf_.mean()), ta_ - float(ta_.mean())
    if log.two_solution:
        if J.shape[0] != ta_.size:
            return None
        sens_f = (-1.0 + nf.k * w_a) * (log.periods.mixing_time - float(tf_.mean()))
        return sens_f, through_fit(ramp_a)
    if J.shape[0] != tf_.size + ta_.size:
        return None
    zf, za = np.zeros(tf_.size), np.zeros(ta_.size)
    return through_fit(np.concatenate([ramp_f, za])), through_fit(np.concatenate([zf, ramp_a]))
