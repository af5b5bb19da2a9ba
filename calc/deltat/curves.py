"""Closed-form temperature curves of the ΔT methods: drift lines, Newtonian drifts and the probe model.

Both the fits (:mod:`calc.deltat.modelfit`) and the constructions that draw them
(:mod:`calc.deltat.constructions`) evaluate these, so a drawn curve is the fitted curve.
"""

from __future__ import annotations

import numpy as np

from calc.deltat.drift import decay_integral

__all__ = ["grid", "line_values", "newton_values", "probe_reading"]


def grid(a: float, b: float, *must: float, n: int = 240) -> np.ndarray:
    """Return ``n`` evenly spaced times from ``a`` to ``b`` plus the ``must`` times that fall inside."""
    pts = [p for p in must if a <= p <= b]
    return np.unique(np.concatenate([np.linspace(a, b, n), pts]))


def line_values(a: float, b: float, t_mean: float, t: np.ndarray) -> np.ndarray:
    """Return the straight line ``a + b (t − t_mean)`` at times ``t``."""
    return a + b * (np.asarray(t, dtype=float) - t_mean)


def newton_values(y0: float, g0: float, k: float, t0: float, t: np.ndarray) -> np.ndarray:
    """Return y0 + g0·decay_integral(k, t − t0): the solution of dT/dt = g0 + k (y0 − T) through (t0, y0) (docs/methods.md §2.3)."""
    return y0 + g0 * decay_integral(k, np.asarray(t, dtype=float) - t0)


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
