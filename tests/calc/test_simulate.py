"""Tests of the calorimeter simulator (calc.simulation.simulator) against closed forms and reference libraries."""

from __future__ import annotations

import importlib.util
import math
import re
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from molmass import Formula
from scipy.integrate import quad

from calc.errors import InputError
from calc.simulation.simulator import (
    LumpedModel,
    ar1_noise,
    first_order_release_curve,
    random_scenario,
    simulate_dissolution,
    simulate_electrical_calibration,
    simulate_mixing_calibration,
    simulate_neutralization,
    simulate_reaction,
    write_run,
)

REPO = Path(__file__).resolve().parents[2]
KINDS = ("dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction")
QUIET = {"noise": 0.0, "phi": 0.0, "resolution": 1e-4}
_MEASURE = re.compile(r"^\s*([-+0-9.eE]+)\s*(?:±|\+/-)\s*([0-9.eE]+)\s+(.+?)\s*$")


def measure(text: str) -> tuple[float, float, str]:
    """Split a run-file string "v ± u unit" (RUNFILE.md)."""
    match = _MEASURE.match(text)
    assert match, text
    return float(match[1]), float(match[2]), match[3]


def value(text: str) -> float:
    return measure(text)[0]


def test_newton_cooling_matches_closed_form() -> None:
    # Newton's law of cooling, T∞ + (T0 − T∞) e^{−kt} (common practice, no source).
    model = LumpedModel(
        t_initial=31.0, t_env=20.0, t_m=5000.0, c_before=420.0, g_before=0.12, c_after=420.0, g_after=0.12, tau_s=0.0
    )
    t = np.linspace(0.0, 4000.0, 801)
    expected = 20.0 + 11.0 * np.exp(-0.12 / 420.0 * t)
    for method, tol in (("exact", 1e-10), ("ode", 1e-8)):
        contents, probe = model.solve(t, method=method)
        assert np.max(np.abs(contents - expected)) < tol
        assert np.max(np.abs(probe - expected)) < tol


@pytest.mark.parametrize("release", ["first-order", "finite", "sphere"])
def test_release_without_exchange_rises_by_q_over_c(release: str) -> None:
    # First law with no heat exchange: the rise is Q/C exactly (common practice, no source).
    model = LumpedModel(
        t_initial=22.0,
        t_env=22.0,
        t_m=50.0,
        c_before=400.0,
        g_before=0.0,
        c_after=430.0,
        g_after=0.0,
        heat_J=-850.0,
        release=release,
        tau_r=10.0,
        t_d=40.0,
        tau_s=3.0,
    )
    contents, probe = model.solve(np.array([49.0, 400.0]))
    assert contents[0] == pytest.approx(22.0, abs=1e-12)
    assert contents[1] - contents[0] == pytest.approx(-850.0 / 430.0, abs=1e-10)
    assert probe[1] == pytest.approx(contents[1], abs=1e-10)


def test_instant_dissolution_rise_equals_q_over_c_and_molmass_amount() -> None:
    sim = simulate_dissolution(3, tau_h=math.inf, tau_r=1e-3, p_stir_W=0.0, tau_s=0.0, **QUIET)
    truth, run = sim.truth, sim.run
    # amount from the stated mass and the molar mass of the reference library molmass
    n = value(run["solute"]["mass"]) / Formula(run["solute"]["formula"]).mass
    assert truth.heat_J == pytest.approx(-n * 17.2e3, rel=1e-12)
    m_total = value(run["water"]["volume"]) * value(run["water"]["density"]) + value(run["solute"]["mass"])
    c_final = m_total * value(run["mixture"]["specific_heat_capacity"]) + value(run["calorimeter"]["heat_capacity"])
    assert truth.heat_capacity_final_J_K == pytest.approx(c_final, rel=1e-12)
    after = sim.contents_C[sim.time_s >= truth.t_m_s + 1.0]
    assert np.allclose(after - truth.t_contents_at_mixing_C, truth.heat_J / c_final, atol=1e-10, rtol=0)
    assert truth.delta_t_adiabatic == pytest.approx(truth.heat_J / c_final, rel=1e-12)


