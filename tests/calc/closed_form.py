"""Closed-form temperature curves of the lumped heat balance, for tests.

dT/dt = k (T∞ − T) + (D k_r) e^{−k_r (t − t_m)}  for t ≥ t_m (first-order release of a
total adiabatic change D), read by a first-order probe with rate s. The solution of this
linear ODE system is a sum of exponentials (common practice, no source); the tests also
check it against a numerical integration with scipy.integrate.solve_ivp.
"""

from __future__ import annotations

import numpy as np


def true_temperature(t, *, T_inf, k, T0, t_m, D, k_r):
    """Temperature of the contents (no probe lag), with T(t_m) fixed by the fore period."""
    t = np.asarray(t, dtype=float)
    T_m = T_inf + (T0 - T_inf) * np.exp(-k * t_m)
    u = t - t_m
    fore = T_inf + (T0 - T_inf) * np.exp(-k * t)
    A2 = -D * k_r / (k_r - k)
    A1 = (T_m - T_inf) - A2
    post = T_inf + A1 * np.exp(-k * np.maximum(u, 0)) + A2 * np.exp(-k_r * np.maximum(u, 0))
    return np.where(u < 0, fore, post)


def probe_temperature(t, *, T_inf, k, T0, t_m, D, k_r, s):
    """Probe reading with first-order lag s, the probe in equilibrium before mixing.

    Before mixing the probe trails the slow Newtonian drift by a constant factor s/(s−k).
    """
    t = np.asarray(t, dtype=float)
    a0 = T0 - T_inf
    fore = T_inf + a0 * s / (s - k) * np.exp(-k * t)
    T_m = T_inf + a0 * np.exp(-k * t_m)
    Ts_m = T_inf + a0 * s / (s - k) * np.exp(-k * t_m)
    u = np.maximum(t - t_m, 0)
    A2 = -D * k_r / (k_r - k)
    A1 = (T_m - T_inf) - A2
    b1 = A1 * s / (s - k)
    b2 = A2 * s / (s - k_r)
    post = T_inf + b1 * np.exp(-k * u) + b2 * np.exp(-k_r * u) + (Ts_m - T_inf - b1 - b2) * np.exp(-s * u)
    return np.where(t < t_m, fore, post)


def write_run(
    directory,
    *,
    kind="dissolution",
    t,
    y_C,
    extra_toml="",
    name="run",
    resolution="0.001 K",
    mixing_time=None,
    decimals=4,
):
    """Write a minimal run file and CSV; return the TOML path."""
    from pathlib import Path

    d = Path(directory)
    csv = d / f"{name}.csv"
    with csv.open("w") as f:
        f.write("time_s,temperature_C\n")
        for a, b in zip(t, y_C):
            f.write(f"{a:.1f},{b:.{decimals}f}\n")
    mt = f'mixing_time = "{mixing_time}"\n' if mixing_time is not None else ""
    toml = d / f"{name}.toml"
    toml.write_text(
        f'kind = "{kind}"\nreadings = "{name}.csv"\n{mt}[thermometer]\nresolution = "{resolution}"\n' + extra_toml
    )
    return toml
