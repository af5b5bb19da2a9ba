"""The in-situ calibration kind's measurement model and end-to-end analysis (method: :mod:`calc.insitu`).

C of cup + contents from the heater pulse(s), C = V·I·t / ΔT_heater, and ΔH = −C·ΔT_dissolution / n,
with every event's ΔT from the one shared drift fit and their covariance carried through its Cholesky
factor.
"""

from __future__ import annotations

import math
from typing import Any, cast

import numpy as np

from calc.deltat.base import METHOD_TERMS, DeltaT
from calc.deltat.constructions import SharedFitConstruction
from calc.errors import AnalysisError, InputError
from calc.insitu import SharedFit, insitu_periods, shared_fit
from calc.io.readings import Readings
from calc.io.runfile import RunSpec
from calc.refdata.formula import molar_mass
from calc.uncertainty.gum import Input
from calc.uncertainty.measurement_models import ModelSpec, RunProperties, measured_input

__all__ = ["build_insitu_model", "dissolution_delta_t", "analyze_insitu"]


# ------------------------------------------------------------------ the measurement model


def _insitu_inputs(spec: RunSpec, fit: SharedFit) -> list[Input]:
    """Return the primary inputs: each event's ΔT, the drift components, resolutions, method terms, heaters, mass."""
    names = [e.name for e in fit.events]
    n_ev = len(names)
    formula = spec.get("solute", "formula")
    purity = spec.get("solute", "purity")
    inputs: list[Input] = []
    for i, name in enumerate(names):
        key = "delta_t.fit" if name == "dissolution" else f"delta_t.{name}.fit"
        inputs.append(
            Input(key, float(fit.delta_t[i]), 0.0, "K", label=f"corrected ΔT of the {name.replace('_', ' ')}")
        )
    for j in range(n_ev):
        inputs.append(
            Input(
                f"drift.component_{j + 1}",
                0.0,
                1.0,
                "1",
                label=f"shared drift fits, independent component {j + 1} of the ΔT covariance",
            )
        )
    for j, u in enumerate(fit.resolution_u):
        inputs.append(
            Input(
                f"resolution.window_{j}",
                0.0,
                u,
                "K",
                "rectangular",
                label=f"thermometer resolution, level of drift window {j}",
            )
        )
    for i, name in enumerate(names):
        term = METHOD_TERMS["regnault-pfaundler"] * abs(float(fit.delta_t[i])) / math.sqrt(3.0)
        inputs.append(
            Input(f"method.{name}", 0.0, term, "K", "rectangular", label=f"ΔT method term, {name.replace('_', ' ')}")
        )
    heaters = [n for n in names if n != "dissolution"]
    for h in heaters:
        for field, unit, label in (
            ("voltage", "V", "voltage"),
            ("current", "A", "current"),
            ("duration", "s", "heating time"),
        ):
            inputs.append(measured_input(f"{h}.{field}", spec.get(h, field), unit, f"{h.replace('_', ' ')} {label}"))
    inputs.append(measured_input("solute.mass", spec.get("solute", "mass"), "g", f"mass of {formula}"))
    if purity is not None:
        inputs.append(Input("solute.purity", purity.value, purity.u_as(""), "", label="solute purity (mass fraction)"))
    return inputs


