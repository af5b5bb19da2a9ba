"""Simulate each kind of run: dissolution, reaction, neutralization and the two calibrations.

Each ``simulate_*`` function states its inputs through a :class:`calc.simulation.run.RunContext`, builds
the :class:`calc.simulation.model.LumpedModel` of the run and returns a :class:`calc.simulation.run.SimulatedRun`.
The assumptions (heat capacities, heat exchange, instant mixing, rounding of the true inputs) are
written out once, in :mod:`calc.simulation.simulator`.

Every ``simulate_*`` function takes ``rng``, a random generator or an integer seed (stored in the truth), and
the shared settings as keywords (``**options``: :class:`calc.simulation.run.RunOptions`, and for a heat
released over time the release model, :class:`calc.simulation.liquids.ReleaseOptions`); its Parameters name
only its own inputs.
"""

from __future__ import annotations

from typing import Any, NamedTuple, Unpack

import numpy as np

from calc.simulation.liquids import (
    SOLUTE_CP,
    WATER_CP,
    WATER_DENSITY,
    HeaterOptions,
    ReleaseOptions,
    SolidInLiquid,
    finish_released,
    formula_molar_mass,
    heater_kw,
    heater_table,
    liquid,
    mixture,
    pour,
    release_kw,
    solid_in_liquid,
)
from calc.simulation.run import RunContext, RunOptions, SimulatedRun

__all__ = [
    "WATER_DENSITY",
    "WATER_CP",
    "DissolutionOptions",
    "Dissolving",
    "dissolve",
    "formula_molar_mass",
    "simulate_dissolution",
    "simulate_neutralization",
    "simulate_electrical_calibration",
    "simulate_mixing_calibration",
    "simulate_reaction",
]


class DissolutionOptions(ReleaseOptions, total=False):
    """A dissolution's own inputs (see :func:`simulate_dissolution`; defaults in :func:`dissolve`) and the shared
    options: the keywords of every simulator built on a salt dissolving in water."""

    formula: str
    molar_enthalpy_kJ_mol: float
    solute_mass_g: float
    water_volume_mL: float
    tau_r: float
    water_density: float
    water_cp: float
    solute_cp: float
    mixture_cp: float | None


class Dissolving(NamedTuple):
    """A salt about to dissolve in the cup: the run's context, the salt in the water, its moles, ΔH and release."""

    ctx: RunContext
    salt: SolidInLiquid
    n: float  # mol of solute
    dh: float  # kJ/mol, true Δ_solH
    release: dict[str, Any]  # the model's release keywords (calc.simulation.liquids.release_kw)


def dissolve(
    kind: str,
    rng: np.random.Generator | int | None,
    *,
    formula: str = "KCl",
    molar_enthalpy_kJ_mol: float = 17.2,
    solute_mass_g: float = 3.7,
    water_volume_mL: float = 100.0,
    tau_r: float = 60.0,
    water_density: float = WATER_DENSITY,
    water_cp: float = WATER_CP,
    solute_cp: float = SOLUTE_CP,
    mixture_cp: float | None = None,
    **options: Unpack[ReleaseOptions],
) -> Dissolving:
    """State the salt and the water of a ``kind`` run (:class:`DissolutionOptions`, with these defaults)."""
    release, run_options = release_kw(tau_r, options)
    ctx = RunContext(kind, rng, run_options)
    water = (water_volume_mL, water_density, water_cp)
    s = solid_in_liquid(ctx, "water", water, formula, solute_mass_g, solute_cp, mixture_cp)
    return Dissolving(ctx, s, s.m_s / formula_molar_mass(formula, "solute.formula"), molar_enthalpy_kJ_mol, release)


def simulate_dissolution(rng: np.random.Generator | int | None, **options: Unpack[DissolutionOptions]) -> SimulatedRun:
    """Simulate dissolving a solid salt in water.

    Parameters
    ----------
    formula, molar_enthalpy_kJ_mol, solute_mass_g:
        The salt, its true Δ_solH (kJ per mole of solute) and true mass (g).
    water_volume_mL, water_density, water_cp, solute_cp, mixture_cp:
        Water in the cup (mL, g/mL, J/(g K)); ``water_cp`` sets C before t_m only. The stated c_p of
        the final solution defaults to the mass-weighted mean of water and solid.
    tau_r:
        Release time constant, s.

    The defaults (3.7 g KCl, 17.2 kJ/mol, in 100 mL water, τ_r 60 s) are :func:`dissolve`'s.

    Returns
    -------
    SimulatedRun
        Log, run dict and truth; ``truth.delta_t_adiabatic`` = Q/C_final from T(t_m).
    """
    d = dissolve("dissolution", rng, **options)
    return d.salt.release(d.ctx, d.n, d.dh, d.release)