def test_first_order_release_closed_form_matches_ode() -> None:
    # Closed form of docs/methods.md §2.4 (own derivation there) against scipy's DOP853 integrator
    # (reference library); the brief asks for agreement to 1e-6 K.
    sim = simulate_dissolution(5, tau_r=20.0, tau_s=5.0, tau_h=1800.0, t_env_offset=1.2, p_stir_W=0.004, **QUIET)
    model, truth = sim.truth.model, sim.truth
    assert model is not None
    k0, s = model.g_before / model.c_before, 1.0 / model.tau_s
    t_inf = model.t_env + model.p_stir / model.g_before  # G is the same before and after for a solid
    # fore-period (docs/methods.md §2.4): T = T∞ + (T0 − T∞) e^{−kt}, probe on its steady track s/(s−k)
    t_start = t_inf + (model.t_initial - t_inf) * math.exp(-k0 * model.t_m)
    ts_start = t_inf + (model.t_initial - t_inf) * s / (s - k0) * math.exp(-k0 * model.t_m)
    u = sim.time_s[sim.time_s >= model.t_m] - model.t_m
    temp, probe = first_order_release_curve(
        u,
        t_inf=t_inf,
        k=truth.k_per_s,
        t_start=t_start,
        delta_t_ad=truth.delta_t_adiabatic,
        tau_r=20.0,
        tau_s=5.0,
        probe_start=ts_start,
    )
    contents_ode, probe_ode = model.solve(sim.time_s, method="ode")
    after = sim.time_s >= model.t_m
    assert np.max(np.abs(contents_ode[after] - temp)) < 1e-6
    assert np.max(np.abs(probe_ode[after] - probe)) < 1e-6
    assert np.max(np.abs(sim.probe_C[after] - probe)) < 1e-9  # the piecewise exact solution
    assert np.max(np.abs(sim.probe_C - probe_ode)) < 1e-6
    assert t_start == pytest.approx(truth.t_contents_at_mixing_C, abs=1e-12)
    fore = sim.time_s < model.t_m  # the probe starts on its steady track: no start-up transient
    track = t_inf + (model.t_initial - t_inf) * s / (s - k0) * np.exp(-k0 * sim.time_s[fore])
    assert np.max(np.abs(sim.probe_C[fore] - track)) < 1e-9


@pytest.mark.parametrize("case", ["first-order", "sphere", "heater", "neutralization"])
def test_energy_balance_identity_gives_adiabatic_rise(case: str) -> None:
    # ∫P dt = Q, and the isoperibol identity (docs/methods.md §2.0, eq. 2.0; Newton's law, common practice)
    # ΔT_ad = T(t_f) − T_i − ∫ k (T∞ − T) dt on the noise-free contents temperature.
    common = {"tau_h": 2400.0, "t_env_offset": -0.8, "after_s": 700.0, **QUIET}
    if case == "heater":
        sim = simulate_electrical_calibration(1, duration_s=150.0, **common)
    elif case == "neutralization":
        sim = simulate_neutralization(1, base_temperature_offset=0.9, **common)
    else:
        sim = simulate_dissolution(1, release=case, tau_r=25.0, **common)
    truth, model = sim.truth, sim.truth.model
    assert model is not None
    points = [model.t_m, model.t_m + model.t_d] if model.t_d else [model.t_m]
    released, _ = quad(
        lambda t: float(model.release_power(t)),
        model.t_m - 10,
        model.t_m + 5000,
        points=points,
        limit=400,
        epsabs=1e-10,
    )
    assert released == pytest.approx(truth.heat_J, rel=1e-9)
    t = np.linspace(model.t_m, model.t_m + 700.0, 35001)
    contents, _ = model.solve(t)
    gap = truth.k_per_s * (truth.t_inf_C - contents)
    exchange = float(np.sum((gap[1:] + gap[:-1]) / 2 * np.diff(t)))
    estimate = contents[-1] - truth.reference_temperature_C - exchange
    assert estimate == pytest.approx(truth.delta_t_adiabatic, abs=1e-7)
    assert truth.delta_t_adiabatic == pytest.approx(truth.heat_J / truth.heat_capacity_final_J_K, rel=1e-12)