def build_insitu_model(spec: RunSpec, fit: SharedFit, props: RunProperties) -> ModelSpec:
    """Return the inputs and model: C from the heater pulse(s), ΔH = −C ΔT_dissolution / n."""
    names = [e.name for e in fit.events]
    chol = np.linalg.cholesky(fit.cov_delta_t + np.eye(len(names)) * 1e-18)
    formula = spec.get("solute", "formula")
    M = molar_mass(formula, field="solute.formula", source=spec.source)
    purity = spec.get("solute", "purity")
    mass = spec.get("solute", "mass")
    heaters = [n for n in names if n != "dissolution"]
    inputs = _insitu_inputs(spec, fit)

    def delta_t(x: Any, i: int) -> Any:
        name = names[i]
        base = x["delta_t.fit" if name == "dissolution" else f"delta_t.{name}.fit"]
        for j in range(i + 1):
            if chol[i, j] != 0.0:
                base = base + chol[i, j] * x[f"drift.component_{j + 1}"]
        return base + x[f"resolution.window_{i + 1}"] - x[f"resolution.window_{i}"] + x[f"method.{name}"]

    d_index = names.index("dissolution")

    def model(x: Any) -> dict[str, Any]:
        caps = [
            x[f"{h}.voltage"] * x[f"{h}.current"] * x[f"{h}.duration"] / delta_t(x, names.index(h)) for h in heaters
        ]
        c_total = caps[0] if len(caps) == 1 else (caps[0] + caps[1]) * 0.5
        dT = delta_t(x, d_index)
        heat = c_total * dT
        w = x["solute.purity"] if "solute.purity" in x else 1.0
        n = x["solute.mass"] * w / M
        return {
            "corrected_delta_t": dT,
            "heat": heat,
            "molar_enthalpy": -heat / n / 1000.0,
            "heat_capacity_total": c_total,
        }

    water = spec.get("water", "volume")
    water_g = water.m_as("mL") * props.values["water.density"][0] if water is not None else None
    n_mol = mass.m_as("g") * (purity.value if purity is not None else 1.0) / M
    t_i, t_f = fit.levels[d_index]
    before = [h for h in heaters if names.index(h) < d_index]
    after = [h for h in heaters if names.index(h) > d_index]
    t_ref = t_i if not before else (t_f if not after else 0.5 * (t_i + t_f))
    where = {True: "start", False: "end"}[not before] if not (before and after) else "middle"
    return ModelSpec(
        inputs,
        model,
        "molar_enthalpy",
        "kJ/mol",
        amount_note=(
            f"per mole of {formula} dissolved; heat capacity of cup + contents from the "
            f"heater ({', '.join(heaters)}); ΔH at the dissolution's {where} temperature"
        ),
        molality=n_mol / (water_g / 1000.0) if water_g else None,
        reference_temperature=t_ref,
        extra={"molar_mass_g_mol": M, "amount_mol": n_mol},
    )


def dissolution_delta_t(fit: SharedFit) -> DeltaT:
    """Return the dissolution's ΔT as a :class:`DeltaT` (for reports, plots and checks)."""
    names = [e.name for e in fit.events]
    i = names.index("dissolution")
    value = float(fit.delta_t[i])
    t_i, _t_f = fit.levels[i]
    construction = SharedFitConstruction(
        t_i=fit.events[i].start,
        t_f=fit.events[i].main_end,
        k_per_s=fit.k,
        shared_windows=tuple((a, b) for a, b in fit.windows),
        events=tuple(
            {
                "name": e.name,
                "start": e.start,
                "main_end": e.main_end,
                "delta_t": float(fit.delta_t[j]),
                "u_fit": float(math.sqrt(max(fit.cov_delta_t[j, j], 0.0))),
            }
            for j, e in enumerate(fit.events)
        ),
        correlation=tuple(tuple(r) for r in _correlation(fit.cov_delta_t).tolist()),
        residual_sd_K=fit.residual_sd,
        autocorrelation=fit.rho,
    )
    return DeltaT(
        method="regnault-pfaundler",
        value=value,
        u_fit=math.sqrt(max(fit.cov_delta_t[i, i], 0.0)),
        dof_fit=math.inf,
        u_resolution_start=fit.resolution_u[i],
        u_resolution_end=fit.resolution_u[i + 1],
        u_method=METHOD_TERMS["regnault-pfaundler"] * abs(value) / math.sqrt(3.0),
        u_mixing_time=0.0,
        start_temperature=t_i,
        u_start_temperature=math.sqrt(max(fit.cov[i, i], 0.0)),
        end_temperature=t_i + value,
        construction=construction,
    )


