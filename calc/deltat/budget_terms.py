"""Extra terms of the ΔT budget that the drift fits alone do not see.

* :func:`quantisation_drift_term`: a floor on the drift slopes' uncertainty from the thermometer
  resolution (a staircase of readings says little about a slope smaller than one step per window).
* :func:`mixing_time_term`: what the uncertainty of a detected mixing time does to ΔT, found by
  analyzing again with the mixing time moved by ± its standard uncertainty.
* :func:`inadequacy_term`: how far ΔT moves when the final system's drift law is taken from the
  after period alone instead of from the fore and after periods together (a room temperature that
  changes, evaporation, a stirrer that heats, or any other departure from one Newtonian law).

Each is written out in ``docs/methods.md``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import cast

import numpy as np

from calc.deltat.base import DeltaT, Log, sweep_factor
from calc.deltat.constructions import JointNewtonConstruction, NewtonianConstruction
from calc.deltat.drift import K_MAX, decay_integral, fit_newton_single
from calc.deltat.quantisation import dither_variance

__all__ = [
    "slope_floor",
    "quantisation_drift_term",
    "mixing_time_term",
    "inadequacy_term",
    "room_drift_term",
    "room_response",
]

#: Standard uncertainty of an unseen linear change of the room temperature, K/s: a room that
#: warms or cools by up to about 1 K/h over a run, taken as rectangular (±1 K/h, u = 1/√3 K/h).
#: Common practice, no source: a teaching lab without climate control.
ROOM_DRIFT_U = 1.0 / 3600.0 / math.sqrt(3.0)


def slope_floor(q: float, s: float, length: float, steps: float = 0.0) -> float:
    """Return the standard uncertainty floor of a slope fitted over ``length`` seconds at resolution q.

    Without dither a straight drift that moves less than one step q over the window may read
    as a flat staircase. Where the level sits within its step (offset δ) decides how far it can
    drift unseen: up by q − δ or down by δ, so the hidden slope lies in an interval of width
    q/length (rectangular: u = q/(length·√12)). Noise of standard deviation σ beyond the quantisation share q²/12
    dithers the quantiser and shrinks this like exp(−2π²σ²/q²), as in the level term. A drift that
    sweeps ``steps`` steps over the window shows itself in the times the readings change, so the
    floor shrinks like the level term (:func:`calc.deltat.base.sweep_factor`, about 1/steps).
    """
    if q <= 0 or length <= 0:
        return 0.0
    sigma2 = dither_variance(s, q)
    return q / (length * math.sqrt(12.0)) * math.exp(-2.0 * math.pi**2 * sigma2 / (q * q)) * sweep_factor(steps)


def quantisation_drift_term(log: Log, dt: DeltaT) -> float:
    """Return the ΔT standard uncertainty from the slopes' quantisation floors (K).

    Each window's floor is carried to ΔT by the method's own sensitivity to a slope hidden in that
    window (``dt.slope_sensitivity_s``) where the method has one; otherwise the drift correction is
    taken to use the fore slope over half the main period and the after slope over the other half.
    """
    q = log.resolution
    if q <= 0:
        return 0.0
    p = log.periods
    tf_, _ = log.window("fore")
    ta_, _ = log.window("after")
    if tf_.size < 3 or ta_.size < 3:
        return 0.0
    lf, la = log.line("fore"), log.line("after")
    len_f, len_a = float(tf_[-1] - tf_[0]), float(ta_[-1] - ta_[0])
    u_bf = slope_floor(q, lf.s, len_f, abs(lf.b) * len_f / q)
    u_ba = slope_floor(q, la.s, len_a, abs(la.b) * len_a / q)
    if dt.slope_sensitivity_s is not None:
        sens_f, sens_a = dt.slope_sensitivity_s
        return math.hypot(sens_f * u_bf, sens_a * u_ba)
    dur = max(p.main_end - p.mixing_time, 0.0)
    # the drift correction takes the fore drift over about the first part of the main period
    # and the after drift over the rest; half and half is the fair split without more knowledge
    return 0.5 * dur * math.hypot(u_bf, u_ba)


def mixing_time_term(log: Log, method_fn: Callable[[Log], DeltaT], value: float) -> float:
    """Return |ΔT(t_m + u) − ΔT(t_m − u)|/2 for a detected mixing time (K), 0 when it is given."""
    p = log.periods
    u = p.u_mixing_time
    if not p.mixing_time_detected or u <= 0:
        return 0.0
    vals = []
    for sign in (1.0, -1.0):
        t_m = p.mixing_time + sign * u
        before = log.t[log.t <= t_m]
        if before.size < 8 or t_m >= p.main_end:
            continue
        per = replace(p, mixing_time=t_m, fore=(p.fore[0], float(before[-1])), warnings=[])
        shifted = type(log)(log.t, log.y, per, log.resolution, two_solution=log.two_solution)
        try:
            vals.append(method_fn(shifted).value)
        except Exception:  # noqa: BLE001 - a failed shifted fit says only that the sensitivity is unknown
            continue
    if not vals:
        return 0.0
    return max(abs(v - value) for v in vals)


def inadequacy_term(log: Log, dt: DeltaT) -> tuple[float, float]:
    """Return (standard uncertainty from model inadequacy, the raw disagreement) in K.

    The regnault-pfaundler value uses one Newtonian drift law for the fore and after periods.
    The same ΔT with the after period's own drift law and the fore line's level at the mixing
    time is a second, applicable estimate. Their disagreement beyond what the after fit's
    own scatter explains (three standard uncertainties) is taken as a rectangular half-width.
    """
    c = dt.construction
    if log.two_solution or not isinstance(c, JointNewtonConstruction):
        return 0.0, 0.0
    ta_, ya_ = log.window("after")
    if ta_.size < 8:
        return 0.0, 0.0
    t_i, t_f = log.periods.mixing_time, log.periods.main_end
    fore = log.line("fore")
    # started from the joint law's k, a few steps suffice; an unconverged fit gives no term
    nf = fit_newton_single(ta_, ya_, t_f, k0=max(c.k_per_s, 0.0), max_iter=8, q=log.resolution)
    if not nf.converged or not np.all(np.isfinite(nf.cov)):
        return 0.0, 0.0
    y_f, g_f, k = nf.params
    m = (log.t > t_i) & (log.t < t_f)
    tt = np.concatenate([[t_i], log.t[m], [t_f]])
    T_A = fore.at(t_i)
    yy = np.concatenate([[T_A], log.y[m], [y_f]])
    integ = float(np.sum(0.5 * (yy[1:] + yy[:-1]) * np.diff(tt)))
    alt = (y_f - T_A) - g_f * (t_f - t_i) - k * (y_f * (t_f - t_i) - integ)
    d = alt - dt.value
    # the after-only law's own uncertainty in the drift correction
    J = np.array([1.0 - k * (t_f - t_i), -(t_f - t_i), -(y_f * (t_f - t_i) - integ)])
    u_alt = math.sqrt(max(float(J @ nf.cov @ J), 0.0) + fore.var_at(t_i))
    excess = max(abs(d) - 3.0 * math.hypot(u_alt, dt.u_fit), 0.0)
    return excess / math.sqrt(3.0), d


def room_response(t: np.ndarray, t_i: float, k: float, c: float) -> np.ndarray:
    """Return what an environment drift adds to the readings: δ(t) = c·[x − decay_integral(k, x)]/k, x = t − t_i.

    With the room drifting at β the drift law gains c·(t − t_i), c = kβ; the contents follow
    dδ/dt = −kδ + c·(t − t_i) with δ(t_i) = 0 (the fit absorbs any other start). For k → 0,
    δ → c·x²/2.
    """
    x = np.asarray(t, dtype=float) - t_i
    if abs(k) < 1e-12:
        return 0.5 * c * x * x
    return cast(np.ndarray, c * (x - decay_integral(k, x)) / k)


def room_drift_term(log: Log, dt: DeltaT, method_fn: Callable[[Log], DeltaT]) -> float:
    """Return the ΔT standard uncertainty from a room temperature that changes linearly (K).

    The effect is propagated through the method itself: the readings get the response
    :func:`room_response` to a room drifting at the half-width β = ±1 K/h, the method is run again
    on them with the same periods, and the change of ΔT is the half-width of a rectangular term
    (β unknown within ±1 K/h, u = half-width/√3). The exchange constant is k = √(k̂² + u(k̂)²) of the
    method's Newtonian law, so a k fitted near zero still leaves a term, capped at the fits' own
    bound of 1/(60 s) (a log whose k is barely determined had u(k̂) of 0.4/s, and the response
    overflowed). Methods without a Newtonian law get no term (docs/methods.md §8.5).
    """
    c = dt.construction
    if not isinstance(c, NewtonianConstruction):
        return 0.0
    k = min(math.hypot(max(float(c.k_per_s), 0.0), float(c.u_k_per_s)), K_MAX)
    t_i, t_f = log.periods.mixing_time, log.periods.main_end
    if not (math.isfinite(k) and k > 0) or t_f <= t_i:
        return 0.0
    beta = ROOM_DRIFT_U * math.sqrt(3.0)  # the half-width, K/s
    with np.errstate(over="ignore", invalid="ignore"):
        response = room_response(log.t, t_i, k, k * beta)
    if not np.all(np.isfinite(response)):
        return 0.0
    moved = type(log)(
        log.t,
        log.y + response,
        log.periods,
        log.resolution,
        two_solution=log.two_solution,
    )
    try:
        other = method_fn(moved).value
    except Exception:  # noqa: BLE001 - a failed refit says only that the sensitivity is unknown
        return 0.0
    return abs(other - dt.value) / math.sqrt(3.0)