def test_neutralization_mixing_temperature_and_run_file_balance() -> None:
    # T_mix = [(m_A c_A + C_cal) T_A + m_B c_B T_B] / (m_A c_A + C_cal + m_B c_B): heat balance
    # (common practice, no source); values taken from the run file the simulator wrote.
    sim = simulate_neutralization(7, base_temperature_offset=1.0, tau_s=0.0, **QUIET)
    run, truth, model = sim.run, sim.truth, sim.truth.model
    assert model is not None
    acid, base, cp = run["acid"], run["base"], value(run["mixture"]["specific_heat_capacity"])
    c_a = value(acid["volume"]) * value(acid["density"]) * cp
    c_b = value(base["volume"]) * value(base["density"]) * cp
    c_cal, t_b = value(run["calorimeter"]["heat_capacity"]), value(base["temperature"])
    before, at = model.solve(np.array([model.t_m - 1e-7, model.t_m]))[0]
    t_a = truth.t_contents_at_mixing_C
    assert before == pytest.approx(t_a, abs=1e-9)
    t_mix = ((c_a + c_cal) * t_a + c_b * t_b) / (c_a + c_cal + c_b)
    assert at == pytest.approx(t_mix, abs=1e-12)
    assert truth.t_mix_C == pytest.approx(t_mix, abs=1e-12)
    # ξ from the limiting reagent; RUNFILE.md balance Q = C_final ΔT_A + C_B (T_A − T_B)
    xi = (
        min(value(acid["concentration"]) * value(acid["volume"]), value(base["concentration"]) * value(base["volume"]))
        / 1000
    )
    assert truth.heat_J == pytest.approx(xi * 55.8e3, rel=1e-12)
    m_total = value(acid["volume"]) * value(acid["density"]) + value(base["volume"]) * value(base["density"])
    c_final = m_total * cp + c_cal
    q = c_final * truth.delta_t_from_contents + c_b * (t_a - t_b)
    assert q == pytest.approx(truth.heat_J, rel=1e-10)


def test_mixing_calibration_formula_recovers_c_cal() -> None:
    # RUNFILE.md: C_cal = C_warm (T_warm − T_A)/ΔT_A − C_cool − C_warm (heat balance, common practice)
    sim = simulate_mixing_calibration(11, c_cal=23.4, **QUIET)
    run, truth = sim.run, sim.truth
    cool, warm, cp = run["water"], run["warm_water"], value(run["mixture"]["specific_heat_capacity"])
    c_cool = value(cool["volume"]) * value(cool["density"]) * cp
    c_warm = value(warm["volume"]) * value(warm["density"]) * cp
    t_a, dt_a = truth.t_contents_at_mixing_C, truth.delta_t_adiabatic
    c_cal = c_warm * (value(warm["temperature"]) - t_a) / dt_a - c_cool - c_warm
    assert c_cal == pytest.approx(23.4, abs=1e-9)
    assert truth.reference == "T_A(t_m)" and dt_a == pytest.approx(truth.t_mix_C - t_a, abs=1e-12)


def test_peak_of_lag_free_first_order_release() -> None:
    # docs/methods.md §2.5 (own derivation there): with T0 = T∞ the peak is at t* = ln(k_r/k)/(k_r − k) and
    # ΔT_max/ΔT_ad = k_r/(k_r − k) (e^{−k t*} − e^{−k_r t*}).
    k, kr = 1 / 3000.0, 1 / 60.0
    model = LumpedModel(
        t_initial=22.0,
        t_env=22.0,
        t_m=0.0,
        c_before=430.0,
        g_before=430.0 * k,
        c_after=430.0,
        g_after=430.0 * k,
        heat_J=-1000.0,
        release="first-order",
        tau_r=60.0,
    )
    t_star = math.log(kr / k) / (kr - k)
    contents, _ = model.solve(np.linspace(t_star - 2, t_star + 2, 401))
    ratio = kr / (kr - k) * (math.exp(-k * t_star) - math.exp(-kr * t_star))
    assert np.min(contents) - 22.0 == pytest.approx(ratio * -1000.0 / 430.0, abs=1e-9)


