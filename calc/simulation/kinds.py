"""Simulate each kind of run: dissolution, reaction, neutralization and the two calibrations.

Each ``simulate_*`` function states its inputs through a :class:`calc.simulation.run.RunContext`, builds
the :class:`calc.simulation.model.LumpedModel` of the run and returns a :class:`calc.simulation.run.SimulatedRun`.
The assumptions (heat capacities, heat exchange, instant mixing, rounding of the true inputs) are
written out once, in :mod:`calc.simulation.simulator`.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Unpack

import numpy as np

from calc.refdata.formula import molar_mass
from calc.simulation.run import RunContext, RunOptions, SimulatedRun

__all__ = [
    "WATER_DENSITY",
    "WATER_CP",
    "formula_molar_mass",
    "simulate_dissolution",
    "simulate_neutralization",
    "simulate_electrical_calibration",
    "simulate_mixing_calibration",
    "simulate_reaction",
]

WATER_DENSITY = 0.9978  # g/mL near 22 °C (from memory)
WATER_CP = 4.181  # J/(g K) near 22 °C (from memory)
_CP_UNIT = "J/(g*K)"


def formula_molar_mass(formula: str, where: str) -> float:
    """Return the molar mass of ``formula`` in g/mol; an unreadable formula is an error in ``where``."""
    return molar_mass(formula, field=where)


def _solid_in_liquid(ctx: RunContext, *, table: str, volume: float, density: float, cp: float, solid: str,
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
    ctx = RunContext("dissolution", rng, options)
    s = _solid_in_liquid(ctx, table="water", volume=water_volume_mL, density=water_density, cp=water_cp,
                         solid=formula, mass=solute_mass_g, solid_cp=solute_cp, mixture_cp=mixture_cp)
    n = s["m_s"] / formula_molar_mass(formula, "solute.formula")
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
    ctx = RunContext("reaction", rng, options)
    s = _solid_in_liquid(ctx, table="solution", volume=solution_volume_mL, density=solution_density,
                         cp=solution_cp, solid=limiting_reagent, mass=reagent_mass_g, solid_cp=solid_cp,
                         mixture_cp=mixture_cp)
    extent = s["m_s"] / formula_molar_mass(limiting_reagent, "reaction.limiting_reagent") / coefficient
    heat = -extent * molar_enthalpy_kJ_mol * 1000.0
    s["body"]["reaction"] = {"equation": equation, "limiting_reagent": limiting_reagent,
                             "mass": s["body"]["solute"]["mass"], "coefficient": coefficient}
    g_before, g_after = ctx.conductances(s["c_final"])
    model = ctx.model(c_before=s["c_before"], g_before=g_before, c_after=s["c_final"], g_after=g_after,
                      heat_J=heat, **_release_kw(release, tau_r, t_d))
    return ctx.finish(model, s["body"], heat=heat, c_final=s["c_final"], c_cal=s["c_cal"],
                      dh=molar_enthalpy_kJ_mol, extent=extent, t_a=model.contents_before_mixing(), t_mix=None,
                      delta_t_ad=heat / s["c_final"], reference="T(t_m)")


#: One table of a simulated run file: field → a quantity as the file states it ("50.0 mL"), or a whole number
#: (the ``equivalents`` of an acid or a base).
RunTable = dict[str, str | int]


def _liquid(ctx: RunContext, table: str, volume: float, density: float) -> tuple[float, RunTable]:
    """Return (mass in g, run-file table) of a liquid with true values rounded as stated."""
    v, rho = ctx.true(volume, "volume_mL"), ctx.true(density, "density_g_mL")
    tab: RunTable = {"volume": ctx.state(f"{table}.volume", v, "volume_mL", "mL"),
           "density": ctx.state(f"{table}.density", rho, "density_g_mL", "g/mL")}
    return v * rho, tab


def _mixture(ctx: RunContext, cp: float) -> tuple[float, dict[str, str]]:
    """Return the true (rounded) c_p of the final solution and the [mixture] table."""
    c = ctx.true(cp, "cp_J_gK")
    return c, {"specific_heat_capacity": ctx.state("mixture.specific_heat_capacity", c, "cp_J_gK", _CP_UNIT)}


def _t_mix(c_a: float, t_a: float, c_b: float, t_b: float) -> float:
    """Return the adiabatic mixing temperature of docs/methods.md §2.3(ii) (c_a includes C_cal)."""
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
    ctx = RunContext("neutralization", rng, options)
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
    ctx = RunContext("electrical-calibration", rng, options)
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
    ctx = RunContext("mixing-calibration", rng, options)
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
