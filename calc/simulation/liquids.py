"""What every simulated kind states and builds on: liquids, the mixture's c_p, a solid added to a liquid, the release.

The true values are rounded as the run file states them and recorded by the :class:`calc.simulation.run.RunContext`
(:mod:`calc.simulation.kinds`, :mod:`calc.simulation.insitu`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any, cast

from calc.refdata.formula import molar_mass
from calc.simulation.model import LumpedModel
from calc.simulation.run import RunContext, RunOptions, SimulatedRun

__all__ = [
    "CP_UNIT",
    "HEATER_DEFAULTS",
    "HeaterOptions",
    "WATER_CP",
    "WATER_DENSITY",
    "ReleaseOptions",
    "RunTable",
    "SOLUTE_CP",
    "SolidInLiquid",
    "finish_released",
    "formula_molar_mass",
    "heater_kw",
    "heater_table",
    "liquid",
    "mixture",
    "release_kw",
    "solid_in_liquid",
    "mixing_temperature",
    "pour",
]

WATER_DENSITY = 0.9978  # g/mL near 22 °C (from memory)
WATER_CP = 4.181  # J/(g K) near 22 °C (from memory)
CP_UNIT = "J/(g*K)"
SOLUTE_CP = 0.8  # J/(g K), a salt's c_p when none is given (rough, from memory)


def formula_molar_mass(formula: str, where: str) -> float:
    """Return the molar mass of ``formula`` in g/mol; an unreadable formula is an error in ``where``."""
    return molar_mass(formula, field=where)


class ReleaseOptions(RunOptions, total=False):
    """The options of a run whose heat is released over time: the shared ones and the release model."""

    release: str  # "first-order" (the default: exponential, time constant τ_r), "finite" or "sphere"
    t_d: float | None  # s, time of a "finite" release (default τ_r) or a shrinking "sphere" (default 4 τ_r)


def release_kw(tau_r: float, options: ReleaseOptions) -> tuple[dict[str, Any], RunOptions]:
    """Return the model's release keywords (τ_r s, or the ``release`` and ``t_d`` in ``options``) and the other
    options; a shrinking sphere defaults to t_d = 4 τ_r (the same mean release time)."""
    rest = dict(options)
    release, t_d = rest.pop("release", "first-order"), rest.pop("t_d", None)
    kw: dict[str, Any] = {"release": release, "tau_r": tau_r}
    if release in ("sphere", "finite"):
        kw = {"release": release, "t_d": t_d if t_d is not None else (4 if release == "sphere" else 1) * tau_r}
    return kw, cast(RunOptions, rest)


class HeaterOptions(RunOptions, total=False):
    """The options of a run with a heater pulse: the shared ones and the heater's true settings."""

    voltage_V: float  # V
    current_A: float  # A
    duration_s: float  # s, time the heater is on


#: the heater settings of a simulated run when none are given (a bench supply near 5 V, 1 A, for 2 min)
HEATER_DEFAULTS = {"voltage_V": 5.0, "current_A": 1.0, "duration_s": 120.0}


def heater_kw(options: Mapping[str, Any]) -> tuple[tuple[float, float, float], dict[str, Any]]:
    """Return the heater's true (voltage V, current A, duration s) from ``options`` (else :data:`HEATER_DEFAULTS`)
    and the other options."""
    rest = dict(options)
    voltage, current, duration = (rest.pop(key, default) for key, default in HEATER_DEFAULTS.items())
    return (voltage, current, duration), rest


def heater_table(ctx: RunContext, table: str, voltage: float, current: float, duration: float) -> dict[str, str]:
    """Return the run-file table ``table`` of a heater whose true settings are (V, A, s), as rounded by ``ctx.true``."""
    return {
        "voltage": ctx.state(f"{table}.voltage", voltage, "voltage_V", "V"),
        "current": ctx.state(f"{table}.current", current, "current_A", "A"),
        "duration": ctx.state(f"{table}.duration", duration, "duration_s", "s"),
    }


@dataclass
class SolidInLiquid:
    """A solid added to one liquid in the cup: the run-file tables, the solid's mass and the heat capacities."""

    body: dict[str, Any]  # run-file tables: [calorimeter], the liquid's, [solute], [mixture]
    m_s: float  # g, true mass of the solid
    c_cal: float  # J/K, true calorimeter heat capacity
    c_before: float  # J/K, cup + liquid
    c_final: float  # J/K, cup + final solution

    def model(self, ctx: RunContext, heat: float, release: dict[str, Any]) -> LumpedModel:
        """Return the run's model: ``heat`` (J) released into the liquid as ``release`` says (:func:`release_kw`)."""
        g_before, g_after = ctx.conductances(self.c_final)
        return ctx.model(
            c_before=self.c_before, g_before=g_before, c_after=self.c_final, g_after=g_after, heat_J=heat, **release
        )

    def release(self, ctx: RunContext, extent: float, dh: float, release: dict[str, Any]) -> SimulatedRun:
        """Finish the run: ``extent`` mol (of solute, or of reaction) each releasing −``dh`` kJ as ``release`` says."""
        heat = -extent * dh * 1000.0
        model = self.model(ctx, heat, release)
        return finish_released(
            ctx, model, self.body, heat=heat, c_final=self.c_final, c_cal=self.c_cal, dh=dh, extent=extent
        )


