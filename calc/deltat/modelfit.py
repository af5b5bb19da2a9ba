"""ΔT method ``model-fit``: least squares on an explicit heat-exchange model.

Model (docs/methods.md §2.4): Newtonian exchange with rate k towards T∞, a first-order
release of the total adiabatic change D with rate k_r, and a first-order probe
with rate s. With u = t − t_m the probe reads

    Ts(u) = T∞ + A1·s/(s−k)·e^{−ku} + A2·s/(s−k_r)·e^{−k_r u}
            + [T_m − T∞ − A1·s/(s−k) − A2·s/(s−k_r)]·e^{−su}
    A1 = (T_m − T∞) + D·k_r/(k_r − k),  A2 = −D·k_r/(k_r − k)

and before mixing T = T∞ + (T_m − T∞)e^{−ku}. The fitted D is the corrected
temperature change; the fit also gives the release time 1/k_r (was the process
complete?) and the probe time constant 1/s (probe health). For two-solution
runs the fore period belongs to another system: the start level T_m is the fore
line's value at the mixing time and only the readings after mixing are fitted.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import least_squares

from calc.deltat.methods import DeltaT, Log, _method_term, _need, _regnault_pfaundler, _res_terms
from calc.deltat.drift import fit_line, inflation, lag1_autocorrelation
from calc.errors import AnalysisError

__all__ = ["probe_reading", "model_fit"]


def probe_reading(u: np.ndarray, T_inf: float, k: float, T_m: float, D: float, k_r: float, s: float) -> np.ndarray:
    """Return the probe reading at times ``u`` after mixing (closed form, docs/methods.md §2.4)."""
    if abs(k_r - k) < 1e-12:
        k_r = k + 1e-12
    if abs(s - k_r) < 1e-9 * s:
        s = k_r * (1 + 1e-6)
    if abs(s - k) < 1e-12:
        s = k + 1e-12
    A1 = (T_m - T_inf) + D * k_r / (k_r - k)
    A2 = -D * k_r / (k_r - k)
    b1 = A1 * s / (s - k)
    b2 = A2 * s / (s - k_r)
    return T_inf + b1 * np.exp(-k * u) + b2 * np.exp(-k_r * u) + (T_m - T_inf - b1 - b2) * np.exp(-s * u)


def model_fit(log: Log) -> DeltaT:
    """Explicit model (exchange, first-order release, probe lag) fitted by least squares."""
    tf_, yf_, ta_, ya_ = _need(log)
    t_m = log.periods.mixing_time
    rp = _regnault_pfaundler(log)
    k0 = rp.construction.get("k_per_s", 0.0)
    if not (1e-6 < k0 < 1 / 120.0):
        k0 = 1 / 3600.0
    T_end = rp.end_temperature
    tinf0 = rp.construction.get("convergence_temperature_K", math.inf)
    if not math.isfinite(tinf0) or abs(tinf0 - T_end) > 50:
        tinf0 = T_end
    tau0 = log.periods.release_time_constant or 30.0
    kr0 = 1.0 / max(tau0, 2.0)
    s0 = 1.0 / 5.0
    m_post = (log.t > t_m) & (log.t <= log.periods.after[1] + 1e-9)
    tp = log.t[m_post] - t_m
    yp = log.y[m_post]
    if log.two_solution:
        fore = fit_line(tf_, yf_)
        T_m = fore.at(t_m)

        def resid(p: np.ndarray) -> np.ndarray:
            T_inf, k, D, lkr, ls = p
            return probe_reading(tp, T_inf, k, T_m, D, math.exp(lkr), math.exp(ls)) - yp

        p0 = np.array([tinf0, k0, rp.value, math.log(kr0), math.log(s0)])
        lb = [-np.inf, -1 / 600.0, -np.inf, math.log(1e-4), math.log(1e-3)]
        ub = [np.inf, 1 / 60.0, np.inf, math.log(5.0), math.log(10.0)]
        i_D = 2
        n_fore = 0
    else:
        uf = tf_ - t_m

        def resid(p: np.ndarray) -> np.ndarray:
            T_inf, k, T_m, D, lkr, ls = p
            fore_model = T_inf + (T_m - T_inf) * np.exp(-k * uf)
            post = probe_reading(tp, T_inf, k, T_m, D, math.exp(lkr), math.exp(ls))
            return np.concatenate([fore_model - yf_, post - yp])

        p0 = np.array([tinf0, k0, rp.start_temperature, rp.value, math.log(kr0), math.log(s0)])
        lb = [-np.inf, -1 / 600.0, -np.inf, -np.inf, math.log(1e-4), math.log(1e-3)]
        ub = [np.inf, 1 / 60.0, np.inf, np.inf, math.log(5.0), math.log(10.0)]
        i_D = 3
        n_fore = tf_.size
    p0 = np.clip(p0, np.array(lb) + 1e-12, np.array(ub) - 1e-12)
    try:
        fit = least_squares(resid, p0, bounds=(lb, ub), x_scale="jac", max_nfev=400)
    except Exception as exc:  # pragma: no cover - scipy failures are rare
        raise AnalysisError(f"the model fit failed ({exc})") from None
    r = fit.fun
    n = r.size
    npar = p0.size
    s2 = float(np.dot(r, r)) / max(n - npar, 1)
    rho = max(lag1_autocorrelation(r[:n_fore]) if n_fore > 3 else 0.0, lag1_autocorrelation(r[n_fore:]))
    f = inflation(rho)
    J = fit.jac
    try:
        cov = f * s2 * np.linalg.pinv(J.T @ J)
    except np.linalg.LinAlgError:
        cov = np.full((npar, npar), np.inf)
    D = float(fit.x[i_D])
    uD = math.sqrt(max(float(cov[i_D, i_D]), 0.0))
    warnings = []
    tau_r = math.exp(-fit.x[-2])
    tau_s = math.exp(-fit.x[-1])
    if log.periods.main_end - t_m < 8 * tau_r:
        warnings.append(
            f"the fitted release time constant is {tau_r:.0f} s: the after period starts less than "
            f"8 × that after mixing, so the process may not have finished"
        )
    if not fit.success:
        warnings.append("the model fit did not converge; prefer the default method")
    gap = abs(D - rp.value)
    if gap > 2.0 * math.hypot(uD, rp.u_fit) and gap > 0.002 * abs(rp.value):
        warnings.append(
            f"the model fit and the Regnault–Pfaundler correction differ by {gap:.3g} K (more than twice "
            "their combined uncertainty): the release is not first-order here (a heater pulse, a two-stage "
            "dissolution?); prefer the default method"
        )
    start = T_m if log.two_solution else float(fit.x[2])
    return DeltaT(
        method="model-fit",
        value=D,
        u_fit=uD,
        dof_fit=max(n / f - npar, 1.0),
        u_resolution_start=_res_terms(log)[0],
        u_resolution_end=_res_terms(log)[1],
        u_method=_method_term("model-fit", D),
        u_mixing_time=0.0,
        start_temperature=start,
        u_start_temperature=rp.u_start_temperature,
        end_temperature=start + D,
        construction={
            "k_per_s": float(fit.x[1]),
            "release_time_constant_s": tau_r,
            "probe_time_constant_s": tau_s,
            "convergence_temperature_K": float(fit.x[0]),
            "t_i": t_m,
            "t_f": log.periods.main_end,
            "params": [float(v) for v in fit.x],
            "two_solution": log.two_solution,
        },
        warnings=warnings,
    )
