"""Hold the lumped one-node cup of the simulator, its closed form and the probe's readings.

:class:`LumpedModel` is the model of docs/methods.md §7.1, solved exactly piece by piece (matrix
exponentials) or, as an independent check, with ``scipy.integrate.solve_ivp``;
:func:`first_order_release_curve` is the closed form of docs/methods.md §2.4; :func:`ar1_noise` and
:func:`read_probe` turn probe temperatures into noisy, quantised readings. The equations and the
assumptions are written out once, in :mod:`calc.simulation.simulator`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import cast

import numpy as np
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.signal import lfilter

from calc.errors import InputError

__all__ = [
    "RELEASES",
    "LumpedModel",
    "first_order_release_curve",
    "ar1_noise",
    "read_probe",
]

RELEASES = ("first-order", "finite", "sphere", "none")


@dataclass(frozen=True)
class LumpedModel:
    """Hold the parameters of one simulated run of the one-node cup (temperatures in °C, SI units)."""

    t_initial: float
    t_env: float
    t_m: float
    c_before: float
    g_before: float
    c_after: float
    g_after: float
    heat_J: float = 0.0
    release: str = "none"
    tau_r: float = 0.0
    t_d: float = 0.0
    tau_s: float = 0.0
    p_stir: float = 0.0
    room_drift: float = 0.0  # K/s
    t_jump: float | None = None  # contents temperature right after t_m (T_mix), None: continuous

    def __post_init__(self) -> None:
        if self.release not in RELEASES:
            raise InputError(f"release must be one of {RELEASES}, got {self.release!r}", field="release")
        if self.release == "first-order" and not self.tau_r > 0:
            raise InputError("tau_r must be > 0 s for first-order release", field="tau_r")
        if self.release in ("finite", "sphere") and not self.t_d > 0:
            raise InputError("t_d must be > 0 s for a finite-duration release", field="t_d")
        if self.tau_s < 0:
            raise InputError(f"tau_s must be >= 0 s, got {self.tau_s}", field="tau_s")
        if self.c_before <= 0 or self.c_after <= 0 or self.g_before < 0 or self.g_after < 0:
            raise InputError("heat capacities must be > 0 J/K and conductances >= 0 W/K", field="c_cal")

    def release_power(self, t: np.ndarray | float) -> np.ndarray:
        """Return the release (or heater) power P(t) in W."""
        u = np.asarray(t, dtype=float) - self.t_m
        q, zero = self.heat_J, np.zeros_like(u)
        if self.release == "first-order":
            return np.where(u >= 0, q / self.tau_r * np.exp(-np.maximum(u, 0) / self.tau_r), zero)
        inside = (u >= 0) & (u < self.t_d)
        if self.release == "finite":
            return np.where(inside, q / self.t_d, zero)
        if self.release == "sphere":
            return np.where(inside, 3 * q / self.t_d * (1 - u / self.t_d) ** 2, zero)
        return zero

    def contents_before_mixing(self) -> float:
        """Return the true contents temperature T(t_m⁻) just before mixing."""
        k = self.g_before / self.c_before
        if k == 0:
            return self.t_initial + self.p_stir / self.c_before * self.t_m
        t_inf = self.t_env + self.p_stir / self.g_before
        c0 = self.t_initial - t_inf + self.room_drift / k
        return t_inf + self.room_drift * (self.t_m - 1 / k) + c0 * math.exp(-k * self.t_m)

    def probe_start(self) -> float:
        """Return Ts(0) on the probe's steady track of the fore-period (no start-up transient)."""
        if self.tau_s == 0:
            return self.t_initial
        k, s, beta = self.g_before / self.c_before, 1 / self.tau_s, self.room_drift
        if k == 0:
            return self.t_initial - self.tau_s * self.p_stir / self.c_before
        t_inf = self.t_env + self.p_stir / self.g_before
        c0 = self.t_initial - t_inf + beta / k
        return t_inf - beta / k - beta * self.tau_s + c0 * s / (s - k)

    def _segments(self) -> list[tuple[float, float, bool, bool]]:
        """Return (start, end, after mixing, release on) pieces; the first after-piece starts with the jump."""
        pieces = [(0.0, self.t_m, False, False)]
        if self.release in ("finite", "sphere"):
            return pieces + [(self.t_m, self.t_m + self.t_d, True, True), (self.t_m + self.t_d, math.inf, True, False)]
        return pieces + [(self.t_m, math.inf, True, self.release == "first-order")]

    def _matrix(self, after: bool, active: bool) -> np.ndarray:
        c, g = (self.c_after, self.g_after) if after else (self.c_before, self.g_before)
        k, a = g / c, np.zeros((7, 7))
        a[0, 0], a[0, 2], a[0, 3] = -k, k * self.t_env + self.p_stir / c, k * self.room_drift
        if active and self.release == "first-order":
            a[0, 4], a[4, 4] = self.heat_J / (self.tau_r * c), -1 / self.tau_r
        elif active and self.release == "finite":
            a[0, 2] += self.heat_J / (self.t_d * c)
        elif active and self.release == "sphere":
            a[0, 6], a[5, 2], a[6, 5] = 3 * self.heat_J / (self.t_d * c), -1 / self.t_d, -2 / self.t_d
        if self.tau_s > 0:
            a[1, 0], a[1, 1] = 1 / self.tau_s, -1 / self.tau_s
        else:
            a[1] = a[0]  # Ts follows T exactly
        a[3, 2] = 1.0
        return a

    def solve(self, times: np.ndarray, method: str = "exact") -> tuple[np.ndarray, np.ndarray]:
        """Return the true contents temperature T and probe temperature Ts at ``times`` (s, sorted, ≥ 0).

        ``method="exact"`` uses piecewise matrix exponentials; ``"ode"`` uses ``solve_ivp`` (DOP853).
        Values at t_m itself are those just after mixing.
        """
        times = np.asarray(times, dtype=float)
        if times.ndim != 1 or times.size == 0 or times[0] < 0 or np.any(np.diff(times) < 0):
            raise InputError("times must be a non-empty sorted 1-D array of values >= 0 s", field="times")
        if method not in ("exact", "ode"):
            raise InputError(f"method must be 'exact' or 'ode', got {method!r}", field="method")
        out = np.empty((times.size, 2))
        z = np.array([self.t_initial, self.probe_start(), 1.0, 0.0, 0.0, 0.0, 0.0])
        for start, end, after, active in self._segments():
            if start == self.t_m and after:
                if self.t_jump is not None:
                    z[0] = self.t_jump
                if self.tau_s == 0:
                    z[1] = z[0]
                z[4:] = 1.0
            if start > times[-1]:
                break
            sel = np.flatnonzero((times >= start) & (times < end))
            stop = min(end, times[-1])
            if method == "exact":
                z = self._advance_exact(self._matrix(after, active), z, start, times[sel], stop, out, sel)
            else:
                z = self._advance_ode(after, active, z, start, times[sel], stop, out, sel)
        return out[:, 0], out[:, 1]

    @staticmethod
    def _advance_exact(
        a: np.ndarray, z: np.ndarray, start: float, ts: np.ndarray, stop: float, out: np.ndarray, sel: np.ndarray
    ) -> np.ndarray:
        cache: dict[float, np.ndarray] = {}

        def step(h: float) -> np.ndarray:
            key = round(h, 9)
            if key not in cache:
                cache[key] = expm(a * h)
            return cache[key]

        now = start
        for i, t in zip(sel, ts):
            z = step(t - now) @ z
            now, out[i] = t, z[:2]
        return step(stop - now) @ z if stop > now else z

    def _advance_ode(
        self,
        after: bool,
        active: bool,
        z: np.ndarray,
        start: float,
        ts: np.ndarray,
        stop: float,
        out: np.ndarray,
        sel: np.ndarray,
    ) -> np.ndarray:
        c, g = (self.c_after, self.g_after) if after else (self.c_before, self.g_before)
        k = g / c
        fast = [x for x in (self.tau_s, self.tau_r if self.release == "first-order" else self.t_d) if x > 0]
        max_step = min(fast) / 5 if fast else math.inf

        def rhs(t: float, y: np.ndarray) -> list[float]:
            power = float(self.release_power(t)) if active else 0.0
            d_t = k * (self.t_env + self.room_drift * t - y[0]) + (self.p_stir + power) / c
            return [d_t, (y[0] - y[1]) / self.tau_s if self.tau_s > 0 else d_t]

        t_eval = np.append(ts, stop) if (ts.size == 0 or ts[-1] < stop) else ts
        if stop <= start:
            out[sel] = z[:2]
            return z
        sol = solve_ivp(
            rhs, (start, stop), z[:2], method="DOP853", t_eval=t_eval, rtol=1e-12, atol=1e-12, max_step=max_step
        )
        out[sel] = sol.y[:, : sel.size].T
        z = z.copy()
        z[:2] = sol.y[:, -1]
        return z