def simulate_reaction(
    rng: np.random.Generator | int | None,
    *,
    equation: str = "Mg(s) + 2 H+(aq) -> Mg2+(aq) + H2(g)",
    limiting_reagent: str = "Mg",
    coefficient: int = 1,
    molar_enthalpy_kJ_mol: float = -466.9,
    reagent_mass_g: float = 0.1,
    solution_volume_mL: float = 100.0,
    solution_density: float = 1.016,
    solution_cp: float = 3.98,
    solid_cp: float = 1.02,
    mixture_cp: float | None = None,
    tau_r: float = 30.0,
    **options: Unpack[ReleaseOptions],
) -> SimulatedRun:
    """Simulate a solid limiting reagent added to, and reacting in, a solution.

    Parameters
    ----------
    equation, limiting_reagent, coefficient, molar_enthalpy_kJ_mol, reagent_mass_g:
        The reaction as written, its limiting solid (a formula), that solid's stoichiometric
        coefficient, the true Δ_rH (kJ per mole of reaction, ξ = n/coefficient) and the solid's mass (g).
        The default Δ_rH of Mg in dilute acid is approximate (from memory); any value may be given.
    solution_volume_mL, solution_density, solution_cp, solid_cp, mixture_cp:
        The liquid in the cup and the heat capacities (mixture default: mass-weighted mean).
    tau_r:
        Release time constant, s.

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = Q/C_final from T(t_m).
    """
    release, run_options = release_kw(tau_r, options)
    ctx = RunContext("reaction", rng, run_options)
    solution = (solution_volume_mL, solution_density, solution_cp)
    s = solid_in_liquid(ctx, "solution", solution, limiting_reagent, reagent_mass_g, solid_cp, mixture_cp)
    extent = s.m_s / formula_molar_mass(limiting_reagent, "reaction.limiting_reagent") / coefficient
    s.body["reaction"] = {
        "equation": equation,
        "limiting_reagent": limiting_reagent,
        "mass": s.body["solute"]["mass"],
        "coefficient": coefficient,
    }
    return s.release(ctx, extent, molar_enthalpy_kJ_mol, release)


