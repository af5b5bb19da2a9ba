"""Hold what a simulated run is: its truth, its shared options, its stated inputs and its files.

:class:`SimTruth` and :class:`SimulatedRun` are what every ``simulate_*`` function of
:mod:`calc.simulation.kinds` returns and :class:`RunOptions` their shared settings. :class:`RunContext`
rounds the true inputs, writes them as run-file strings (perturbed if asked), draws the mixing-time
statement and the noise in a fixed order and assembles the result. :func:`write_run` writes a run
as a run file and its CSV log.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path
from typing import Any, TypedDict

import numpy as np

from calc.errors import InputError
from calc.simulation.model import LumpedModel, read_probe

__all__ = [
    "DEFAULT_UNCERTAINTIES",
    "SimTruth",
    "SimulatedRun",
    "RunOptions",
    "RunContext",
    "write_run",
]

#: Standard uncertainties written beside the stated inputs (override with ``uncertainties=``).
DEFAULT_UNCERTAINTIES: dict[str, float] = {
    "volume_mL": 0.10,
    "density_g_mL": 0.0010,
    "cp_J_gK": 0.010,
    "mass_g": 0.0002,
    "concentration_mol_L": 0.005,
    "temperature_K": 0.05,
    "c_cal_J_K": 2.0,
    "voltage_V": 0.005,
    "current_A": 0.001,
    "duration_s": 0.10,
    "mixing_time_s": 0.5,
}


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
    stir_tau_s: float  # s, correlation time of the AR(1) noise (> 0 overrides phi: φ = e^(−dt/τ))
    spikes: int  # number of wild readings (loose contact), each 1–2 readings wide
    spike_K: float  # typical spike size, K (each drawn 0.5–1.5 times this, either sign)
    drop_fraction: float  # share of rows dropped at random
    jitter_s: float  # time stamps off the true sampling times by up to ± this, s (stamped to 0.1 s)
    omit_mixing_time: bool  # leave mixing_time out of the run file


_OPTION_DEFAULTS: dict[str, Any] = {
    "c_cal": 15.0,
    "tau_s": 5.0,
    "tau_h": 3600.0,
    "t_env_offset": 0.0,
    "t_initial_C": 21.5,
    "noise": 0.005,
    "phi": 0.0,
    "resolution": 0.01,
    "fore_s": 300.0,
    "after_s": 600.0,
    "dt": 1.0,
    "perturb_inputs": False,
    "p_stir_W": 0.002,
    "room_drift_K_per_h": 0.0,
    "gain": 0.0,
    "offset_K": 0.0,
    "mark_error_s": 0.0,
    "uncertainties": {},
    "info": {},
    "calorimeter_name": "simulated cup",
    "stir_tau_s": 0.0,
    "spikes": 0,
    "spike_K": 0.5,
    "drop_fraction": 0.0,
    "jitter_s": 0.0,
    "omit_mixing_time": False,
}


class RunContext:
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
        return LumpedModel(
            t_initial=o["t_initial_C"],
            t_env=o["t_initial_C"] + o["t_env_offset"],
            t_m=o["fore_s"],
            tau_s=o["tau_s"],
            p_stir=o["p_stir_W"],
            room_drift=o["room_drift_K_per_h"] / 3600.0,
            **kw,
        )

    def finish(
        self,
        model: LumpedModel,
        body: dict[str, Any],
        *,
        heat: float,
        c_final: float,
        c_cal: float,
        t_a: float,
        t_mix: float | None,
        delta_t_ad: float,
        reference: str,
        dh: float | None = None,
        extent: float | None = None,
    ) -> SimulatedRun:
        """Draw the mixing-time statement and the noise, then assemble the run dict and the truth."""
        t_m = model.t_m
        stated_tm, mix = self._mixing_statement(t_m)
        times, readings, contents, probe = self._log(model)
        run = self._run_file(body, mix)
        t_ref = t_a if reference != "T_mix" else t_mix
        assert t_ref is not None
        truth = SimTruth(
            kind=self.kind,
            delta_t_adiabatic=delta_t_ad,
            heat_J=heat,
            molar_enthalpy_kJ_mol=dh,
            calorimeter_heat_capacity_J_K=c_cal,
            heat_capacity_final_J_K=c_final,
            reference=reference,
            reference_temperature_C=t_ref,
            t_contents_at_mixing_C=t_a,
            t_mix_C=t_mix,
            delta_t_from_contents=t_ref + delta_t_ad - t_a if reference != "T_A(t_m)" else delta_t_ad,
            extent_mol=extent,
            t_m_s=t_m,
            mixing_time_stated_s=stated_tm,
            t_inf_C=model.t_env + model.room_drift * t_m + (model.p_stir / model.g_after if model.g_after else 0.0),
            **self.model_truth(model),
        )
        return SimulatedRun(times, readings, run, truth, contents, probe)

    def model_truth(self, model: LumpedModel) -> dict[str, Any]:
        """Return the :class:`SimTruth` fields read off the model and the options (exchange, probe, release, noise)."""
        o = self.o
        return {
            "t_env_C": model.t_env,
            "k_before_per_s": model.g_before / model.c_before,
            "k_per_s": model.g_after / model.c_after,
            "tau_h_s": o["tau_h"],
            "tau_s_s": model.tau_s,
            "release": model.release,
            "tau_r_s": model.tau_r if model.release == "first-order" else None,
            "t_d_s": model.t_d if model.release in ("finite", "sphere") else None,
            "p_stir_W": model.p_stir,
            "noise_K": o["noise"],
            "phi": o["phi"],
            "resolution_K": o["resolution"],
            "gain": o["gain"],
            "offset_K": o["offset_K"],
            "room_drift_K_per_h": o["room_drift_K_per_h"],
            "seed": self.seed,
            "inputs": dict(self.inputs),
            "model": model,
        }

    def _mixing_statement(self, t_m: float) -> tuple[float, dict[str, str]]:
        """Return the mixing time as the student marks it (rounded as stated) and its run-file entry (none if omitted)."""
        o, u_tm = self.o, self.u["mixing_time_s"]
        d = _decimals(u_tm)
        stated_tm = t_m + o["mark_error_s"] + (self.rng.normal(0.0, u_tm) if o["perturb_inputs"] else 0.0)
        mix = {} if o["omit_mixing_time"] else {"mixing_time": f"{stated_tm:.{d}f} ± {u_tm:.{d}f} s"}
        return round(stated_tm, d), mix

    def _log(self, model: LumpedModel) -> tuple[np.ndarray, ...]:
        """Return (times, readings, contents, probe): the model solved, read by the thermometer, artefacts added."""
        o, rng = self.o, self.rng
        n = int(math.floor((model.t_m + o["after_s"]) / o["dt"] + 1e-9)) + 1
        times = np.round(np.arange(n) * o["dt"], 9)
        contents, probe = model.solve(times)
        phi = math.exp(-o["dt"] / o["stir_tau_s"]) if o["stir_tau_s"] > 0 else o["phi"]
        readings = read_probe(
            rng, probe, noise=o["noise"], phi=phi, resolution=o["resolution"], gain=o["gain"], offset=o["offset_K"]
        )
        return _artefacts(rng, o, times, readings, contents, probe)

    def _run_file(self, body: dict[str, Any], mix: dict[str, str]) -> dict[str, Any]:
        """Return the run file's content: the kind's tables (``body``) with [info], [calorimeter], [thermometer]."""
        o = self.o
        info = dict(o["info"])
        info.setdefault("title", f"simulated {self.kind} run")
        info.setdefault("notes", "synthetic data with a known truth (calc.simulation.simulator)")
        cal = body.pop("calorimeter", {})
        return {
            "kind": self.kind,
            "readings": "readings.csv",
            **mix,
            "info": info,
            "calorimeter": {"name": o["calorimeter_name"], **cal},
            "thermometer": {"resolution": f"{o['resolution']:g} K"},
            **body,
        }


def _artefacts(
    rng: np.random.Generator,
    o: Mapping[str, Any],
    times: np.ndarray,
    readings: np.ndarray,
    contents: np.ndarray,
    probe: np.ndarray,
) -> tuple[np.ndarray, ...]:
    """Add spikes, drop rows and stamp jittered times to 0.1 s (after the readings are drawn)."""
    n = times.size
    readings = readings.copy()
    q = o["resolution"]
    for _ in range(int(o["spikes"])):
        i = int(rng.integers(5, max(n - 6, 6)))
        width = int(rng.integers(1, 3))
        size = o["spike_K"] * rng.uniform(0.5, 1.5) * rng.choice([-1.0, 1.0])
        readings[i : i + width] = q * np.round((readings[i : i + width] + size) / q)
    keep = np.ones(n, dtype=bool)
    if o["drop_fraction"] > 0:
        keep[1:-1] = rng.uniform(size=n - 2) >= o["drop_fraction"]
    if o["jitter_s"] > 0:  # the logger's clock stamps each reading off its true time
        times = np.round(times + rng.uniform(-o["jitter_s"], o["jitter_s"], n), 1)
        order = np.argsort(times, kind="stable")
        times, readings, contents, probe, keep = (a[order] for a in (times, readings, contents, probe, keep))
    return times[keep], readings[keep], contents[keep], probe[keep]


def _decimals(u: float) -> int:
    """Return the number of decimals that shows ``u`` with two significant digits."""
    return max(0, 1 - math.floor(math.log10(u)))


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
    steps = np.diff(sim.time_s)
    steps = steps[steps > 0]
    dt_places = max(1, _places(float(np.min(steps)))) if steps.size else 1
    y_places = _places(sim.truth.resolution_K)
    rows = [f"{t:.{dt_places}f},{y:.{y_places}f}" for t, y in zip(sim.time_s, sim.reading_C)]
    (directory / f"{stem}.csv").write_text("time_s,temperature_C\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return toml_path