def first_order_release_curve(
    u: np.ndarray,
    *,
    t_inf: float,
    k: float,
    t_start: float,
    delta_t_ad: float,
    tau_r: float,
    tau_s: float,
    probe_start: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (T, Ts) after t_m from the closed form of docs/methods.md §2.4 (u = t − t_m ≥ 0, k ≠ 1/τ_r ≠ 1/τ_s)."""
    u = np.asarray(u, dtype=float)
    kr, s = 1 / tau_r, 1 / tau_s
    a2 = -delta_t_ad * kr / (kr - k)
    a1 = (t_start - t_inf) - a2
    b1, b2 = a1 * s / (s - k), a2 * s / (s - kr)
    temp = t_inf + a1 * np.exp(-k * u) + a2 * np.exp(-kr * u)
    probe = t_inf + b1 * np.exp(-k * u) + b2 * np.exp(-kr * u) + (probe_start - t_inf - b1 - b2) * np.exp(-s * u)
    return temp, probe


def ar1_noise(rng: np.random.Generator, n: int, sigma: float, phi: float) -> np.ndarray:
    """Return n stationary AR(1) values with standard deviation ``sigma`` and lag-1 coefficient ``phi``."""
    if not 0 <= phi < 1 or sigma < 0:
        raise InputError(f"need 0 <= phi < 1 and sigma >= 0, got phi={phi}, sigma={sigma}", field="phi")
    eta = rng.standard_normal(n) * sigma * math.sqrt(1 - phi**2)
    if n:
        eta[0] /= math.sqrt(1 - phi**2)  # stationary start: e_0 ~ N(0, sigma²)
    return cast(np.ndarray, lfilter([1.0], [1.0, -phi], eta))


def read_probe(
    rng: np.random.Generator,
    probe: np.ndarray,
    *,
    noise: float,
    phi: float,
    resolution: float,
    gain: float = 0.0,
    offset: float = 0.0,
) -> np.ndarray:
    """Return quantised readings q·round((Ts(1+g) + b + e)/q) of the probe temperatures."""
    if not resolution > 0:
        raise InputError(f"resolution must be > 0 K, got {resolution}", field="thermometer.resolution")
    x = probe * (1 + gain) + offset + ar1_noise(rng, probe.size, noise, phi)
    return cast(np.ndarray, resolution * np.round(x / resolution))
