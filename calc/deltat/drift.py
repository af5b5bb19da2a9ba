"""Fits of the drift periods: straight lines and Newtonian (exponential) drifts.

These are the building blocks of every corrected-temperature-change method.
All functions take plain float arrays (seconds, kelvin) and return small
dataclasses with the fitted parameters and their covariance, already inflated
for autocorrelated residuals (docs/methods.md §2.6: AR(1) inflation (1+ρ)/(1−ρ)).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import cast

import numpy as np

from calc.deltat.quantisation import split_sawtooth

__all__ = [
    "LineFit",
    "fit_line",
    "NewtonFit",
    "fit_newton_joint",
    "fit_newton_single",
    "lag1_autocorrelation",
    "pooled_lag1",
    "inflation",
    "decay_integral",
]


#: Largest exchange constant a Newtonian fit may take, 1/s (a time constant of one minute).
K_MAX = 1.0 / 60.0

#: Largest lag-1 autocorrelation used (stirring noise correlated over 30 s read every second
#: has ρ ≈ 0.97).
RHO_MAX = 0.98


def lag1_autocorrelation(resid: np.ndarray) -> float:
    """Return the lag-1 autocorrelation of residuals, corrected for its small-sample bias, in [0, RHO_MAX].

    The sample value from n residuals of a fit is biased low by about (1 + 3ρ)/n (the first-order
    bias of the lag-1 estimate of an AR(1) series with its mean removed); with correlation times
    of 5–30 s and windows of a few minutes that bias alone halves the variance inflation.
    """
    r = np.asarray(resid, dtype=float)
    if r.size < 4:
        return 0.0
    r = r - r.mean()
    den = float(np.dot(r, r))
    if den <= 0.0:
        return 0.0
    rho = float(np.dot(r[:-1], r[1:])) / den
    if rho > 0.0:
        rho += (1.0 + 3.0 * rho) / r.size
    return min(max(rho, 0.0), RHO_MAX)


def pooled_lag1(*windows: np.ndarray) -> float:
    """Return the lag-1 autocorrelation of several residual windows taken as one noise process.

    Each window keeps its own mean and no pair of readings straddles two windows; the bias
    correction of :func:`lag1_autocorrelation` uses the pooled number of readings.
    """
    parts = [np.asarray(w, dtype=float) for w in windows if np.size(w) >= 4]
    centred = [w - w.mean() for w in parts]
    den = float(sum(np.dot(w, w) for w in centred))
    if den <= 0.0:
        return 0.0
    rho = float(sum(np.dot(w[:-1], w[1:]) for w in centred)) / den
    if rho > 0.0:
        rho += (1.0 + 3.0 * rho) / sum(w.size for w in centred)
    return min(max(rho, 0.0), RHO_MAX)


def inflation(rho: float) -> float:
    """Return the AR(1) variance inflation factor (1+ρ)/(1−ρ)."""
    return (1.0 + rho) / (1.0 - rho)


def _reading_variance(
    resid: np.ndarray, fitted: np.ndarray, p: int, q: float, rho_min: float = 0.0
) -> tuple[float, float, float]:
    """Return (each reading's variance for the covariance, the residual variance for ``s``, ρ).

    The thermometer's predicted sawtooth (:func:`split_sawtooth`) is taken out before the noise's
    lag-1 autocorrelation and variance are estimated; its own variance enters uninflated
    (docs/methods.md §8.2). With q = 0 this is f·RSS/(n − p·f) and RSS/(n − p·f).
    """
    noise, saw_var = split_sawtooth(resid, fitted, q)
    rho = max(lag1_autocorrelation(noise), rho_min)
    f = inflation(rho)
    s2 = float(np.dot(noise, noise)) / _resid_dof(noise.size, p, f)
    return f * s2 + saw_var, s2 + saw_var, rho


def _resid_dof(n: int, p: int, f: float) -> float:
    """Return the divisor that makes a residual sum of squares an unbiased noise variance.

    With correlated noise each of the p fitted parameters takes up about f readings' worth of
    the scatter (f the variance inflation), not one: E[RSS] ≈ σ²(n − p·f). The divisor is kept
    at one fifth of n or more, so a window shorter than a few correlation times does not
    divide by almost nothing.
    """
    return max(n - p * f, 0.2 * n, 1.0)


@dataclass(frozen=True)
class LineFit:
    """Straight line ``a + b (t − t̄)`` fitted by ordinary least squares."""

    a: float  # value at the centre time
    b: float  # slope, K/s
    t_mean: float
    var_a: float
    var_b: float
    s: float  # residual standard deviation
    rho: float  # lag-1 autocorrelation of the residuals
    n: int
    dof: float  # effective degrees of freedom

    def at(self, t: float) -> float:
        """Return the line's value at time ``t``."""
        return self.a + self.b * (t - self.t_mean)

    def var_at(self, t: float) -> float:
        """Return the variance of the line's value at ``t``."""
        return self.var_a + (t - self.t_mean) ** 2 * self.var_b

    @property
    def mean_temperature(self) -> float:
        """Mean temperature of the window (the line's value at its centre)."""
        return self.a


def fit_line(t: np.ndarray, y: np.ndarray, rho_min: float = 0.0, q: float = 0.0) -> LineFit:
    """Fit a straight line with centred time and AR(1)-inflated covariance.

    ``rho_min``: a lag-1 autocorrelation known from elsewhere (the other window of the same log);
    the residuals' own estimate is used when it is larger. ``q``: the thermometer resolution, K,
    whose sawtooth share of the scatter is not inflated (:func:`_reading_variance`).
    """
    n = t.size
    tm = float(t.mean())
    tc = t - tm
    stt = float(np.dot(tc, tc))
    a = float(y.mean())
    b = float(np.dot(tc, y - a) / stt) if stt > 0 else 0.0
    resid = y - a - b * tc
    v, s2, rho = _reading_variance(resid, y - resid, 2, q, rho_min)
    f = inflation(rho)
    n_eff = n / f
    return LineFit(
        a=a,
        b=b,
        t_mean=tm,
        var_a=v / n,
        var_b=v / stt if stt > 0 else math.inf,
        s=math.sqrt(s2),
        rho=rho,
        n=n,
        dof=max(n_eff - 2.0, 1.0),
    )


def decay_integral(k: float, x: np.ndarray) -> np.ndarray:
    """Return ∫₀ˣ e^{−k s} ds = (1 − e^{−k x})/k, continuous at k = 0 (equal to x there)."""
    if abs(k) < 1e-12:
        return cast(np.ndarray, x - 0.5 * k * x * x)
    return -np.expm1(-k * x) / k


def _d_decay_integral_dk(k: float, x: np.ndarray) -> np.ndarray:
    # d/dk [(1 − e^{−kx})/k] = [x k e^{−kx} − (1 − e^{−kx})]/k²  → −x²/2 at k = 0
    if abs(k) < 1e-9:
        return cast(np.ndarray, -0.5 * x * x + (k * x**3) / 3.0)
    e = np.exp(-k * x)
    return (x * k * e + np.expm1(-k * x)) / (k * k)


@dataclass(frozen=True)
class NewtonFit:
    """Newtonian drift ``dT/dt = g0 + k (T0 − T)`` fitted to one or two windows.

    Parameters are (y_i, y_f, g_i, k) for a joint fit of fore and after windows
    (y_i, y_f: the fitted temperatures at the window edges t_i and t_f next to the
    main period; g_i: the drift rate at y_i) or (y_f, g_f, k) for the after window
    alone. ``cov`` is the covariance of the parameters in that order, inflated for
    autocorrelation.
    """

    params: np.ndarray
    cov: np.ndarray
    t_i: float | None
    t_f: float
    s: float
    rho: float
    n: int
    dof: float
    converged: bool
    jacobian: np.ndarray | None = None  # ∂(model)/∂(params) at the solution, one row a reading

    @property
    def k(self) -> float:
        """Heat-exchange rate constant, 1/s."""
        return float(self.params[-1])

    def drift(self, temperature: np.ndarray | float) -> np.ndarray | float:
        """Return the drift rate g(T) in K/s."""
        if self.t_i is not None:
            y_i, _y_f, g_i, k = self.params
            return cast("np.ndarray | float", g_i + k * (y_i - temperature))
        y_f, g_f, k = self.params
        return cast("np.ndarray | float", g_f + k * (y_f - temperature))

    def convergence_temperature(self) -> float:
        """Return T∞ (where the drift is zero); inf when k is zero."""
        if self.t_i is not None:
            y_i, _y_f, g_i, k = self.params
            return y_i + g_i / k if k != 0 else math.inf
        y_f, g_f, k = self.params
        return y_f + g_f / k if k != 0 else math.inf


def _joint_design(k: float, tf_: np.ndarray, ta_: np.ndarray) -> np.ndarray:
    # Model, linear in (y_i, y_f, g_i) at fixed k:
    #   fore:  y = y_i + g_i φ(t − t_i)                         (t ≤ t_i, so x ≤ 0)
    #   after: y = y_f + [g_i + k (y_i − y_f)] φ(t − t_f)
    pf = decay_integral(k, tf_)
    pa = decay_integral(k, ta_)
    nf, na = tf_.size, ta_.size
    X = np.empty((nf + na, 3))
    X[:nf, 0] = 1.0
    X[:nf, 1] = 0.0
    X[:nf, 2] = pf
    X[nf:, 0] = k * pa
    X[nf:, 1] = 1.0 - k * pa
    X[nf:, 2] = pa
    return X


VarproModel = Callable[[float], tuple[np.ndarray, Callable[[np.ndarray], np.ndarray]]]


def _varpro(
    model: VarproModel, y: np.ndarray, k0: float, max_iter: int = 30
) -> tuple[float, np.ndarray, np.ndarray, np.ndarray, bool]:
    """Solve a model that is linear in its parameters β at fixed k, and nonlinear in k.

    ``model(k)`` returns the design matrix X(k) and a function giving ∂(Xβ)/∂k for given β.
    k is found by Gauss–Newton on the residual with the linear part projected out
    (variable projection, Kaufman's step); |k| is kept below 1/(60 s).
    Returns (k, β, X, full Jacobian [X, ∂/∂k], converged).
    """
    k = float(k0)
    converged = False
    for _ in range(max_iter):
        X, dk_of = model(k)
        beta, *_ = np.linalg.lstsq(X, y, rcond=None)
        r = y - X @ beta
        dk = dk_of(beta)
        q, _ = np.linalg.qr(X)
        dk_perp = dk - q @ (q.T @ dk)
        den = float(np.dot(dk_perp, dk_perp))
        if den <= 0:
            converged = True
            break
        step = max(min(float(np.dot(dk_perp, r)) / den, 0.02), -0.02)
        k_new = k + step
        if abs(k_new) > K_MAX:
            k_new = math.copysign(K_MAX, k_new)
        done = abs(step) <= 1e-10 + 1e-7 * abs(k)
        k = k_new
        if done:
            converged = True
            break
    X, dk_of = model(k)
    beta, *_ = np.linalg.lstsq(X, y, rcond=None)
    return k, beta, X, np.column_stack([X, dk_of(beta)]), converged


def _window_variances(resid: np.ndarray, fitted: np.ndarray, n_fore: int, q: float = 0.0) -> tuple[np.ndarray, float]:
    """Return each reading's noise variance, AR(1)-inflated per window, and the larger lag-1 autocorrelation."""
    (rf, saw_f), (ra, saw_a) = (
        split_sawtooth(r, y, q) for r, y in ((resid[:n_fore], fitted[:n_fore]), (resid[n_fore:], fitted[n_fore:]))
    )
    # one stirrer and one logger: the noise has one correlation time in both windows, and a short
    # window's own estimate is low and scattered, so each window takes the larger of its own
    # estimate and the pooled one (docs/methods.md §8.4)
    rho = max(lag1_autocorrelation(rf), lag1_autocorrelation(ra), pooled_lag1(rf, ra))
    f = inflation(rho)
    # two of the four parameters belong to each window; the sawtooth's share is not inflated (§8.2)
    v_f = f * float(np.dot(rf, rf)) / _resid_dof(rf.size, 2, f) + saw_f
    v_a = f * float(np.dot(ra, ra)) / _resid_dof(ra.size, 2, f) + saw_a
    return np.concatenate([np.full(n_fore, v_f), np.full(ra.size, v_a)]), rho


def _newton_fit(
    params: np.ndarray,
    J: np.ndarray,
    omega: np.ndarray,
    times: tuple[float | None, float],
    s2: float,
    rho: float,
    converged: bool,
) -> NewtonFit:
    """Return a Newtonian fit with the sandwich covariance A⁻¹(JᵀΩJ)A⁻¹, Ω = diag(omega), A = JᵀJ."""
    n, p = J.shape
    try:
        a_inv = np.linalg.inv(J.T @ J)
        cov = a_inv @ (J.T @ (J * omega[:, None])) @ a_inv
    except np.linalg.LinAlgError:
        cov = np.full((p, p), np.inf)
    t_i, t_f = times
    dof = max(n / inflation(rho) - p, 1.0)
    return NewtonFit(params, cov, t_i, t_f, math.sqrt(s2), rho, n, dof, converged, J)


def fit_newton_joint(
    t_fore: np.ndarray,
    y_fore: np.ndarray,
    t_after: np.ndarray,
    y_after: np.ndarray,
    t_i: float,
    t_f: float,
    k0: float = 0.0,
    q: float = 0.0,
) -> NewtonFit:
    """Fit fore and after windows jointly with one Newtonian drift law (``q`` as in :func:`fit_line`).

    Variable projection: for fixed k the model is linear in (y_i, y_f, g_i). The
    covariance is a sandwich A⁻¹(JᵀΩJ)A⁻¹ in which each window keeps its own noise
    level and AR(1) inflation.
    """
    xf = t_fore - t_i
    xa = t_after - t_f
    y = np.concatenate([y_fore, y_after])
    nf_ = xf.size

    def model(k: float) -> tuple[np.ndarray, Callable[[np.ndarray], np.ndarray]]:
        X = _joint_design(k, xf, xa)

        def dk_of(beta: np.ndarray) -> np.ndarray:
            y_i, y_f, g_i = beta
            g_f = g_i + k * (y_i - y_f)
            return np.concatenate(
                [
                    g_i * _d_decay_integral_dk(k, xf),
                    (y_i - y_f) * decay_integral(k, xa) + g_f * _d_decay_integral_dk(k, xa),
                ]
            )

        return X, dk_of

    k, beta, X, J, converged = _varpro(model, y, k0)
    y_i, y_f, g_i = beta
    resid = y - X @ beta
    n = y.size
    p = 4
    s2 = float(np.dot(resid, resid)) / max(n - p, 1)
    omega, rho = _window_variances(resid, y - resid, nf_, q)
    return _newton_fit(np.array([y_i, y_f, g_i, k]), J, omega, (t_i, t_f), s2, rho, converged)


def fit_newton_single(
    t: np.ndarray,
    y: np.ndarray,
    t_f: float,
    k0: float = 0.0,
    max_iter: int = 30,
    rho_min: float = 0.0,
    q: float = 0.0,
) -> NewtonFit:
    """Fit one window with ``y = y_f + g_f φ(t − t_f)`` (Newtonian drift, own k; ``rho_min``, ``q`` as in :func:`fit_line`).

    Used for the after period of two-solution runs, whose heat-exchange constant
    differs from the fore period's (docs/methods.md §2.3, two-solution caveat).
    """
    x = t - t_f

    def model(k: float) -> tuple[np.ndarray, Callable[[np.ndarray], np.ndarray]]:
        X = np.column_stack([np.ones_like(x), decay_integral(k, x)])
        return X, lambda beta: beta[1] * _d_decay_integral_dk(k, x)

    k, beta, X, J, converged = _varpro(model, y, k0, max_iter)
    resid = y - X @ beta
    n = y.size
    v, s2, rho = _reading_variance(resid, y - resid, 3, q, rho_min)
    omega = np.full(n, v)
    return _newton_fit(np.array([beta[0], beta[1], k]), J, omega, (None, t_f), s2, rho, converged)
