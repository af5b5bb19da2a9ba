"""Draw simulated runs of every kind with parameters from the ranges of docs/methods.md §7.2."""

from __future__ import annotations

from typing import Any

import numpy as np

from calc.errors import InputError
from calc.simulation.kinds import formula_molar_mass
from calc.simulation.kinds import simulate_dissolution
from calc.simulation.kinds import simulate_electrical_calibration
from calc.simulation.kinds import simulate_mixing_calibration
from calc.simulation.kinds import simulate_neutralization
from calc.simulation.kinds import simulate_reaction
from calc.simulation.run import SimulatedRun

__all__ = ["random_scenario"]

_SALTS = {"KCl": 17.22, "NH4NO3": 25.7, "NH4Cl": 14.8, "NaOH": -44.5, "CaCl2": -81.3}  # kJ/mol, docs/methods.md §7.2


def random_scenario(kind: str, rng: np.random.Generator | int | None, *, noisy: bool = True,
                    perturb_inputs: bool | None = None, release: str | None = None,
                    extra: dict[str, Any] | None = None) -> SimulatedRun:
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
    uni = gen.uniform
    opts: dict[str, Any] = {
        "tau_s": uni(1, 10), "tau_h": uni(25, 120) * 60, "c_cal": uni(5, 40), "t_env_offset": uni(-1.5, 1.5),
        "t_initial_C": uni(19, 24), "p_stir_W": uni(0, 0.005), "fore_s": uni(180, 300),
        "dt": float(gen.choice([1.0, 2.0])),
        "perturb_inputs": noisy if perturb_inputs is None else perturb_inputs,
        "noise": uni(0.002, 0.02) if noisy else 0.0, "phi": uni(0, 0.6) if noisy else 0.0,
        "resolution": float(gen.choice([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1])) if noisy else 0.0001}

    extra = dict(extra or {})
    after_add = float(extra.pop("after_add_s", 0.0))
    salt_forced, tau_forced = extra.pop("salt", None), extra.pop("tau_r", None)
    opts.update(extra)

    def pick_release() -> str:
        return release or ("first-order" if gen.uniform() < 0.7 else "sphere")

    def after(slow: float) -> float:
        return 10 * slow + 5 * opts["tau_s"] + uni(300, 900) + after_add

    def c_guess(vol: float) -> float:  # J/K, only to size the sample or the heater pulse
        return vol * 4.18 + opts["c_cal"]

    if kind == "dissolution":
        salt = str(gen.choice(sorted(_SALTS)))
        vol, tau_r, rel = uni(50, 100), uni(10, 120), pick_release()
        salt, tau_r = salt_forced or salt, tau_forced or tau_r
        mass = uni(1, 5) * c_guess(vol) / abs(_SALTS[salt] * 1000) * formula_molar_mass(salt, "solute.formula")
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
        mass = uni(2, 6) * c_guess(vol) / 466.9e3 * formula_molar_mass("Mg", "reaction.limiting_reagent")
        return simulate_reaction(gen, reagent_mass_g=mass, solution_volume_mL=vol, tau_r=tau_r, release=rel,
                                 after_s=after(tau_r), **opts)
    raise InputError(f"unknown kind {kind!r}; expected one of dissolution, neutralization, "
                     "electrical-calibration, mixing-calibration, reaction", field="kind")