def solid_in_liquid(
    ctx: RunContext,
    table: str,
    contents: tuple[float, float, float],
    solid: str,
    mass: float,
    solid_cp: float,
    mixture_cp: float | None,
) -> SolidInLiquid:
    """Return masses, heat capacities and run-file tables for a solid (``mass`` g) added to one liquid.

    ``contents`` is the liquid's (volume in mL, density in g/mL, c_p in J/(g K)), stated in the run-file table ``table``.

    The liquid's own c_p sets C before t_m only (the run file has no field for it; the truth does not
    depend on it); the stated mixture c_p sets C_final.
    """
    volume, density, cp = contents
    v, rho, cp = ctx.true(volume, "volume_mL"), ctx.true(density, "density_g_mL"), ctx.true(cp, "cp_J_gK")
    m_s, c_cal = ctx.true(mass, "mass_g"), ctx.true(ctx.o["c_cal"], "c_cal_J_K")
    m_liq = v * rho
    c_mix = ctx.true(mixture_cp if mixture_cp is not None else (m_liq * cp + m_s * solid_cp) / (m_liq + m_s), "cp_J_gK")
    body: dict[str, Any] = {
        "calorimeter": {"heat_capacity": ctx.state("calorimeter.heat_capacity", c_cal, "c_cal_J_K", "J/K")},
        table: {
            "volume": ctx.state(f"{table}.volume", v, "volume_mL", "mL"),
            "density": ctx.state(f"{table}.density", rho, "density_g_mL", "g/mL"),
        },
        "solute": {"formula": solid, "mass": ctx.state("solute.mass", m_s, "mass_g", "g")},
        "mixture": {"specific_heat_capacity": ctx.state("mixture.specific_heat_capacity", c_mix, "cp_J_gK", CP_UNIT)},
    }
    c_before, c_final = m_liq * cp + c_cal, (m_liq + m_s) * c_mix + c_cal
    return SolidInLiquid(body, m_s, c_cal, c_before, c_final)


def finish_released(
    ctx: RunContext,
    model: LumpedModel,
    body: dict[str, Any],
    *,
    heat: float,
    c_final: float,
    c_cal: float,
    dh: float | None = None,
    extent: float | None = None,
    poured: tuple[float, float] | None = None,
) -> SimulatedRun:
    """Finish a run whose heat is released in the cup: ΔT_ad = Q/C_final, from T(t_m) into the one liquid in the
    cup, or from T_mix when a second liquid was poured in (``poured`` = (T_A(t_m), T_mix), see :func:`pour`)."""
    t_a, t_mix = poured if poured is not None else (model.contents_before_mixing(), None)
    reference = "T(t_m)" if poured is None else "T_mix"
    return ctx.finish(
        model,
        body,
        heat=heat,
        c_final=c_final,
        c_cal=c_cal,
        dh=dh,
        extent=extent,
        t_a=t_a,
        t_mix=t_mix,
        delta_t_ad=heat / c_final,
        reference=reference,
    )


#: One table of a simulated run file: field → a quantity as the file states it ("50.0 mL"), or a whole number
#: (the ``equivalents`` of an acid or a base).
RunTable = dict[str, str | int]


def liquid(ctx: RunContext, table: str, volume: float, density: float) -> tuple[float, RunTable]:
    """Return (mass in g, run-file table) of a liquid with true values rounded as stated."""
    v, rho = ctx.true(volume, "volume_mL"), ctx.true(density, "density_g_mL")
    tab: RunTable = {
        "volume": ctx.state(f"{table}.volume", v, "volume_mL", "mL"),
        "density": ctx.state(f"{table}.density", rho, "density_g_mL", "g/mL"),
    }
    return v * rho, tab


def mixture(ctx: RunContext, cp: float) -> tuple[float, dict[str, str]]:
    """Return the true (rounded) c_p of the final solution and the [mixture] table."""
    c = ctx.true(cp, "cp_J_gK")
    return c, {"specific_heat_capacity": ctx.state("mixture.specific_heat_capacity", c, "cp_J_gK", CP_UNIT)}


def mixing_temperature(c_a: float, t_a: float, c_b: float, t_b: float) -> float:
    """Return the adiabatic mixing temperature of docs/methods.md §2.3(ii) (c_a includes C_cal)."""
    return (c_a * t_a + c_b * t_b) / (c_a + c_b)


def pour(model: LumpedModel, c_poured: float, t_poured: float) -> tuple[LumpedModel, float, float]:
    """Pour a second liquid (heat capacity ``c_poured`` J/K, at ``t_poured`` °C) into the cup at t_m.

    Return the model whose contents jump to T_mix at t_m, the contents' T_A just before, and T_mix.
    """
    t_a = model.contents_before_mixing()
    t_mix = mixing_temperature(model.c_before, t_a, c_poured, t_poured)
    return replace(model, t_jump=t_mix), t_a, t_mix
