"""ΔT method ``model-fit``: least squares on an explicit heat-exchange model.

Model (docs/methods.md §2.4): Newtonian exchange with rate k towards T∞, a first-order
release of the total adiabatic change D with rate k_r, and a first-order probe
with rate s. With u = t − t_m the probe reads

    Ts(u) = T∞ + A1·s/(s−k)·e^{−ku} + A2·s/(s−k_r)·e^{−k_r u}
            + [T_m − T∞ − A1·s/(s−k) − A2·s/(s−k_r)]·e^{−su}
    A1 = (T_m − T∞) + D·k_r/(k_r − k),  A2 = −D·k_r/(k_r − k)

and before mixing T = T∞ + (T_m − T∞)e^{−ku} (:func:`calc.deltat.curves.probe_reading`). The fitted
D is the corrected temperature change; the fit also gives the release time 1/k_r (was the process
complete?) and the probe time constant 1/s (probe health). For two-solution
runs the fore period belongs to another system: the start level T_m is the fore
line's value at the mixing time and only the readings after mixing are fitted.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, cast

import numpy as np

from calc.deltat.base import DeltaT, Log, method_term, need_windows, register_method, resolution_terms
from calc.deltat.constructions import ModelFitConstruction, NewtonianConstruction
from calc.deltat.curves import probe_reading
from calc.deltat.drift import fit_line, inflation, lag1_autocorrelation
from calc.deltat.regnault_pfaundler import regnault_pfaundler
from calc.errors import AnalysisError

__all__ = ["model_fit"]

#: Bounds of (ln k_r, ln s): release and probe rates from 1/(10 000 s) and 1/(1000 s) to 5/s and 10/s.
_LOG_RATE_BOUNDS = ((math.log(1e-4), math.log(5.0)), (math.log(1e-3), math.log(10.0)))


@dataclass(frozen=True)
class _Problem:
    """The least-squares problem: residuals, start values, bounds, where D sits, fore readings first."""

    resid: Callable[[np.ndarray], np.ndarray]
    p0: np.ndarray
    lb: list[float]
    ub: list[float]
    i_D: int
    n_fore: int
    T_m: float | None  # the fixed start level of two-solution runs


def _start_values(log: Log, rp: DeltaT) -> tuple[float, float, float, float]:
    """Return start values (T∞, k, k_r, s) from the Regnault–Pfaundler result and the periods."""
    c = cast(NewtonianConstruction, rp.construction)  # regnault_pfaundler builds only Newtonian ones
    k0 = c.k_per_s
    if not (1e-6 < k0 < 1 / 120.0):
        k0 = 1 / 3600.0
    T_end = rp.end_temperature
    tinf0 = c.convergence_temperature_K
    if not math.isfinite(tinf0) or abs(tinf0 - T_end) > 50:
        tinf0 = T_end
    tau0 = log.periods.release_time_constant or 30.0
    return tinf0, k0, 1.0 / max(tau0, 2.0), 1.0 / 5.0


def _problem(log: Log, rp: DeltaT) -> _Problem:
    tf_, yf_, _ta, _ya = need_windows(log)
    t_m = log.periods.mixing_time
    tinf0, k0, kr0, s0 = _start_values(log, rp)
    m_post = (log.t > t_m) & (log.t <= log.periods.after[1] + 1e-9)
    tp = log.t[m_post] - t_m
    yp = log.y[m_post]
    (lkr_lo, lkr_hi), (ls_lo, ls_hi) = _LOG_RATE_BOUNDS
    if log.two_solution:
        T_m = fit_line(tf_, yf_).at(t_m)

        def resid2(p: np.ndarray) -> np.ndarray:
            T_inf, k, D, lkr, ls = p
            return cast(np.ndarray, probe_reading(tp, T_inf, k, T_m, D, math.exp(lkr), math.exp(ls)) - yp)

        p0 = np.array([tinf0, k0, rp.value, math.log(kr0), math.log(s0)])
        lb = [-np.inf, -1 / 600.0, -np.inf, lkr_lo, ls_lo]
        ub = [np.inf, 1 / 60.0, np.inf, lkr_hi, ls_hi]
        return _Problem(resid2, p0, lb, ub, 2, 0, T_m)
    uf = tf_ - t_m

    def resid1(p: np.ndarray) -> np.ndarray:
        T_inf, k, T_m, D, lkr, ls = p
        fore_model = T_inf + (T_m - T_inf) * np.exp(-k * uf)
        post = probe_reading(tp, T_inf, k, T_m, D, math.exp(lkr), math.exp(ls))
        return np.concatenate([fore_model - yf_, post - yp])

    p0 = np.array([tinf0, k0, rp.start_temperature, rp.value, math.log(kr0), math.log(s0)])
    lb = [-np.inf, -1 / 600.0, -np.inf, -np.inf, lkr_lo, ls_lo]
    ub = [np.inf, 1 / 60.0, np.inf, np.inf, lkr_hi, ls_hi]
    return _Problem(resid1, p0, lb, ub, 3, tf_.size, None)


def _solve(pr: _Problem) -> tuple[Any, np.ndarray, float]:  # (scipy result, covariance, dof)
    """Fit by bounded least squares; covariance from the Jacobian, inflated for AR(1) residuals."""
    # scipy.optimize is imported here: at module level it would slow every start of the command line
    from scipy.optimize import least_squares

    p0 = np.clip(pr.p0, np.array(pr.lb) + 1e-12, np.array(pr.ub) - 1e-12)
    try:
        fit = least_squares(pr.resid, p0, bounds=(pr.lb, pr.ub), x_scale="jac", max_nfev=400)
    except Exception as exc:  # pragma: no cover - scipy failures are rare
        raise AnalysisError(f"the model fit failed ({exc})") from None
    r = fit.fun
    n, npar = r.size, p0.size
    s2 = float(np.dot(r, r)) / max(n - npar, 1)
    rho = max(lag1_autocorrelation(r[: pr.n_fore]) if pr.n_fore > 3 else 0.0, lag1_autocorrelation(r[pr.n_fore :]))
    f = inflation(rho)
    J = fit.jac
    try:
        cov = f * s2 * np.linalg.pinv(J.T @ J)
    except np.linalg.LinAlgError:
        cov = np.full((npar, npar), np.inf)
    return fit, cov, max(n / f - npar, 1.0)


def _warnings(log: Log, fit: Any, D: float, uD: float, rp: DeltaT) -> list[str]:  # fit: a scipy result
    warnings = []
    tau_r = math.exp(-fit.x[-2])
    if log.periods.main_end - log.periods.mixing_time < 8 * tau_r:
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
    return warnings


@register_method("model-fit")
def model_fit(log: Log) -> DeltaT:
    """Explicit model (exchange, first-order release, probe lag) fitted by least squares."""
    rp = regnault_pfaundler(log)
    pr = _problem(log, rp)
    fit, cov, dof = _solve(pr)
    D = float(fit.x[pr.i_D])
    uD = math.sqrt(max(float(cov[pr.i_D, pr.i_D]), 0.0))
    start = pr.T_m if pr.T_m is not None else float(fit.x[2])  # T_m is set for two-solution runs only
    res_start, res_end = resolution_terms(log)
    return DeltaT(
        method="model-fit",
        value=D,
        u_fit=uD,
        dof_fit=dof,
        u_resolution_start=res_start,
        u_resolution_end=res_end,
        u_method=method_term("model-fit", D),
        u_mixing_time=0.0,
        start_temperature=start,
        u_start_temperature=rp.u_start_temperature,
        end_temperature=start + D,
        construction=ModelFitConstruction(
            t_i=log.periods.mixing_time,
            t_f=log.periods.main_end,
            k_per_s=float(fit.x[1]),
            release_time_constant_s=math.exp(-fit.x[-2]),
            probe_time_constant_s=math.exp(-fit.x[-1]),
            convergence_temperature_K=float(fit.x[0]),
            params=tuple(float(v) for v in fit.x),
            two_solution=log.two_solution,
            start_level=start,
        ),
        warnings=_warnings(log, fit, D, uD, rp),
    )