@pytest.mark.parametrize("q", [0.001, 0.01, 0.05, 0.1])
def test_readings_are_quantised(q: float, tmp_path: Path) -> None:
    sim = simulate_reaction(2, noise=0.0, resolution=q)
    steps = sim.reading_C / q
    assert np.allclose(steps, np.round(steps), atol=1e-9, rtol=0)
    assert np.max(np.abs(sim.reading_C - sim.probe_C)) <= q / 2 + 1e-9
    assert sim.run["thermometer"]["resolution"] == f"{q:g} K"
    lines = write_run(sim, tmp_path, "r").with_suffix(".csv").read_text().splitlines()
    places = len(f"{q:g}".split(".")[1])
    assert all(len(line.split(",")[1].split(".")[1]) == places for line in lines[1:])


@pytest.mark.parametrize("phi", [0.0, 0.3, 0.6])
def test_ar1_noise_statistics(phi: float) -> None:
    # Tolerances: for an AR(1) series of length N the lag-1 sample autocorrelation has standard error
    # ≈ sqrt((1 − φ²)/N) (Bartlett 1946; Box & Jenkins, Time Series Analysis; from memory) ≤ 0.0023 at
    # N = 2e5, so 0.01 is > 4 SE; the sample SD has relative SE ≈ sqrt((1 + φ²)/(2N(1 − φ²))) ≤ 0.0024,
    # so 1.5 % is > 6 SE.
    e = ar1_noise(np.random.default_rng(42), 200_000, 0.01, phi)
    r1 = np.corrcoef(e[:-1], e[1:])[0, 1]
    assert r1 == pytest.approx(phi, abs=0.01)
    assert np.std(e) == pytest.approx(0.01, rel=0.015)
    assert abs(np.mean(e)) < 5 * 0.01 * math.sqrt((1 + phi) / (1 - phi) / e.size)


def test_ar1_noise_starts_stationary() -> None:
    # e_0 must already have variance σ² (stationary AR(1); Box & Jenkins, from memory): over 40 000
    # short series the SD of e_0 has relative SE ≈ 1/sqrt(2 × 40 000) = 0.0035, tolerance 0.02.
    rng = np.random.default_rng(9)
    first = np.array([ar1_noise(rng, 3, 0.01, 0.6) for _ in range(40_000)])
    assert np.std(first[:, 0]) == pytest.approx(0.01, rel=0.02)
    assert np.std(first[:, 2]) == pytest.approx(0.01, rel=0.02)


def test_perturbed_inputs_are_normal_about_the_truth() -> None:
    # z = (stated − true)/u should be N(0, 1) (JCGM 100:2008 standard uncertainty; from memory).
    z = []
    for seed in range(150):
        sim = simulate_neutralization(seed, perturb_inputs=True, after_s=60.0, dt=10.0)
        flat = {f"{t}.{k}": v for t, tab in sim.run.items() if isinstance(tab, dict) for k, v in tab.items()}
        for name, true in sim.truth.inputs.items():
            stated, u, _ = measure(flat[name])
            z.append((stated - true) / u)
        stated_tm, u_tm, _ = measure(sim.run["mixing_time"])
        z.append((stated_tm - sim.truth.t_m_s) / u_tm)
    z_arr = np.array(z)
    # N ≈ 150 × 13: SE of the mean ≈ 0.023 and of the SD ≈ 0.016; tolerances are ≥ 5 SE
    assert abs(z_arr.mean()) < 0.12
    assert z_arr.std() == pytest.approx(1.0, abs=0.08)
    assert np.mean(np.abs(z_arr) <= 1.96) == pytest.approx(0.95, abs=0.025)


