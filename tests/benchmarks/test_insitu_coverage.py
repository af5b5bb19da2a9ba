"""Trueness and coverage of the dissolution-with-calibration kind on simulated logs (``make bench``).

Each log holds a dissolution and then a heater pulse (calc.simulation.insitu, truth known). Parameters
are drawn over wide ranges: salt and ΔH (four salts, endo- and exothermic), mass, water volume,
release time constant, gap before the pulse, heater power and duration, calorimeter, exchange
time constant, room offset, probe lag, noise (AR(1)) and thermometer resolution 0.001, 0.01 or
0.1 K. The mixing time is given. Figures: 90th percentile of |ΔH error| on near noise-free
logs (target ≤ 0.3 %), and the share of 95 % intervals that hold the true ΔH (target 93–97 %).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np

from calc.analysis import analyze_run
from calc.errors import CupcalError
from calc.simulation.insitu import simulate_dissolution_with_calibration
from calc.simulation.simulator import write_run

SALTS = {"KCl": 17.22, "NH4NO3": 25.7, "NH4Cl": 14.8, "NaOH": -44.5}  # kJ/mol, reference tables (from memory)
MOLAR_MASS = {"KCl": 74.55, "NH4NO3": 80.04, "NH4Cl": 53.49, "NaOH": 40.00}


def draw(rng: np.random.Generator, noisy: bool, resolution: float) -> dict:
    salt = str(rng.choice(list(SALTS)))
    water = float(rng.uniform(60, 200))
    target_dt = float(rng.uniform(1.0, 4.0))
    mass = target_dt * water * 4.18 / abs(SALTS[salt]) / 1000 * MOLAR_MASS[salt]
    power = float(rng.uniform(2.0, 12.0))
    duration = float(np.clip(target_dt * water * 4.18 / power, 60, 400))
    tau_r = float(rng.uniform(10, 90))
    return dict(
        formula=salt,
        molar_enthalpy_kJ_mol=SALTS[salt],
        solute_mass_g=round(mass, 3),
        water_volume_mL=water,
        tau_r=tau_r,
        voltage_V=round(power / 1.5, 3),
        current_A=1.5,
        duration_s=round(duration, 1),
        gap_s=float(rng.uniform(10 * tau_r + 240, 10 * tau_r + 600)),
        tail_s=float(rng.uniform(300, 900)),
        c_cal=float(rng.uniform(5, 150)),
        tau_h=float(rng.uniform(25, 120)) * 60,
        t_env_offset=float(rng.uniform(-1.5, 1.5)),
        tau_s=float(rng.uniform(1, 8)),
        fore_s=float(rng.uniform(120, 300)),
        dt=float(rng.choice([1.0, 2.0])),
        noise=float(rng.uniform(0.002, 0.01)) if noisy else 0.0,
        phi=float(rng.uniform(0, 0.5)) if noisy else 0.0,
        resolution=resolution if noisy else 0.0001,
        perturb_inputs=noisy,
    )


def measure(
    n: int, noisy: bool, resolution: float, seed: int, *, detected: bool = False
) -> tuple[np.ndarray, float, int]:
    rng = np.random.default_rng(seed)
    errors, hits, refused = [], 0, 0
    with tempfile.TemporaryDirectory() as d:
        for i in range(n):
            sim = simulate_dissolution_with_calibration(int(rng.integers(2**31)), **draw(rng, noisy, resolution))
            path = write_run(sim, Path(d), f"r{i}")
            if detected:  # leave the mixing time out: the analysis finds it before the heater pulse
                path.write_text("\n".join(x for x in path.read_text().splitlines() if not x.startswith("mixing_time")))
            try:
                a = analyze_run(path, with_reference=False)
            except CupcalError:
                refused += 1
                continue
            value, truth = a.gum.values["molar_enthalpy"], sim.truth.molar_enthalpy_kJ_mol
            errors.append((value - truth) / truth)
            hits += abs(value - truth) <= a.gum.expanded_uncertainty
    return np.abs(np.array(errors)), hits / max(len(errors), 1), refused


def test_trueness_near_noise_free() -> None:
    err, _cov, refused = measure(100, noisy=False, resolution=0.0001, seed=1)
    p90 = float(np.percentile(err, 90))
    print(
        f"\ndissolution-with-calibration, near noise-free: p90 |error| = {100 * p90:.3f} % "
        f"({err.size} runs, {refused} refused)"
    )
    assert p90 <= 0.003


def test_coverage_per_resolution() -> None:
    for q in (0.001, 0.01, 0.1):
        err, coverage, refused = measure(120, noisy=True, resolution=q, seed=int(q * 1e4) + 7)
        print(
            f"\ndissolution-with-calibration, resolution {q} K: coverage {100 * coverage:.1f} % of {err.size} runs, "
            f"p90 |error| {100 * np.percentile(err, 90):.2f} %, {refused} refused"
        )
        assert 0.90 <= coverage <= 0.99


def test_coverage_with_the_mixing_time_detected() -> None:
    for q in (0.001, 0.01, 0.1):
        err, coverage, refused = measure(120, noisy=True, resolution=q, seed=int(q * 1e4) + 11, detected=True)
        print(
            f"\ndissolution-with-calibration, mixing time detected, resolution {q} K: coverage "
            f"{100 * coverage:.1f} % of {err.size} runs, p90 |error| {100 * np.percentile(err, 90):.2f} %, "
            f"{refused} refused"
        )
        assert 0.90 <= coverage <= 0.99