def simulate_neutralization(
    rng: np.random.Generator | int | None,
    *,
    acid: str = "HCl",
    base: str = "NaOH",
    molar_enthalpy_kJ_mol: float = -55.8,
    acid_concentration: float = 1.0,
    base_concentration: float = 1.0,
    acid_volume_mL: float = 50.0,
    base_volume_mL: float = 50.0,
    acid_density: float = 1.016,
    base_density: float = 1.040,
    mixture_cp: float = 3.96,
    acid_cp: float | None = None,
    base_cp: float | None = None,
    base_temperature_offset: float = 0.3,
    acid_equivalents: int = 1,
    base_equivalents: int = 1,
    tau_r: float = 4.0,
    **options: Unpack[ReleaseOptions],
) -> SimulatedRun:
    """Simulate pouring a base, at its own temperature, into an acid in the cup.

    Parameters
    ----------
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
    tau_r:
        Release time constant of the reaction heat after the instant mixing at t_m, s.

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = Q/C_final from T_mix; ``truth.delta_t_from_contents`` is the
        rise from the acid's T_A(t_m) used by the run-file heat balance.
    """
    release, run_options = release_kw(tau_r, options)
    ctx = RunContext("neutralization", rng, run_options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    cal = {"heat_capacity": ctx.state("calorimeter.heat_capacity", c_cal, "c_cal_J_K", "J/K")}
    ca, cb = ctx.true(acid_concentration, "concentration_mol_L"), ctx.true(base_concentration, "concentration_mol_L")
    m_a, tab_a = liquid(ctx, "acid", acid_volume_mL, acid_density)
    tab_a = {
        "formula": acid,
        "concentration": ctx.state("acid.concentration", ca, "concentration_mol_L", "mol/L"),
        **tab_a,
        "equivalents": acid_equivalents,
    }
    m_b, tab_b = liquid(ctx, "base", base_volume_mL, base_density)
    t_b = ctx.true(ctx.o["t_initial_C"] + base_temperature_offset, "temperature_K")
    tab_b = {
        "formula": base,
        "concentration": ctx.state("base.concentration", cb, "concentration_mol_L", "mol/L"),
        **tab_b,
        "temperature": ctx.state("base.temperature", t_b, "temperature_K", "degC"),
        "equivalents": base_equivalents,
    }
    v_a, v_b = ctx.inputs["acid.volume"], ctx.inputs["base.volume"]
    c_mix, mix = mixture(ctx, mixture_cp)
    cp_a = c_mix if acid_cp is None else acid_cp
    cp_b = c_mix if base_cp is None else base_cp
    extent = min(ca * v_a * acid_equivalents, cb * v_b * base_equivalents) / 1000.0
    heat = -extent * molar_enthalpy_kJ_mol * 1000.0
    c_before, c_final = m_a * cp_a + c_cal, (m_a + m_b) * c_mix + c_cal
    g_before, g_after = ctx.conductances(c_final, v_a / (v_a + v_b))
    model = ctx.model(
        c_before=c_before,
        g_before=g_before,
        c_after=c_final,
        g_after=g_after,
        heat_J=heat,
        **release,
    )
    model, t_a, t_mix = pour(model, m_b * cp_b, t_b)
    body = {"calorimeter": cal, "acid": tab_a, "base": tab_b, "mixture": mix}
    dh = molar_enthalpy_kJ_mol
    return finish_released(
        ctx, model, body, heat=heat, c_final=c_final, c_cal=c_cal, dh=dh, extent=extent, poured=(t_a, t_mix)
    )


def simulate_electrical_calibration(
    rng: np.random.Generator | int | None,
    *,
    water_volume_mL: float = 100.0,
    water_density: float = WATER_DENSITY,
    water_cp: float = WATER_CP,
    **options: Unpack[HeaterOptions],
) -> SimulatedRun:
    """Simulate an electrical calibration: a heater pulse V·I for ``duration_s`` switched on at t_m.

    Parameters
    ----------
    water_volume_mL, water_density, water_cp:
        Water in the cup; its c_p is stated in [mixture] (the final solution is the water).
    voltage_V, current_A, duration_s:
        True heater settings (defaults: :data:`calc.simulation.liquids.HEATER_DEFAULTS`); the heat is
        V·I·duration (the option ``c_cal`` is the true value the calibration should find).

    Returns
    -------
    SimulatedRun
        ``truth.delta_t_adiabatic`` = V·I·t/C_final from T(t_m).
    """
    (voltage_V, current_A, duration_s), run_options = heater_kw(options)
    ctx = RunContext("electrical-calibration", rng, run_options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_w, tab = liquid(ctx, "water", water_volume_mL, water_density)
    cp, mix = mixture(ctx, water_cp)
    v, i = ctx.true(voltage_V, "voltage_V"), ctx.true(current_A, "current_A")
    t_d = ctx.true(duration_s, "duration_s")
    heater = heater_table(ctx, "heater", v, i, t_d)
    c_final, heat = m_w * cp + c_cal, v * i * t_d
    g_before, g_after = ctx.conductances(c_final)
    model = ctx.model(
        c_before=c_final, g_before=g_before, c_after=c_final, g_after=g_after, heat_J=heat, release="finite", t_d=t_d
    )
    body = {"water": tab, "heater": heater, "mixture": mix}
    return finish_released(ctx, model, body, heat=heat, c_final=c_final, c_cal=c_cal)


def simulate_mixing_calibration(
    rng: np.random.Generator | int | None,
    *,
    water_volume_mL: float = 50.0,
    warm_volume_mL: float = 50.0,
    warm_temperature_C: float = 45.0,
    water_density: float = WATER_DENSITY,
    warm_density: float = 0.9902,
    water_cp: float = WATER_CP,
    warm_cp: float | None = None,
    **options: Unpack[RunOptions],
) -> SimulatedRun:
    """Simulate a mixing calibration: warm water poured into cool water in the cup at t_m.

    Parameters
    ----------
    water_volume_mL, water_density, water_cp:
        Cool water in the cup (its temperature follows ``t_initial_C`` and the room); ``water_cp`` is
        stated in [mixture], the one c_p the run file has.
    warm_volume_mL, warm_temperature_C, warm_density:
        Warm water at the moment it is poured.
    warm_cp:
        c_p of the warm water in the simulated world; default ``water_cp`` (what the analysis uses).

    Returns
    -------
    SimulatedRun
        No heat is released: ``truth.delta_t_adiabatic`` = T_mix − T_A(t_m) and ``truth.heat_J`` is the
        heat the warm water gives up, C_warm (T_warm − T_mix).
    """
    ctx = RunContext("mixing-calibration", rng, options)
    c_cal = ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_c, tab_c = liquid(ctx, "water", water_volume_mL, water_density)
    m_w, tab_w = liquid(ctx, "warm_water", warm_volume_mL, warm_density)
    t_w = ctx.true(warm_temperature_C, "temperature_K")
    tab_w = {**tab_w, "temperature": ctx.state("warm_water.temperature", t_w, "temperature_K", "degC")}
    cp_c, mix = mixture(ctx, water_cp)
    cp_w = cp_c if warm_cp is None else warm_cp
    c_before, c_warm = m_c * cp_c + c_cal, m_w * cp_w
    c_final = c_before + c_warm
    v_c, v_w = ctx.inputs["water.volume"], ctx.inputs["warm_water.volume"]
    g_before, g_after = ctx.conductances(c_final, v_c / (v_c + v_w))
    model = ctx.model(c_before=c_before, g_before=g_before, c_after=c_final, g_after=g_after)
    model, t_a, t_mix = pour(model, c_warm, t_w)
    body = {"water": tab_c, "warm_water": tab_w, "mixture": mix}
    return ctx.finish(
        model,
        body,
        heat=c_warm * (t_w - t_mix),
        c_final=c_final,
        c_cal=c_cal,
        t_a=t_a,
        t_mix=t_mix,
        delta_t_ad=t_mix - t_a,
        reference="T_A(t_m)",
    )