def test_unperturbed_run_file_states_the_truth() -> None:
    sim = simulate_dissolution(0, solute_mass_g=3.727634, water_volume_mL=99.871)
    flat = {f"{t}.{k}": v for t, tab in sim.run.items() if isinstance(tab, dict) for k, v in tab.items()}
    for name, true in sim.truth.inputs.items():
        assert value(flat[name]) == pytest.approx(true, abs=1e-12)
    assert value(sim.run["solute"]["mass"]) == 3.72763 and value(sim.run["water"]["volume"]) == 99.87
    assert value(sim.run["mixing_time"]) == sim.truth.t_m_s == 300.0


REQUIRED = {
    "dissolution": {"water": {"volume"}, "solute": {"formula", "mass"}, "calorimeter": {"heat_capacity"}},
    "neutralization": {
        "acid": {"formula", "concentration", "volume"},
        "base": {"formula", "concentration", "volume", "temperature"},
        "calorimeter": {"heat_capacity"},
    },
    "electrical-calibration": {"water": {"volume"}, "heater": {"voltage", "current", "duration"}},
    "mixing-calibration": {"water": {"volume"}, "warm_water": {"volume", "temperature"}},
    "reaction": {"solution": {"volume"}, "reaction": {"limiting_reagent"}, "calorimeter": {"heat_capacity"}},
}


@pytest.mark.parametrize("kind", KINDS)
def test_random_scenario_ranges_and_run_file(kind: str, tmp_path: Path) -> None:
    for seed in range(4):
        sim = random_scenario(kind, seed)
        t = sim.truth
        assert 1 <= t.tau_s_s <= 10 and 25 * 60 <= t.tau_h_s <= 120 * 60 and 5 <= t.calorimeter_heat_capacity_J_K <= 40
        assert 0.002 <= t.noise_K <= 0.02 and 0 <= t.phi <= 0.6 and 0.001 <= t.resolution_K <= 0.1
        assert abs(t.t_env_C - t.model.t_initial) <= 1.5 and 180 <= t.t_m_s <= 300
        slow = {"first-order": t.tau_r_s, "sphere": (t.t_d_s or 0) / 4, "finite": (t.t_d_s or 0) / 10}
        assert sim.time_s[-1] - t.t_m_s >= 10 * slow.get(t.release, 0.0) + 5 * t.tau_s_s + 300 - 2.1
        if kind == "neutralization":
            assert 2 <= t.tau_r_s <= 10
        if kind == "dissolution" and t.release == "first-order":
            assert 10 <= t.tau_r_s <= 120
        assert np.all(np.isfinite(sim.reading_C)) and np.all(np.diff(sim.time_s) > 0)
        path = write_run(sim, tmp_path, f"{kind}-{seed}")
        run = tomllib.loads(path.read_text(encoding="utf-8"))
        assert run["kind"] == kind and run["readings"] == f"{kind}-{seed}.csv"
        for table, keys in REQUIRED[kind].items():
            assert keys <= set(run[table])
        csv = path.with_suffix(".csv").read_text().splitlines()
        assert csv[0] == "time_s,temperature_C" and len(csv) == sim.time_s.size + 1
    again = random_scenario(kind, 3)
    assert np.array_equal(again.reading_C, random_scenario(kind, 3).reading_C)


def test_bad_input_gives_input_error() -> None:
    with pytest.raises(InputError, match="kind"):
        random_scenario("combustion", 1)
    with pytest.raises(InputError) as err:
        simulate_dissolution(1, formula="Xq9")
    assert err.value.field == "solute.formula"
    with pytest.raises(InputError):
        simulate_dissolution(1, dt=0.0)
    with pytest.raises(TypeError, match="tau_x"):
        simulate_dissolution(1, tau_x=3.0)  # type: ignore[call-arg]


