"""Measurement models of each run kind, written in primary inputs.

Each builder returns the list of :class:`calc.uncertainty.gum.Input` and a model function
of those inputs that gives the heat and the main result. The corrected
temperature change enters as its value plus zero-valued error components (fit,
resolution at start and end, method, mixing time), so that the budget shows
each one and the Monte Carlo draws each from its own distribution.

A kind's builder is its ``model`` hook in :mod:`calc.kinds` (DEVELOPERS.md, "Adding a run kind").
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from calc.deltat.base import DeltaT
from calc.errors import InputError
from calc.io.quantities import Measured
from calc.io.runfile import RunSpec
from calc.kinds import get_kind
from calc.refdata.formula import molar_mass
from calc.uncertainty.gum import Input, xmin

__all__ = [
    "ModelSpec",
    "RunProperties",
    "build_model",
    "measured_input",
    "dissolution_model",
    "neutralization_model",
    "electrical_model",
    "mixing_model",
    "reaction_model",
    "EQUIVALENTS",
]

#: H⁺ or OH⁻ per formula unit of common acids and bases (common practice, no source).
EQUIVALENTS: dict[str, int] = {
    "HCl": 1,
    "HBr": 1,
    "HI": 1,
    "HNO3": 1,
    "HClO4": 1,
    "H2SO4": 2,
    "CH3COOH": 1,
    "HCOOH": 1,
    "NaOH": 1,
    "KOH": 1,
    "LiOH": 1,
    "NH3": 1,
    "Ba(OH)2": 2,
    "Ca(OH)2": 2,
    "Sr(OH)2": 2,
}


@dataclass
class RunProperties:
    """The property values one run's measurement model uses (densities and heat capacities of the water,
    warm water, solution or stock), each with its standard uncertainty, unit and source, and the warnings
    raised finding them; one bundle per run (:func:`calc.composition.resolve_properties`)."""

    values: dict[str, tuple[float, float, str, str]] = field(default_factory=dict)  # name -> (value, u, unit, source)
    warnings: list[str] = field(default_factory=list)

    def add(self, name: str, value: float, u: float, unit: str, source: str) -> None:
        """Record a property."""
        self.values[name] = (value, u, unit, source)


@dataclass
class ModelSpec:
    """Inputs and model function of one run."""

    inputs: list[Input]
    model: Callable[[Mapping[str, Any]], dict[str, Any]]
    main: str
    main_unit: str
    amount_note: str = ""  # "per mole of KCl", …
    molality: float | None = None  # final molality of the solute, mol/kg
    reference_temperature: float | None = None  # K, the temperature the ΔH refers to
    extra: dict[str, Any] = field(default_factory=dict)


def measured_input(name: str, m: Measured, unit: str, label: str) -> Input:
    """Return the input ``name`` of a run-file quantity in ``unit`` (normal when stated so, else rectangular)."""
    dist = "normal" if m.distribution == "normal" else "rectangular"
    return Input(name, m.m_as(unit), m.u_as(unit), unit, dist, label=label)


def _prop(name: str, props: RunProperties, label: str) -> Input:
    v, u, unit, source = props.values[name]
    return Input(name, v, u, unit, "normal", label=f"{label} [{source}]")


def _dt_inputs(dt: DeltaT, *, start_apart: bool = False) -> list[Input]:
    """Return ΔT's error components; ``start_apart``: the fore line's level is left out of the fit term.

    A two-solution run's ΔT starts from the fore line's value at the mixing time, so its fit term
    holds that level's variance. Its model takes the level as an input of its own
    (:func:`_start_input`) and subtracts it from ΔT, so the level is counted once, with its true
    sensitivities (docs/methods.md §5.5).
    """
    u_fit = math.sqrt(max(dt.u_fit**2 - dt.u_start_temperature**2, 0.0)) if start_apart else dt.u_fit
    what = "drift fits without the start level" if start_apart else "drift fits"
    return [
        Input(
            "delta_t.fit",
            dt.value,
            u_fit,
            "K",
            "t" if math.isfinite(dt.dof_fit) else "normal",
            dt.dof_fit,
            label=f"corrected ΔT, {what} ({dt.method})",
        ),
        Input(
            "delta_t.resolution_start",
            0.0,
            dt.u_resolution_start,
            "K",
            "rectangular",
            label="thermometer resolution, start level",
        ),
        Input(
            "delta_t.resolution_end",
            0.0,
            dt.u_resolution_end,
            "K",
            "rectangular",
            label="thermometer resolution, end level",
        ),
        Input("delta_t.method", 0.0, dt.u_method, "K", "rectangular", label="ΔT method term"),
        Input("delta_t.mixing_time", 0.0, dt.u_mixing_time, "K", "normal", label="mixing time"),
        Input(
            "delta_t.drift_resolution",
            0.0,
            dt.u_drift_resolution,
            "K",
            "rectangular",
            label="thermometer resolution, drift slopes",
        ),
        Input(
            "delta_t.model",
            0.0,
            dt.u_model,
            "K",
            "rectangular",
            label="drift model inadequacy (fore+after law against after-only law)",
        ),
    ]


def _start_input(name: str, dt: DeltaT, label: str) -> Input:
    """The fore line's level at the mixing time (a two-solution run's start temperature)."""
    return Input(name, dt.start_temperature, dt.u_start_temperature, "K", "normal", label=label)


def _dT_from_start(x: Mapping[str, Any], name: str, start0: float) -> Any:
    """ΔT of a two-solution run: the end level minus the start level ``x[name]`` (value at ``start0``)."""
    return _dT(x) - (x[name] - start0)


def _dT(x: Mapping[str, Any]) -> Any:
    return (
        x["delta_t.fit"]
        + x["delta_t.resolution_end"]
        - x["delta_t.resolution_start"]
        + x["delta_t.method"]
        + x["delta_t.mixing_time"]
        + x["delta_t.drift_resolution"]
        + x["delta_t.model"]
    )


def _cal_input(spec: RunSpec) -> Input:
    m = spec.get("calorimeter", "heat_capacity")
    return measured_input("calorimeter.heat_capacity", m, "J/K", "calorimeter heat capacity")


# ---------------------------------------------------------------- builders


def dissolution_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    formula = spec.get("solute", "formula")
    M = molar_mass(formula, field="solute.formula", source=spec.source)
    purity = spec.get("solute", "purity")
    inputs = [
        measured_input("water.volume", spec.get("water", "volume"), "mL", "water volume"),
        _prop("water.density", props, "water density"),
        measured_input("solute.mass", spec.get("solute", "mass"), "g", f"mass of {formula}"),
        _prop("mixture.specific_heat_capacity", props, "specific heat capacity of the solution"),
        _cal_input(spec),
        *_dt_inputs(dt),
    ]
    if purity is not None:
        inputs.append(measured_input("solute.purity", purity, "", "solute purity (mass fraction)"))

    def model(x: Mapping[str, Any]) -> dict[str, Any]:
        m_soln = x["water.volume"] * x["water.density"] + x["solute.mass"]
        dT = _dT(x)
        heat = (m_soln * x["mixture.specific_heat_capacity"] + x["calorimeter.heat_capacity"]) * dT
        w = x["solute.purity"] if "solute.purity" in x else 1.0
        n = x["solute.mass"] * w / M
        return {"corrected_delta_t": dT, "heat": heat, "molar_enthalpy": -heat / n / 1000.0}

    water_g = inputs[0].value * inputs[1].value
    n_mol = inputs[2].value * (purity.m_as("") if purity is not None else 1.0) / M
    return ModelSpec(
        inputs,
        model,
        "molar_enthalpy",
        "kJ/mol",
        amount_note=f"per mole of {formula} dissolved",
        molality=n_mol / (water_g / 1000.0) if water_g > 0 else None,
        reference_temperature=dt.start_temperature,
        extra={"molar_mass_g_mol": M, "amount_mol": n_mol},
    )


def _equivalents(spec: RunSpec, section: str) -> int:
    eq = spec.get(section, "equivalents")
    if eq is not None:
        return int(eq)
    formula = spec.get(section, "formula")
    if formula in EQUIVALENTS:
        return EQUIVALENTS[formula]
    raise InputError(
        f"missing: cupcal does not know how many {'H+' if section == 'acid' else 'OH-'} one formula "
        f"unit of {formula} gives; add e.g. equivalents = 1",
        source=spec.source,
        field=f"{section}.equivalents",
    )


def neutralization_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    eq_a = _equivalents(spec, "acid")
    eq_b = _equivalents(spec, "base")
    inputs = [
        measured_input("acid.concentration", spec.get("acid", "concentration"), "mol/L", "acid concentration"),
        measured_input("acid.volume", spec.get("acid", "volume"), "mL", "acid volume"),
        _prop("acid.density", props, "acid density"),
        measured_input("base.concentration", spec.get("base", "concentration"), "mol/L", "base concentration"),
        measured_input("base.volume", spec.get("base", "volume"), "mL", "base volume"),
        _prop("base.density", props, "base density"),
        measured_input("base.temperature", spec.get("base", "temperature"), "K", "base temperature before pouring"),
        _prop("mixture.specific_heat_capacity", props, "specific heat capacity of the final solution"),
        _cal_input(spec),
        _start_input("acid.temperature", dt, "acid temperature at mixing (fore drift line)"),
        *_dt_inputs(dt, start_apart=True),
    ]
    T_A0 = dt.start_temperature

    def model(x: Mapping[str, Any]) -> dict[str, Any]:
        m_a = x["acid.volume"] * x["acid.density"]
        m_b = x["base.volume"] * x["base.density"]
        cp = x["mixture.specific_heat_capacity"]
        dT = _dT_from_start(x, "acid.temperature", T_A0)  # the start level counted once, in ΔT and in T_A
        C_final = (m_a + m_b) * cp + x["calorimeter.heat_capacity"]
        # the acid's start level carries the start-resolution error of ΔT as well
        T_A = x["acid.temperature"] + x["delta_t.resolution_start"]
        heat = C_final * dT + m_b * cp * (T_A - x["base.temperature"])
        n_h = x["acid.concentration"] * x["acid.volume"] / 1000.0 * eq_a
        n_oh = x["base.concentration"] * x["base.volume"] / 1000.0 * eq_b
        xi = xmin(n_h, n_oh)
        return {"corrected_delta_t": dT, "heat": heat, "molar_enthalpy": -heat / xi / 1000.0}

    n_h = inputs[0].value * inputs[1].value / 1000 * eq_a
    n_oh = inputs[3].value * inputs[4].value / 1000 * eq_b
    limiting = "acid" if n_h <= n_oh else "base"
    total_g = inputs[1].value * inputs[2].value + inputs[4].value * inputs[5].value
    return ModelSpec(
        inputs,
        model,
        "molar_enthalpy",
        "kJ/mol",
        amount_note=f"per mole of water formed (limiting reagent: {limiting}, {spec.get(limiting, 'formula')})",
        molality=min(n_h, n_oh) / (total_g / 1000.0) if total_g > 0 else None,
        reference_temperature=dt.start_temperature,
        extra={"limiting": limiting, "amount_mol": min(n_h, n_oh)},
    )


def electrical_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    inputs = [
        measured_input("heater.voltage", spec.get("heater", "voltage"), "V", "heater voltage"),
        measured_input("heater.current", spec.get("heater", "current"), "A", "heater current"),
        measured_input("heater.duration", spec.get("heater", "duration"), "s", "heating time"),
        measured_input("water.volume", spec.get("water", "volume"), "mL", "water volume"),
        _prop("water.density", props, "water density"),
        _prop("mixture.specific_heat_capacity", props, "specific heat capacity of water"),
        *_dt_inputs(dt),
    ]

    def model(x: Mapping[str, Any]) -> dict[str, Any]:
        heat = x["heater.voltage"] * x["heater.current"] * x["heater.duration"]
        dT = _dT(x)
        c_cal = heat / dT - x["water.volume"] * x["water.density"] * x["mixture.specific_heat_capacity"]
        return {"corrected_delta_t": dT, "heat": heat, "calorimeter_heat_capacity": c_cal}

    return ModelSpec(inputs, model, "calorimeter_heat_capacity", "J/K", reference_temperature=dt.start_temperature)


def mixing_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    inputs = [
        measured_input("water.volume", spec.get("water", "volume"), "mL", "cool water volume"),
        _prop("water.density", props, "cool water density"),
        measured_input("warm_water.volume", spec.get("warm_water", "volume"), "mL", "warm water volume"),
        _prop("warm_water.density", props, "warm water density"),
        measured_input(
            "warm_water.temperature",
            spec.get("warm_water", "temperature"),
            "K",
            "warm water temperature before pouring",
        ),
        _prop("mixture.specific_heat_capacity", props, "specific heat capacity of water"),
        _start_input("water.temperature", dt, "cool water temperature at mixing (fore drift line)"),
        *_dt_inputs(dt, start_apart=True),
    ]
    T_c0 = dt.start_temperature

    def model(x: Mapping[str, Any]) -> dict[str, Any]:
        cp = x["mixture.specific_heat_capacity"]
        c_cool = x["water.volume"] * x["water.density"] * cp
        c_warm = x["warm_water.volume"] * x["warm_water.density"] * cp
        dT = _dT_from_start(x, "water.temperature", T_c0)  # the start level counted once, in ΔT and in T_c
        T_c = x["water.temperature"] + x["delta_t.resolution_start"]
        T_end = T_c + dT
        heat = c_warm * (x["warm_water.temperature"] - T_end)
        c_cal = heat / dT - c_cool
        return {"corrected_delta_t": dT, "heat": heat, "calorimeter_heat_capacity": c_cal}

    return ModelSpec(inputs, model, "calorimeter_heat_capacity", "J/K", reference_temperature=dt.start_temperature)


def reaction_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    r = spec.sections["reaction"]
    nu = int(r.get("coefficient", 1))
    solute = spec.sections.get("solute")
    inputs = [
        measured_input("solution.volume", spec.get("solution", "volume"), "mL", "solution volume"),
        _prop("solution.density", props, "solution density"),
        _prop("mixture.specific_heat_capacity", props, "specific heat capacity of the final solution"),
        _cal_input(spec),
        *_dt_inputs(dt),
    ]
    if solute is not None:
        inputs.append(measured_input("solute.mass", solute["mass"], "g", f"mass of {solute['formula']}"))
    if "amount" in r:
        inputs.append(measured_input("reaction.amount", r["amount"], "mol", "amount of limiting reagent"))
        M = None
    else:
        M = molar_mass(r["limiting_reagent"], field="reaction.limiting_reagent", source=spec.source)
        inputs.append(measured_input("reaction.mass", r["mass"], "g", f"mass of {r['limiting_reagent']}"))

    def model(x: Mapping[str, Any]) -> dict[str, Any]:
        m = x["solution.volume"] * x["solution.density"]
        if "solute.mass" in x:
            m = m + x["solute.mass"]
        dT = _dT(x)
        heat = (m * x["mixture.specific_heat_capacity"] + x["calorimeter.heat_capacity"]) * dT
        n = x["reaction.amount"] if M is None else x["reaction.mass"] / M
        return {"corrected_delta_t": dT, "heat": heat, "molar_enthalpy": -heat / (n / nu) / 1000.0}

    what = r.get("equation") or (
        f"the reaction of {r['limiting_reagent']}" if "limiting_reagent" in r else "the reaction"
    )
    return ModelSpec(
        inputs,
        model,
        "molar_enthalpy",
        "kJ/mol",
        amount_note=f"per mole of reaction as written ({what}; coefficient {nu})",
        reference_temperature=dt.start_temperature,
    )


#: The signature of a kind's ``model`` hook (:mod:`calc.kinds`).
ModelBuilder = Callable[[RunSpec, DeltaT, RunProperties], ModelSpec]


def build_model(spec: RunSpec, dt: DeltaT, props: RunProperties) -> ModelSpec:
    """Return the measurement model of ``spec``'s kind (its ``model`` hook in :mod:`calc.kinds`)."""
    builder: ModelBuilder | None = get_kind(spec.kind).hook("model")
    if builder is None:
        raise InputError(f"a {spec.kind} run has no single-event measurement model", source=spec.source, field="kind")
    return builder(spec, dt, props)