def _correlation(cov: np.ndarray) -> np.ndarray:
    d = np.sqrt(np.maximum(np.diag(cov), 1e-300))
    return cast(np.ndarray, cov / np.outer(d, d))


def analyze_insitu(
    spec: RunSpec,
    readings: Readings,
    *,
    method: str | None,
    monte_carlo_trials: int,
    seed: int | None,
    fore: tuple[float, float] | None,
    after: tuple[float, float] | None,
    with_reference: bool,
    calorimeter_type: str | None,
    history: Any,
) -> Any:
    """Analyze a dissolution-with-calibration run end to end; return a :class:`calc.result.Analysis`."""
    from dataclasses import replace

    from calc.checks import run_checks
    from calc.referencing import attach_reference, run_reference
    from calc.result import Analysis
    from calc.uncertainty.gum import monte_carlo, propagate

    if (method or spec.method or "regnault-pfaundler") != "regnault-pfaundler":
        raise InputError(
            "a dissolution-with-calibration run is analyzed with regnault-pfaundler only (one drift "
            "law shared by the dissolution and the heater); leave method out",
            field="method",
            source=spec.source,
        )
    spec = replace(spec, fore_period=fore or spec.fore_period, after_period=after or spec.after_period)
    periods, events, windows = insitu_periods(spec, readings)
    fit = shared_fit(readings, events, windows, spec.resolution_K)
    dt = dissolution_delta_t(fit)
    if not math.isfinite(dt.value) or dt.value == 0.0:
        raise AnalysisError(f"{readings.source}: no usable temperature change was found at the dissolution")
    for ev, value in zip(events, fit.delta_t):
        if ev.name != "dissolution" and not value > 0:
            raise AnalysisError(
                f"{readings.source}: the {ev.name.replace('_', ' ')} pulse at {ev.start:g} s gave no "
                "temperature rise; check its start time and duration"
            )
    props = _water_density(spec, dt.start_temperature)
    model = build_insitu_model(spec, fit, props)
    gum = propagate(model.inputs, model.model, model.main)
    warnings = list(periods.warnings) + _fit_warnings(fit)
    mc = None
    if monte_carlo_trials and monte_carlo_trials > 0:
        mc = monte_carlo(model.inputs, model.model, model.main, gum, trials=monte_carlo_trials, seed=seed)
        if not mc.agrees:
            warnings.append(
                f"the Monte Carlo 95 % interval [{mc.low:.4g}, {mc.high:.4g}] kJ/mol differs from the GUM "
                "interval by more than the tolerance; report the Monte Carlo interval"
            )
    result = Analysis(spec, readings, periods, dt, model, gum, props, mc, warnings)
    if with_reference:
        attach_reference(result)
    result.checks = run_checks(
        result, calorimeter_type=calorimeter_type, history=history, reference=run_reference(spec)
    )
    return result


def _water_density(spec: RunSpec, T_K: float) -> RunProperties:
    """Return the properties of the model: the water's density, from the run file or at ``T_K`` (IAPWS)."""
    props = RunProperties()
    water_density = spec.get("water", "density")
    if water_density is not None:
        props.add("water.density", water_density.m_as("g/mL"), water_density.u_as("g/mL"), "g/mL", "run file")
    else:
        from calc.refdata.water import water_density as iapws

        pv = iapws(T_K)
        props.add("water.density", pv.value, pv.u, "g/mL", f"{pv.model} at {T_K - 273.15:.1f} °C")
    return props


def _fit_warnings(fit: SharedFit) -> list[str]:
    out = []
    u_k = math.sqrt(max(fit.cov[-1, -1], 0.0))
    if fit.k < 0 and abs(fit.k) > 2 * u_k:
        out.append(
            "the shared drift is not Newtonian (exchange constant k < 0): a room temperature change or an "
            "unfinished process between the events?"
        )
    return out