def test_demo_set_is_what_the_generator_writes(tmp_path: Path) -> None:
    spec = importlib.util.spec_from_file_location("generate_demo", REPO / "fixtures" / "generate_demo.py")
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    written = module.main(tmp_path)
    demo = REPO / "fixtures" / "demo"
    kinds = set()
    for path in written:
        stored = demo / path.relative_to(tmp_path)
        assert stored.read_bytes() == path.read_bytes(), str(path.relative_to(tmp_path))
        if path.suffix == ".toml" and path.parent == tmp_path:
            run = tomllib.loads(path.read_text(encoding="utf-8"))
            kinds.add(run["kind"])
            rows = (path.parent / run["readings"]).read_text().splitlines()
            assert 450 <= len(rows) - 1 <= 900
    assert kinds == set(KINDS)


def test_non_positive_inputs_are_refused() -> None:
    with pytest.raises(InputError) as err:
        simulate_neutralization(1, base_volume_mL=-5.0)
    assert err.value.field == "volume_mL"
    with pytest.raises(InputError):
        simulate_dissolution(1, tau_s=-1.0)


def test_room_drift_matches_closed_form_and_ode() -> None:
    # Linear room drift T_env = T_room + β t: T = T∞ + β (t − 1/k) + c e^{−kt} solves dT/dt = k (T_env − T)
    # (first-order linear ODE, common practice, no source); the exact pieces must match DOP853 to 1e-6 K.
    sim = simulate_reaction(
        4, room_drift_K_per_h=1.0, release="sphere", tau_s=2.0, t_env_offset=1.0, p_stir_W=0.0, **QUIET
    )
    model = sim.truth.model
    assert model is not None
    k, beta = model.g_before / model.c_before, model.room_drift
    fore = sim.time_s < model.t_m
    t = sim.time_s[fore]
    c0 = model.t_initial - model.t_env + beta / k
    assert np.max(np.abs(sim.contents_C[fore] - (model.t_env + beta * (t - 1 / k) + c0 * np.exp(-k * t)))) < 1e-9
    contents, probe = model.solve(sim.time_s, method="ode")
    assert np.max(np.abs(contents - sim.contents_C)) < 1e-6
    assert np.max(np.abs(probe - sim.probe_C)) < 1e-6


def test_bench_artefacts_are_drawn_as_asked():
    # spikes, dropped rows, jittered stamps, correlated stirring noise and a run file without mixing_time
    from calc.simulation.realistic import realistic_scenario
    from calc.simulation.simulator import simulate_dissolution

    log: Any = {"fore_s": 200.0, "after_s": 800.0, "noise": 0.0, "resolution": 0.001}
    clean = simulate_dissolution(8, **log)
    sim = simulate_dissolution(8, **log, spikes=3, spike_K=1.0, drop_fraction=0.05, jitter_s=0.3, omit_mixing_time=True)
    assert "mixing_time" not in sim.run and "mixing_time" in clean.run
    assert 0.85 * clean.time_s.size < sim.time_s.size < clean.time_s.size  # about 5 % dropped
    off = np.abs(sim.time_s - np.round(sim.time_s))
    assert off.max() > 0.05 and off.max() <= 0.31  # stamps off the 1 s grid by up to 0.3 s
    wild = np.abs(sim.reading_C - np.interp(sim.time_s, clean.time_s, clean.reading_C)) > 0.4
    assert 3 <= wild.sum() <= 6  # three spikes, one or two readings wide
    # correlated stirring noise: φ = e^(−Δt/τ) sets the lag-1 autocorrelation of the noise
    corr = simulate_dissolution(9, fore_s=3000.0, after_s=60.0, noise=0.01, stir_tau_s=20.0, resolution=1e-6)
    e = corr.reading_C[:2900] - corr.probe_C[:2900]
    rho = float(np.corrcoef(e[:-1], e[1:])[0, 1])
    assert abs(rho - np.exp(-1 / 20.0)) < 0.03
    for q in (0.001, 0.01, 0.1):
        r = realistic_scenario("dissolution", 3, resolution=q, mixing_given=False)
        steps = r.reading_C / q
        assert np.allclose(steps, np.round(steps), atol=1e-6)
