"""Simulate coffee-cup calorimeter runs whose true answer is known.

The model is the lumped one-node cup of SCIENCE.md §6.1::

    C(t) dT/dt = G (T_env + β t − T) + P_stir + P_release(t) + P_heater(t)
    dTs/dt     = (T − Ts) / τ_s                        (probe lag)
    y_k        = q · round((Ts(t_k)(1 + g) + b + e_k) / q),   e_k AR(1) with sd σ and lag-1 φ

It is solved exactly, piece by piece: on each piece the system is linear with a forcing that is itself
the solution of a linear system (constant, ramp, exponential, polynomial), so the augmented state
``[T, Ts, 1, t, e^{−(t−t_m)/τ_r}, 1 − (t−t_m)/t_d, (1 − (t−t_m)/t_d)²]`` advances by a matrix
exponential. ``LumpedModel.solve(..., method="ode")`` integrates the same equations with
``scipy.integrate.solve_ivp`` (max step ≤ min(τ_r, τ_s)/5, t_m and t_m + t_d as breakpoints) as an
independent check, and ``first_order_release_curve`` is the closed form of SCIENCE.md §1.d.

Assumptions (stated once, here):

* The probe starts on its steady track of the fore-period (no start-up transient).
* ``tau_h`` is C_final/G_final, the heat-loss time constant of the cup as it is after t_m. For the two
  liquid kinds (neutralization, mixing calibration) G scales with the liquid volume as V^(2/3), so
  before mixing G_A = G_final (V_A/V_total)^(2/3). For the other kinds G stays constant.
* A solid solute enters at the solution's temperature: C steps at t_m, T does not.
* A second liquid mixes instantly at t_m: T jumps to T_mix of SCIENCE.md §1.c(ii); the reaction heat
  then follows the release model.
* The run file states one specific heat capacity, that of the final solution ([mixture]); it also
  states every density. By default the simulator gives both liquids of a two-liquid run that same c_p
  (as the analysis does), so heat capacities are additive, Δ_rH does not depend on temperature and the
  reference temperature of a two-liquid result (T_mix or T_A) changes nothing.
* The true input values are rounded to the precision written in the run file, so an unperturbed run
  file states the truth exactly. With ``perturb_inputs=True`` each stated value is the truth plus a
  normal draw with its stated standard uncertainty (the mixing time too).

Reference temperature T_i of ``SimTruth.delta_t_adiabatic`` (= Q/C_final, Q the released heat):
``T(t_m)`` for dissolution, reaction and electrical calibration (T is continuous there); ``T_mix`` for
neutralization. A mixing calibration releases no heat: there delta_t_adiabatic is T_mix − T_A(t_m),
the rise that the calibration formula uses, measured from the cool water's temperature.
``SimTruth.delta_t_from_contents`` is always the adiabatic final temperature minus T(t_m⁻).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from dataclasses import field
from dataclasses import replace
from decimal import Decimal
from pathlib import Path
from typing import Any
from typing import Mapping
from typing import TypedDict
from typing import Unpack

import numpy as np
from molmass import Formula
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.signal import lfilter

from calc.errors import InputError

__all__ = [
    "LumpedModel",
    "SimTruth",
    "SimulatedRun",
    "RunOptions",
    "DEFAULT_UNCERTAINTIES",
    "first_order_release_curve",
    "ar1_noise",
    "read_probe",
    "simulate_dissolution",
    "simulate_neutralization",
    "simulate_electrical_calibration",
    "simulate_mixing_calibration",
    "simulate_reaction",
    "write_run",
    "random_scenario",
]

RELEASES = ("first-order", "finite", "sphere", "none")
WATER_DENSITY = 0.9978  # g/mL near 22 °C (from memory)
WATER_CP = 4.181  # J/(g K) near 22 °C (from memory)
_CP_UNIT = "J/(g*K)"

#: Standard uncertainties written beside the stated inputs (override with ``uncertainties=``).
DEFAULT_UNCERTAINTIES: dict[str, float] = {
    "volume_mL": 0.10, "density_g_mL": 0.0010, "cp_J_gK": 0.010, "mass_g": 0.0002,
    "concentration_mol_L": 0.005, "temperature_K": 0.05, "c_cal_J_K": 2.0, "voltage_V": 0.005,
    "current_A": 0.001, "duration_s": 0.10, "mixing_time_s": 0.5,
}


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
            return pieces + [(self.t_m, self.t_m + self.t_d, True, True),
                             (self.t_m + self.t_d, math.inf, True, False)]
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
    def _advance_exact(a: np.ndarray, z: np.ndarray, start: float, ts: np.ndarray, stop: float,
                       out: np.ndarray, sel: np.ndarray) -> np.ndarray:
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

    def _advance_ode(self, after: bool, active: bool, z: np.ndarray, start: float, ts: np.ndarray,
                     stop: float, out: np.ndarray, sel: np.ndarray) -> np.ndarray:
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
        sol = solve_ivp(rhs, (start, stop), z[:2], method="DOP853", t_eval=t_eval, rtol=1e-12,
                        atol=1e-12, max_step=max_step)
        out[sel] = sol.y[:, : sel.size].T
        z = z.copy()
        z[:2] = sol.y[:, -1]
        return z


def first_order_release_curve(u: np.ndarray, *, t_inf: float, k: float, t_start: float, delta_t_ad: float,
                              tau_r: float, tau_s: float, probe_start: float) -> tuple[np.ndarray, np.ndarray]:
    """Return (T, Ts) after t_m from the closed form of SCIENCE.md §1.d (u = t − t_m ≥ 0, k ≠ 1/τ_r ≠ 1/τ_s)."""
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
    return lfilter([1.0], [1.0, -phi], eta)


def read_probe(rng: np.random.Generator, probe: np.ndarray, *, noise: float, phi: float, resolution: float,
               gain: float = 0.0, offset: float = 0.0) -> np.ndarray:
    """Return quantised readings q·round((Ts(1+g) + b + e)/q) of the probe temperatures."""
    if not resolution > 0:
        raise InputError(f"resolution must be > 0 K, got {resolution}", field="thermometer.resolution")
    x = probe * (1 + gain) + offset + ar1_noise(rng, probe.size, noise, phi)
    return resolution * np.round(x / resolution)


@dataclass
class SimTruth:
    """Hold the true values behind a simulated run (temperatures in °C, SI units otherwise)."""

    kind: str
    delta_t_adiabatic: float  # K, Q/C_final from reference_temperature_C (mixing calibration: T_mix − T_A)
    heat_J: float  # released heat, > 0 when exothermic; heater energy; warm water's heat for mixing
    molar_enthalpy_kJ_mol: float | None
    calorimeter_heat_capacity_J_K: float
    heat_capacity_final_J_K: float  # C_final = m_total c_p,final + C_cal
    reference: str  # "T(t_m)", "T_mix" or "T_A(t_m)"
    reference_temperature_C: float
    t_contents_at_mixing_C: float  # T(t_m⁻): water, acid or cool water just before t_m
    t_mix_C: float | None
    delta_t_from_contents: float  # adiabatic final temperature − T(t_m⁻) (ΔT_A of the run-file balances)
    extent_mol: float | None
    t_m_s: float
    mixing_time_stated_s: float
    t_env_C: float
    t_inf_C: float  # convergence temperature after t_m, at t_m
    k_before_per_s: float
    k_per_s: float
    tau_h_s: float
    tau_s_s: float
    release: str
    tau_r_s: float | None
    t_d_s: float | None
    p_stir_W: float
    noise_K: float
    phi: float
    resolution_K: float
    gain: float
    offset_K: float
    room_drift_K_per_h: float
    seed: int | None
    inputs: dict[str, float] = field(default_factory=dict)  # true inputs by run-file field, run-file units
    model: LumpedModel | None = None


@dataclass
class SimulatedRun:
    """Hold a simulated log, its run-file content and the truth."""

    time_s: np.ndarray
    reading_C: np.ndarray
    run: dict[str, Any]
    truth: SimTruth
    contents_C: np.ndarray | None = None  # noise-free true contents temperature
    probe_C: np.ndarray | None = None  # noise-free probe temperature


class RunOptions(TypedDict, total=False):
    """Options shared by every ``simulate_*`` function (defaults in ``_OPTION_DEFAULTS``)."""

    c_cal: float  # J/K, true calorimeter constant
    tau_s: float  # s, probe time constant (0: no lag)
    tau_h: float  # s, C_final/G_final (math.inf: no exchange)
    t_env_offset: float  # K, T_env − T_initial
    t_initial_C: float  # contents temperature at t = 0
    noise: float  # K, sd of the AR(1) noise
    phi: float  # lag-1 coefficient of the noise
    resolution: float  # K, quantisation step q (= thermometer resolution in the run file)
    fore_s: float  # s, t_m (the log starts at 0)
    after_s: float  # s, log length after t_m
    dt: float  # s, sampling interval
    perturb_inputs: bool
    p_stir_W: float
    room_drift_K_per_h: float
    gain: float
    offset_K: float
    mark_error_s: float  # systematic error of the stated mixing time (fault studies)
    uncertainties: Mapping[str, float]  # overrides of DEFAULT_UNCERTAINTIES
    info: Mapping[str, str]  # the [info] table
    calorimeter_name: str


_OPTION_DEFAULTS: dict[str, Any] = {
    "c_cal": 15.0, "tau_s": 5.0, "tau_h": 3600.0, "t_env_offset": 0.0, "t_initial_C": 21.5, "noise": 0.005,
    "phi": 0.0, "resolution": 0.01, "fore_s": 300.0, "after_s": 600.0, "dt": 1.0, "perturb_inputs": False,
    "p_stir_W": 0.002, "room_drift_K_per_h": 0.0, "gain": 0.0, "offset_K": 0.0, "mark_error_s": 0.0,
    "uncertainties": {}, "info": {}, "calorimeter_name": "simulated cup",
}


class _Ctx:
    """Collect the stated inputs of one run while drawing their perturbations in a fixed order."""

    def __init__(self, kind: str, rng: np.random.Generator | int | None, options: Mapping[str, Any]) -> None:
        unknown = set(options) - set(_OPTION_DEFAULTS)
        if unknown:
            raise TypeError(f"unknown simulation option(s): {sorted(unknown)}")
        self.o = {**_OPTION_DEFAULTS, **options}
        self.kind = kind
        self.seed = int(rng) if isinstance(rng, (int, np.integer)) else None
        self.rng = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
        self.u = {**DEFAULT_UNCERTAINTIES, **self.o["uncertainties"]}
        self.inputs: dict[str, float] = {}
        for name in ("dt", "after_s", "fore_s", "tau_h"):
            if not self.o[name] > 0:
                raise InputError(f"{name} must be > 0, got {self.o[name]}", field=name)

    def true(self, value: float, ukey: str) -> float:
        """Return ``value`` rounded to the precision the run file shows for uncertainty ``ukey``."""
        if ukey != "temperature_K" and not value > 0:
            raise InputError(f"must be > 0, got {value}", field=ukey)
        return round(float(value), _decimals(self.u[ukey]))

    def state(self, name: str, value: float, ukey: str, unit: str) -> str:
        """Record the true ``value`` of field ``name`` and return its run-file string (perturbed if asked)."""
        u, d = self.u[ukey], _decimals(self.u[ukey])
        self.inputs[name] = value
        stated = value + self.rng.normal(0.0, u) if self.o["perturb_inputs"] else value
        return f"{stated:.{d}f} ± {u:.{d}f} {unit}"

    def conductances(self, c_final: float, volume_ratio: float = 1.0) -> tuple[float, float]:
        """Return (G_before, G_after) in W/K with G_after = C_final/τ_h and G ∝ V^(2/3)."""
        g_after = c_final / self.o["tau_h"]
        return g_after * volume_ratio ** (2 / 3), g_after

    def model(self, **kw: Any) -> LumpedModel:
        """Return the LumpedModel of this run from the shared options and the kind-specific ``kw``."""
        o = self.o
        return LumpedModel(t_initial=o["t_initial_C"], t_env=o["t_initial_C"] + o["t_env_offset"],
                           t_m=o["fore_s"], tau_s=o["tau_s"], p_stir=o["p_stir_W"],
                           room_drift=o["room_drift_K_per_h"] / 3600.0, **kw)

    def finish(self, model: LumpedModel, body: dict[str, Any], *, heat: float, c_final: float, c_cal: float,
               dh: float | None, extent: float | None, t_a: float, t_mix: float | None,
               delta_t_ad: float, reference: str) -> SimulatedRun:
        """Draw the mixing-time statement and the noise, then assemble the run dict and the truth."""
        o, rng = self.o, self.rng
        t_m, u_tm = model.t_m, self.u["mixing_time_s"]
        d = _decimals(u_tm)
        stated_tm = t_m + o["mark_error_s"] + (rng.normal(0.0, u_tm) if o["perturb_inputs"] else 0.0)
        n = int(math.floor((t_m + o["after_s"]) / o["dt"] + 1e-9)) + 1
        times = np.round(np.arange(n) * o["dt"], 9)
        contents, probe = model.solve(times)
        readings = read_probe(rng, probe, noise=o["noise"], phi=o["phi"], resolution=o["resolution"],
                              gain=o["gain"], offset=o["offset_K"])
        info = dict(o["info"])
        info.setdefault("title", f"simulated {self.kind} run")
        info.setdefault("notes", "synthetic data with a known truth (calc.simulate)")
        cal = body.pop("calorimeter", {})
        run: dict[str, Any] = {"kind": self.kind, "readings": "readings.csv",
                               "mixing_time": f"{stated_tm:.{d}f} ± {u_tm:.{d}f} s", "info": info,
                               "calorimeter": {"name": o["calorimeter_name"], **cal},
                               "thermometer": {"resolution": f"{o['resolution']:g} K"}, **body}
        t_ref = t_a if reference != "T_mix" else t_mix
        assert t_ref is not None
        truth = SimTruth(
            kind=self.kind, delta_t_adiabatic=delta_t_ad, heat_J=heat, molar_enthalpy_kJ_mol=dh,
            calorimeter_heat_capacity_J_K=c_cal, heat_capacity_final_J_K=c_final, reference=reference,
            reference_temperature_C=t_ref, t_contents_at_mixing_C=t_a, t_mix_C=t_mix,
            delta_t_from_contents=t_ref + delta_t_ad - t_a if reference != "T_A(t_m)" else delta_t_ad,
            extent_mol=extent, t_m_s=t_m, mixing_time_stated_s=round(stated_tm, d), t_env_C=model.t_env,
            t_inf_C=model.t_env + model.room_drift * t_m + (model.p_stir / model.g_after if model.g_after else 0.0),
            k_before_per_s=model.g_before / model.c_before, k_per_s=model.g_after / model.c_after,
            tau_h_s=o["tau_h"], tau_s_s=model.tau_s, release=model.release,
            tau_r_s=model.tau_r if model.release == "first-order" else None,
            t_d_s=model.t_d if model.release in ("finite", "sphere") else None, p_stir_W=model.p_stir,
            noise_K=o["noise"], phi=o["phi"], resolution_K=o["resolution"], gain=o["gain"],
            offset_K=o["offset_K"], room_drift_K_per_h=o["room_drift_K_per_h"], seed=self.seed,
            inputs=dict(self.inputs), model=model)
        return SimulatedRun(times, readings, run, truth, contents, probe)


def _decimals(u: float) -> int:
    """Return the number of decimals that shows ``u`` with two significant digits."""
    return max(0, 1 - math.floor(math.log10(u)))


def _molar_mass(formula: str, where: str) -> float:
    try:
        return float(Formula(formula).mass)
    except Exception as exc:  # molmass raises several types for bad formulas
        raise InputError(f"cannot read chemical formula {formula!r}: {exc}", field=where) from exc


def _solid_in_liquid(ctx: _Ctx, *, table: str, volume: float, density: float, cp: float, solid: str,
                     mass: float, solid_cp: float, mixture_cp: float | None) -> dict[str, Any]:
    """Return masses, heat capacities and run-file tables for a solid added to one liquid.

    The liquid's own c_p sets C before t_m only (the run file has no field for it; the truth does not
    depend on it); the stated mixture c_p sets C_final.
    """
    v, rho, cp = ctx.true(volume, "volume_mL"), ctx.true(density, "density_g_mL"), ctx.true(cp, "cp_J_gK")
    m_s, c_cal = ctx.true(mass, "mass_g"), ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_liq = v * rho
    c_mix = ctx.true(mixture_cp if mixture_cp is not None else (m_liq * cp + m_s * solid_cp) / (m_liq + m_s),
                     "cp_J_gK")
    body = {"calorimeter": {"heat_capacity": ctx.state("calorimeter.heat_capacity", c_cal, "c_cal_J_K", "J/K")},
            table: {"volume": ctx.state(f"{table}.volume", v, "volume_mL", "mL"),
                    "density": ctx.state(f"{table}.density", rho, "density_g_mL", "g/mL")},
            "solute": {"formula": solid, "mass": ctx.state("solute.mass", m_s, "mass_g", "g")},
            "mixture": {"specific_heat_capacity": ctx.state("mixture.specific_heat_capacity", c_mix, "cp_J_gK", _CP_UNIT)}}
    c_before, c_final = m_liq * cp + c_cal, (m_liq + m_s) * c_mix + c_cal
    return {"body": body, "m_s": m_s, "c_cal": c_cal, "c_before": c_before, "c_final": c_final}


def _release_kw(release: str, tau_r: float, t_d: float | None) -> dict[str, Any]:
    """Return the release keywords; a shrinking sphere defaults to t_d = 4 τ_r (same mean release time)."""
    if release == "sphere":
        return {"release": release, "t_d": t_d if t_d is not None else 4 * tau_r}
    if release == "finite":
        return {"release": release, "t_d": t_d if t_d is not None else tau_r}
    return {"release": release, "tau_r": tau_r}


def simulate_dissolution(rng: np.random.Generator | int | None, *, formula: str = "KCl",
                         molar_enthalpy_kJ_mol: float = 17.2, solute_mass_g: float = 3.7,
                         water_volume_mL: float = 100.0, tau_r: float = 60.0, release: str = "first-order",
                         t_d: float | None = None, water_density: float = WATER_DENSITY,
                         water_cp: float = WATER_CP, solute_cp: float = 0.8, mixture_cp: float | None = None,
                         **options: Unpack[RunOptions]) -> SimulatedRun:
    """Simulate dissolving a solid salt in water.

    Parameters
    ----------
    rng:
        Random generator, or an integer seed (stored in the truth).
    formula, molar_enthalpy_kJ_mol, solute_mass_g:
        The salt, its true Δ_solH (kJ per mole of solute) and true mass (g).
    water_volume_mL, water_density, water_cp, solute_cp, mixture_cp:
        Water in the cup (mL, g/mL, J/(g K)); ``water_cp`` sets C before t_m only. The stated c_p of
        the final solution defaults to the mass-weighted mean of water and solid.
    tau_r, release, t_d:
        Release model: "first-order" (τ_r, s) or "sphere" (shrinking sphere, t_d defaults to 4 τ_r).
    **options:
        Shared settings, see ``RunOptions``.

    Returns
    -------
    SimulatedRun
        Log, run dict and truth; ``truth.delta_t_adiabatic`` = Q/C_final from T(t_m).
    """
    ctx = _Ctx("dissolution", rng, options)
    s = _solid_in_liquid(ctx, table="water", volume=water_volume_mL, density=water_density, cp=water_cp,
                         solid=formula, mass=solute_mass_g, solid_cp=solute_cp, mixture_cp=mixture_cp)
    n = s["m_s"] / _molar_mass(formula, "solute.formula")
    heat = -n * molar_enthalpy_kJ_mol * 1000.0
    g_before, g_after = ctx.conductances(s["c_final"])
    model = ctx.model(c_before=s["c_before"], g_before=g_before, c_after=s["c_final"], g_after=g_after,
                      heat_J=heat, **_release_kw(release, tau_r, t_d))
    t_a = model.contents_before_mixing()
    return ctx.finish(model, s["body"], heat=heat, c_final=s["c_final"], c_cal=s["c_cal"],
                      dh=molar_enthalpy_kJ_mol, extent=n, t_a=t_a, t_mix=None,
                      delta_t_ad=heat / s["c_final"], reference="T(t_m)")


def simulate_reaction(rng: np.random.Generator | int | None, *,
                      equation: str = "Mg(s) + 2 H+(aq) -> Mg2+(aq) + H2(g)", limiting_reagent: str = "Mg",
                      coefficient: int = 1, molar_enthalpy_kJ_mol: float = -466.9, reagent_mass_g: float = 0.1,
                      solution_volume_mL: float = 100.0, solution_density: float = 1.016,
                      solution_cp: float = 3.98, solid_cp: float = 1.02, mixture_cp: float | None = None,
                      tau_r: float = 30.0, release: str = "first-order", t_d: float | None = None,
                      **options: Unpack[RunOptions]) -> SimulatedRun:
    """Simulate a solid limiting reagent added to, and reacting in, a solution.

    Parameters
    ----------
    rng:
        Random generator, or an integer seed.
    equation, limiting_reagent, coefficient, molar_enthalpy_kJ_mol, reagent_mass_g:
        The reaction as written, its limiting solid (a formula), that solid's stoichiometric
        coefficient, the true Δ_rH (kJ per mole of reaction, ξ = n/coefficient) and the solid's mass (g).
        The default Δ_rH of Mg in dilute acid is approximate (from memory); any value may be given.
    solution_volume_mL, solution_density, solution_cp, solid_cp, mixture_cp:
        The liquid in the cup and the heat capacities (mixture default: mass-weighted mean).
    tau_r, release, t_d:
        Release model, as for ``simulate_dissolution``.
    **options:
        Shared settings, see ``RunOptions``.

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = Q/C_final from T(t_m).
    """
    ctx = _Ctx("reaction", rng, options)
    s = _solid_in_liquid(ctx, table="solution", volume=solution_volume_mL, density=solution_density,
                         cp=solution_cp, solid=limiting_reagent, mass=reagent_mass_g, solid_cp=solid_cp,
                         mixture_cp=mixture_cp)
    extent = s["m_s"] / _molar_mass(limiting_reagent, "reaction.limiting_reagent") / coefficient
    heat = -extent * molar_enthalpy_kJ_mol * 1000.0
    s["body"]["reaction"] = {"equation": equation, "limiting_reagent": limiting_reagent,
                             "mass": s["body"]["solute"]["mass"], "coefficient": coefficient}
    g_before, g_after = ctx.conductances(s["c_final"])
    model = ctx.model(c_before=s["c_before"], g_before=g_before, c_after=s["c_final"], g_after=g_after,
                      heat_J=heat, **_release_kw(release, tau_r, t_d))
    return ctx.finish(model, s["body"], heat=heat, c_final=s["c_final"], c_cal=s["c_cal"],
                      dh=molar_enthalpy_kJ_mol, extent=extent, t_a=model.contents_before_mixing(), t_mix=None,
                      delta_t_ad=heat / s["c_final"], reference="T(t_m)")


def _liquid(ctx: _Ctx, table: str, volume: float, density: float) -> tuple[float, dict[str, str]]:
    """Return (mass in g, run-file table) of a liquid with true values rounded as stated."""
    v, rho = ctx.true(volume, "volume_mL"), ctx.true(density, "density_g_mL")
    tab = {"volume": ctx.state(f"{table}.volume", v, "volume_mL", "mL"),
           "density": ctx.state(f"{table}.density", rho, "density_g_mL", "g/mL")}
    return v * rho, tab


def _mixture(ctx: _Ctx, cp: float) -> tuple[float, dict[str, str]]:
    """Return the true (rounded) c_p of the final solution and the [mixture] table."""
    c = ctx.true(cp, "cp_J_gK")
    return c, {"specific_heat_capacity": ctx.state("mixture.specific_heat_capacity", c, "cp_J_gK", _CP_UNIT)}


def _t_mix(c_a: float, t_a: float, c_b: float, t_b: float) -> float:
    """Return the adiabatic mixing temperature of SCIENCE.md §1.c(ii) (c_a includes C_cal)."""
    return (c_a * t_a + c_b * t_b) / (c_a + c_b)


def simulate_neutralization(rng: np.random.Generator | int | None, *, acid: str = "HCl", base: str = "NaOH",
                            molar_enthalpy_kJ_mol: float = -55.8, acid_concentration: float = 1.0,
                            base_concentration: float = 1.0, acid_volume_mL: float = 50.0,
                            base_volume_mL: float = 50.0, acid_density: float = 1.016,
                            base_density: float = 1.040, mixture_cp: float = 3.96,
                            acid_cp: float | None = None, base_cp: float | None = None,
                            base_temperature_offset: float = 0.3,
                            acid_equivalents: int = 1, base_equivalents: int = 1, tau_r: float = 4.0,
                            release: str = "first-order", t_d: float | None = None,
                            **options: Unpack[RunOptions]) -> SimulatedRun:
    """Simulate pouring a base, at its own temperature, into an acid in the cup.

    Parameters
    ----------
    rng:
        Random generator, or an integer seed.
    acid, base, molar_enthalpy_kJ_mol:
        Formulas and the true Δ_rH per mole of water formed (ξ from the limiting reagent).
    acid_concentration, base_concentration, acid_volume_mL, base_volume_mL:
        mol/L and mL.
    acid_density, base_density, mixture_cp:
        g/mL (approximate values for 1 mol/L, from memory) and the stated c_p of the final solution in
        J/(g K).
    acid_cp, base_cp:
        c_p of the acid and base in the simulated world; default: ``mixture_cp``, as the run file has no
        field for them and the analysis uses the mixture's c_p. Other values make a property mismatch
        (heat capacities are then not additive and Δ_rH refers to T_mix).
    base_temperature_offset:
        T_B − T_initial in K.
    acid_equivalents, base_equivalents:
        H+ (OH−) per formula unit.
    tau_r, release, t_d:
        Release model of the reaction heat after the instant mixing at t_m.
    **options:
        Shared settings, see ``RunOptions``.

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = Q/C_final from T_mix; ``truth.delta_t_from_contents`` is the
        rise from the acid's T_A(t_m) used by the run-file heat balance.
    """
    ctx = _Ctx("neutralization", rng, options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    cal = {"heat_capacity": ctx.state("calorimeter.heat_capacity", c_cal, "c_cal_J_K", "J/K")}
    ca, cb = ctx.true(acid_concentration, "concentration_mol_L"), ctx.true(base_concentration, "concentration_mol_L")
    m_a, tab_a = _liquid(ctx, "acid", acid_volume_mL, acid_density)
    tab_a = {"formula": acid, "concentration": ctx.state("acid.concentration", ca, "concentration_mol_L", "mol/L"),
             **tab_a, "equivalents": acid_equivalents}
    m_b, tab_b = _liquid(ctx, "base", base_volume_mL, base_density)
    t_b = ctx.true(ctx.o["t_initial_C"] + base_temperature_offset, "temperature_K")
    tab_b = {"formula": base, "concentration": ctx.state("base.concentration", cb, "concentration_mol_L", "mol/L"),
             **tab_b, "temperature": ctx.state("base.temperature", t_b, "temperature_K", "degC"),
             "equivalents": base_equivalents}
    v_a, v_b = ctx.inputs["acid.volume"], ctx.inputs["base.volume"]
    c_mix, mix = _mixture(ctx, mixture_cp)
    cp_a = c_mix if acid_cp is None else acid_cp
    cp_b = c_mix if base_cp is None else base_cp
    extent = min(ca * v_a * acid_equivalents, cb * v_b * base_equivalents) / 1000.0
    heat = -extent * molar_enthalpy_kJ_mol * 1000.0
    c_before, c_final = m_a * cp_a + c_cal, (m_a + m_b) * c_mix + c_cal
    g_before, g_after = ctx.conductances(c_final, v_a / (v_a + v_b))
    model = ctx.model(c_before=c_before, g_before=g_before, c_after=c_final, g_after=g_after, heat_J=heat,
                      **_release_kw(release, tau_r, t_d))
    t_a = model.contents_before_mixing()
    t_mix = _t_mix(c_before, t_a, m_b * cp_b, t_b)
    model = replace(model, t_jump=t_mix)
    body = {"calorimeter": cal, "acid": tab_a, "base": tab_b, "mixture": mix}
    return ctx.finish(model, body, heat=heat, c_final=c_final, c_cal=c_cal, dh=molar_enthalpy_kJ_mol,
                      extent=extent, t_a=t_a, t_mix=t_mix, delta_t_ad=heat / c_final, reference="T_mix")


def simulate_electrical_calibration(rng: np.random.Generator | int | None, *, water_volume_mL: float = 100.0,
                                    voltage_V: float = 5.0, current_A: float = 1.0, duration_s: float = 120.0,
                                    water_density: float = WATER_DENSITY, water_cp: float = WATER_CP,
                                    **options: Unpack[RunOptions]) -> SimulatedRun:
    """Simulate an electrical calibration: a heater pulse V·I for ``duration_s`` switched on at t_m.

    Parameters
    ----------
    rng:
        Random generator, or an integer seed.
    water_volume_mL, water_density, water_cp:
        Water in the cup; its c_p is stated in [mixture] (the final solution is the water).
    voltage_V, current_A, duration_s:
        True heater settings; the heat is V·I·duration.
    **options:
        Shared settings, see ``RunOptions`` (``c_cal`` is the true value the calibration should find).

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = V·I·t/C_final from T(t_m).
    """
    ctx = _Ctx("electrical-calibration", rng, options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_w, tab = _liquid(ctx, "water", water_volume_mL, water_density)
    cp, mix = _mixture(ctx, water_cp)
    v, i = ctx.true(voltage_V, "voltage_V"), ctx.true(current_A, "current_A")
    t_d = ctx.true(duration_s, "duration_s")
    heater = {"voltage": ctx.state("heater.voltage", v, "voltage_V", "V"),
              "current": ctx.state("heater.current", i, "current_A", "A"),
              "duration": ctx.state("heater.duration", t_d, "duration_s", "s")}
    c_final, heat = m_w * cp + c_cal, v * i * t_d
    g_before, g_after = ctx.conductances(c_final)
    model = ctx.model(c_before=c_final, g_before=g_before, c_after=c_final, g_after=g_after, heat_J=heat,
                      release="finite", t_d=t_d)
    body = {"water": tab, "heater": heater, "mixture": mix}
    return ctx.finish(model, body, heat=heat, c_final=c_final, c_cal=c_cal, dh=None, extent=None,
                      t_a=model.contents_before_mixing(), t_mix=None, delta_t_ad=heat / c_final,
                      reference="T(t_m)")


def simulate_mixing_calibration(rng: np.random.Generator | int | None, *, water_volume_mL: float = 50.0,
                                warm_volume_mL: float = 50.0, warm_temperature_C: float = 45.0,
                                water_density: float = WATER_DENSITY, warm_density: float = 0.9902,
                                water_cp: float = WATER_CP, warm_cp: float | None = None,
                                **options: Unpack[RunOptions]) -> SimulatedRun:
    """Simulate a mixing calibration: warm water poured into cool water in the cup at t_m.

    Parameters
    ----------
    rng:
        Random generator, or an integer seed.
    water_volume_mL, water_density, water_cp:
        Cool water in the cup (its temperature follows ``t_initial_C`` and the room); ``water_cp`` is
        stated in [mixture], the one c_p the run file has.
    warm_volume_mL, warm_temperature_C, warm_density:
        Warm water at the moment it is poured.
    warm_cp:
        c_p of the warm water in the simulated world; default ``water_cp`` (what the analysis uses).
    **options:
        Shared settings, see ``RunOptions``.

    Returns
    -------
    SimulatedRun
        No heat is released: ``truth.delta_t_adiabatic`` = T_mix − T_A(t_m) and ``truth.heat_J`` is the
        heat the warm water gives up, C_warm (T_warm − T_mix).
    """
    ctx = _Ctx("mixing-calibration", rng, options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_c, tab_c = _liquid(ctx, "water", water_volume_mL, water_density)
    m_w, tab_w = _liquid(ctx, "warm_water", warm_volume_mL, warm_density)
    t_w = ctx.true(warm_temperature_C, "temperature_K")
    tab_w = {**tab_w, "temperature": ctx.state("warm_water.temperature", t_w, "temperature_K", "degC")}
    cp_c, mix = _mixture(ctx, water_cp)
    cp_w = cp_c if warm_cp is None else warm_cp
    c_before, c_warm = m_c * cp_c + c_cal, m_w * cp_w
    c_final = c_before + c_warm
    v_c, v_w = ctx.inputs["water.volume"], ctx.inputs["warm_water.volume"]
    g_before, g_after = ctx.conductances(c_final, v_c / (v_c + v_w))
    model = ctx.model(c_before=c_before, g_before=g_before, c_after=c_final, g_after=g_after)
    t_a = model.contents_before_mixing()
    t_mix = _t_mix(c_before, t_a, c_warm, t_w)
    model = replace(model, t_jump=t_mix)
    body = {"water": tab_c, "warm_water": tab_w, "mixture": mix}
    return ctx.finish(model, body, heat=c_warm * (t_w - t_mix), c_final=c_final, c_cal=c_cal, dh=None,
                      extent=None, t_a=t_a, t_mix=t_mix, delta_t_ad=t_mix - t_a, reference="T_A(t_m)")


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, float) and math.isfinite(value):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise InputError(f"cannot write {value!r} to a run file", field="run")


def _toml(run: Mapping[str, Any]) -> str:
    """Return TOML text for a run dict of scalars, lists and one level of tables."""
    lines = [f"{k} = {_toml_value(v)}" for k, v in run.items() if not isinstance(v, Mapping)]
    for name, table in run.items():
        if isinstance(table, Mapping):
            lines += ["", f"[{name}]"] + [f"{k} = {_toml_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


def _places(step: float) -> int:
    return max(0, -int(Decimal(f"{step:g}").as_tuple().exponent))


def write_run(sim: SimulatedRun, directory: str | Path, stem: str) -> Path:
    """Write a simulated run as ``stem.toml`` and ``stem.csv`` in ``directory``.

    Parameters
    ----------
    sim:
        The simulated run.
    directory, stem:
        Where to write (created if missing) and the file name without suffix.

    Returns
    -------
    Path
        The .toml path; its ``readings`` names ``stem.csv`` (header ``time_s,temperature_C``, readings
        written with as many decimals as the resolution).
    """
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    run = {**sim.run, "readings": f"{stem}.csv"}
    toml_path = directory / f"{stem}.toml"
    toml_path.write_text(_toml(run), encoding="utf-8")
    dt_places = max(1, _places(float(np.min(np.diff(sim.time_s)))) if sim.time_s.size > 1 else 1)
    y_places = _places(sim.truth.resolution_K)
    rows = [f"{t:.{dt_places}f},{y:.{y_places}f}" for t, y in zip(sim.time_s, sim.reading_C)]
    (directory / f"{stem}.csv").write_text("time_s,temperature_C\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return toml_path


_SALTS = {"KCl": 17.22, "NH4NO3": 25.7, "NH4Cl": 14.8, "NaOH": -44.5, "CaCl2": -81.3}  # kJ/mol, SCIENCE.md §6.2


def random_scenario(kind: str, rng: np.random.Generator | int | None, *, noisy: bool = True,
                    perturb_inputs: bool | None = None, release: str | None = None) -> SimulatedRun:
    """Simulate one run of ``kind`` with parameters drawn from the ranges of SCIENCE.md §6.2.

    ``noisy=False`` gives noise-free readings at 0.0001 K resolution; ``perturb_inputs`` defaults to
    ``noisy``; ``release`` (dissolution, reaction) defaults to a random choice of first-order (70 %) and
    shrinking-sphere with t_d = 4 τ_r (30 %). The log runs 3–5 min before t_m and 10 τ_r + 5 τ_s plus
    5–15 min after it (10 τ_r replaced by the heater duration, or 0 for a mixing calibration). Sample
    sizes and heater pulses aim at |ΔT_ad| of 1–5 K (dissolution, heater) or 2–6 K (Mg reaction);
    neutralization uses 0.5–1.5 mol/L with up to 10 % excess base, 25–50 mL each.

    Parameters
    ----------
    kind:
        One of the five run kinds.
    rng:
        Random generator, or an integer seed.
    noisy, perturb_inputs, release:
        See above.

    Returns
    -------
    SimulatedRun
    """
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    uni = gen.uniform
    opts: dict[str, Any] = {
        "tau_s": uni(1, 10), "tau_h": uni(25, 120) * 60, "c_cal": uni(5, 40), "t_env_offset": uni(-1.5, 1.5),
        "t_initial_C": uni(19, 24), "p_stir_W": uni(0, 0.005), "fore_s": uni(180, 300),
        "dt": float(gen.choice([1.0, 2.0])),
        "perturb_inputs": noisy if perturb_inputs is None else perturb_inputs,
        "noise": uni(0.002, 0.02) if noisy else 0.0, "phi": uni(0, 0.6) if noisy else 0.0,
        "resolution": float(gen.choice([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1])) if noisy else 0.0001}

    def pick_release() -> str:
        return release or ("first-order" if gen.uniform() < 0.7 else "sphere")

    def after(slow: float) -> float:
        return 10 * slow + 5 * opts["tau_s"] + uni(300, 900)

    def c_guess(vol: float) -> float:  # J/K, only to size the sample or the heater pulse
        return vol * 4.18 + opts["c_cal"]

    if kind == "dissolution":
        salt = str(gen.choice(sorted(_SALTS)))
        vol, tau_r, rel = uni(50, 100), uni(10, 120), pick_release()
        mass = uni(1, 5) * c_guess(vol) / abs(_SALTS[salt] * 1000) * _molar_mass(salt, "solute.formula")
        return simulate_dissolution(gen, formula=salt, molar_enthalpy_kJ_mol=_SALTS[salt], solute_mass_g=mass,
                                    water_volume_mL=vol, tau_r=tau_r, release=rel, after_s=after(tau_r), **opts)
    if kind == "neutralization":
        v_a, tau_r, conc = uni(25, 50), uni(2, 10), round(uni(0.5, 1.5), 2)
        return simulate_neutralization(gen, acid_concentration=conc, base_concentration=conc * uni(1.0, 1.1),
                                       acid_volume_mL=v_a, base_volume_mL=v_a * uni(0.95, 1.05), tau_r=tau_r,
                                       base_temperature_offset=uni(-1, 1), after_s=after(tau_r), **opts)
    if kind == "electrical-calibration":
        vol, volt, amp = uni(50, 100), uni(3, 12), uni(0.5, 2)
        t_d = float(np.clip(uni(1, 5) * c_guess(vol) / (volt * amp), 30, 600))
        return simulate_electrical_calibration(gen, water_volume_mL=vol, voltage_V=volt, current_A=amp,
                                               duration_s=t_d, after_s=after(t_d / 10), **opts)
    if kind == "mixing-calibration":
        return simulate_mixing_calibration(gen, water_volume_mL=uni(40, 55), warm_volume_mL=uni(40, 45),
                                           warm_temperature_C=opts["t_initial_C"] + uni(15, 25),
                                           after_s=after(0.0), **opts)
    if kind == "reaction":
        tau_r, rel = uni(10, 60), pick_release()
        vol = uni(50, 100)
        mass = uni(2, 6) * c_guess(vol) / 466.9e3 * _molar_mass("Mg", "reaction.limiting_reagent")
        return simulate_reaction(gen, reagent_mass_g=mass, solution_volume_mL=vol, tau_r=tau_r, release=rel,
                                 after_s=after(tau_r), **opts)
    raise InputError(f"unknown kind {kind!r}; expected one of dissolution, neutralization, "
                     "electrical-calibration, mixing-calibration, reaction", field="kind")
