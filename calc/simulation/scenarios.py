"""Draw simulated runs of every kind with parameters from the ranges of docs/methods.md §7.2."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, cast

import numpy as np

from calc.errors import InputError
from calc.kinds import REGISTRY
from calc.simulation.kinds import (
    formula_molar_mass,
    simulate_dissolution,
    simulate_electrical_calibration,
    simulate_mixing_calibration,
    simulate_neutralization,
    simulate_reaction,
)
from calc.simulation.run import SimulatedRun

__all__ = ["random_scenario"]

_SALTS = {"KCl": 17.22, "NH4NO3": 25.7, "NH4Cl": 14.8, "NaOH": -44.5, "CaCl2": -81.3}  # kJ/mol, docs/methods.md §7.2


def random_scenario(
    kind: str,
    rng: np.random.Generator | int | None,
    *,
    noisy: bool = True,
    perturb_inputs: bool | None = None,
    release: str | None = None,
    extra: dict[str, Any] | None = None,
) -> SimulatedRun:
    """Simulate one run of ``kind`` with parameters drawn from the ranges of docs/methods.md §7.2.

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
    extra:
        Options that override the drawn ones (any :class:`calc.simulation.run.RunOptions` key), plus
        ``after_add_s`` (more log after the change), ``salt`` and ``tau_r`` (dissolution).

    Returns
    -------
    SimulatedRun
    """
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    opts = _shared_options(gen, noisy, noisy if perturb_inputs is None else perturb_inputs)
    extra = dict(extra or {})
    after_add = float(extra.pop("after_add_s", 0.0))
    salt_forced, tau_forced = extra.pop("salt", None), extra.pop("tau_r", None)
    opts.update(extra)
    kind_entry = REGISTRY.get(kind)
    draw: Callable[[Draw], SimulatedRun] | None = kind_entry.hook("scenario") if kind_entry is not None else None
    if draw is None:
        raise InputError(
            f"unknown kind {kind!r}; expected one of "
            f"{', '.join(k.name for k in REGISTRY.values() if k.has('scenario'))}",
            field="kind",
        )
    return draw(Draw(gen, opts, release, after_add, salt_forced, tau_forced))


def _shared_options(gen: np.random.Generator, noisy: bool, perturb_inputs: bool) -> dict[str, Any]:
    """Draw the options every kind shares (the cup, the room, the probe, the log) from docs/methods.md §7.2."""
    uni = gen.uniform
    return {
        "tau_s": uni(1, 10),
        "tau_h": uni(25, 120) * 60,
        "c_cal": uni(5, 40),
        "t_env_offset": uni(-1.5, 1.5),
        "t_initial_C": uni(19, 24),
        "p_stir_W": uni(0, 0.005),
        "fore_s": uni(180, 300),
        "dt": float(gen.choice([1.0, 2.0])),
        "perturb_inputs": perturb_inputs,
        "noise": uni(0.002, 0.02) if noisy else 0.0,
        "phi": uni(0, 0.6) if noisy else 0.0,
        "resolution": float(gen.choice([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1])) if noisy else 0.0001,
    }


@dataclass(frozen=True)
class Draw:
    """What a kind's ``scenario`` hook draws from: the generator, the shared options and the overrides."""

    gen: np.random.Generator
    opts: dict[str, Any]
    release: str | None
    after_add: float
    salt: str | None
    tau_r: float | None

    def uni(self, low: float = 0.0, high: float = 1.0) -> float:
        """Return one uniform draw on [low, high) (no arguments: on [0, 1))."""
        return self.gen.uniform(low, high)

    def pick_release(self) -> str:
        """Return the release model asked for, else first-order (70 %) or a shrinking sphere."""
        return self.release or ("first-order" if self.gen.uniform() < 0.7 else "sphere")

    def after(self, slow: float) -> float:
        """Return the log's length after the change: 10 × the slowest time, 5 τ_s and 5–15 min more."""
        return cast(float, 10 * slow + 5 * self.opts["tau_s"] + self.uni(300, 900) + self.after_add)

    def c_guess(self, vol: float) -> float:
        """Return a rough heat capacity (J/K), only to size the sample or the heater pulse."""
        return cast(float, vol * 4.18 + self.opts["c_cal"])


# ------------------------------------------------------------------ the kinds' ``scenario`` hooks


def draw_dissolution(d: Draw) -> SimulatedRun:
    """A salt of :data:`_SALTS` in 50–100 mL, sized for |ΔT_ad| of 1–5 K."""
    salt = str(d.gen.choice(sorted(_SALTS)))
    vol, tau_r, rel = d.uni(50, 100), d.uni(10, 120), d.pick_release()
    salt, tau_r = d.salt or salt, d.tau_r or tau_r
    mass = d.uni(1, 5) * d.c_guess(vol) / abs(_SALTS[salt] * 1000) * formula_molar_mass(salt, "solute.formula")
    return simulate_dissolution(
        d.gen,
        formula=salt,
        molar_enthalpy_kJ_mol=_SALTS[salt],
        solute_mass_g=mass,
        water_volume_mL=vol,
        tau_r=tau_r,
        release=rel,
        after_s=d.after(tau_r),
        **d.opts,
    )


def draw_neutralization(d: Draw) -> SimulatedRun:
    """0.5–1.5 mol/L stocks, 25–50 mL each, up to 10 % excess base."""
    v_a, tau_r, conc = d.uni(25, 50), d.uni(2, 10), round(d.uni(0.5, 1.5), 2)
    return simulate_neutralization(
        d.gen,
        acid_concentration=conc,
        base_concentration=conc * d.uni(1.0, 1.1),
        acid_volume_mL=v_a,
        base_volume_mL=v_a * d.uni(0.95, 1.05),
        tau_r=tau_r,
        base_temperature_offset=d.uni(-1, 1),
        after_s=d.after(tau_r),
        **d.opts,
    )


def draw_electrical_calibration(d: Draw) -> SimulatedRun:
    """A heater pulse of 30–600 s sized for |ΔT| of 1–5 K."""
    vol, volt, amp = d.uni(50, 100), d.uni(3, 12), d.uni(0.5, 2)
    t_d = float(np.clip(d.uni(1, 5) * d.c_guess(vol) / (volt * amp), 30, 600))
    return simulate_electrical_calibration(
        d.gen, water_volume_mL=vol, voltage_V=volt, current_A=amp, duration_s=t_d, after_s=d.after(t_d / 10), **d.opts
    )


def draw_mixing_calibration(d: Draw) -> SimulatedRun:
    """40–45 mL of water 15–25 K warmer poured into 40–55 mL."""
    return simulate_mixing_calibration(
        d.gen,
        water_volume_mL=d.uni(40, 55),
        warm_volume_mL=d.uni(40, 45),
        warm_temperature_C=d.opts["t_initial_C"] + d.uni(15, 25),
        after_s=d.after(0.0),
        **d.opts,
    )


def draw_reaction(d: Draw) -> SimulatedRun:
    """Magnesium in acid, sized for |ΔT| of 2–6 K."""
    tau_r, rel = d.uni(10, 60), d.pick_release()
    vol = d.uni(50, 100)
    mass = d.uni(2, 6) * d.c_guess(vol) / 466.9e3 * formula_molar_mass("Mg", "reaction.limiting_reagent")
    return simulate_reaction(
        d.gen, reagent_mass_g=mass, solution_volume_mL=vol, tau_r=tau_r, release=rel, after_s=d.after(tau_r), **d.opts
    )
