"""Planning a run: the prediction is checked against simulated runs analyzed end to end.

The simulator (calc.simulation.simulator) integrates the cup's heat balance with its own code and draws noisy,
quantised readings; calc.analysis then analyses the written run files exactly as `cupcal analyze`
does. The plan must predict the temperature change those runs show and the uncertainty the
analysis states for them.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner
from molmass import Formula

from calc.analysis import analyze_run
from calc.cli.commands import cli
from calc.errors import InputError
from calc.plan import plan_run
from calc.simulation.simulator import simulate_dissolution, simulate_neutralization, write_run
from tests.calc.plan_args import KCL_DISSOLUTION

T_ROOM = 294.65  # 21.5 °C
#: how the KCl runs are planned and then simulated: a reading a second, 180 s before mixing and 900 s after,
#: the salt releasing its heat over about 30 s and the probe following within 5 s
TIMING = {"interval": 1.0, "fore": 180.0, "after": 900.0, "release_time": 30.0, "probe_time": 5.0}


def _kcl_plan(mass: float = 3.7, u_cal: float = 2.0, q: float = 0.01, sigma: float = 0.005, **kw):
    return plan_run(
        "dissolution",
        formula="KCl",
        mass=f"{mass} ± 0.0002 g",
        water_volume="100.0 ± 0.1 mL",
        calorimeter_heat_capacity=f"15.0 ± {u_cal} J/K",
        thermometer_resolution=q,
        thermometer_noise=sigma,
        **{"temperature": T_ROOM, **TIMING, **kw},
    )


def _simulated_dissolutions(plan, tmp_path, *, mass, u_cal, q, sigma, runs):
    """Simulate ``runs`` runs at the planned settings (stated inputs perturbed), analyze each."""
    rho = plan.properties.values["water.density"]
    cp = plan.properties.values["mixture.specific_heat_capacity"]
    out = []
    for seed in range(runs):
        # where the level sits within a resolution step is a matter of chance: draw it
        t0 = T_ROOM - 273.15 + float(np.random.default_rng(100 + seed).uniform(0, q))
        sim = simulate_dissolution(
            seed,
            formula="KCl",
            molar_enthalpy_kJ_mol=plan.predicted_result,
            solute_mass_g=mass,
            water_volume_mL=100.0,
            tau_r=TIMING["release_time"],
            water_density=rho[0],
            mixture_cp=cp[0],
            c_cal=15.0,
            tau_s=TIMING["probe_time"],
            t_initial_C=t0,
            noise=sigma,
            resolution=q,
            fore_s=TIMING["fore"],
            after_s=TIMING["after"],
            dt=TIMING["interval"],
            perturb_inputs=True,
            uncertainties={
                "volume_mL": 0.1,
                "mass_g": 0.0002,
                "c_cal_J_K": u_cal,
                "cp_J_gK": cp[1],
                "density_g_mL": rho[1],
            },
        )
        a = analyze_run(write_run(sim, tmp_path, f"r{seed:02d}"), with_reference=False)
        # the plan does not predict the room-drift line (it does not know the cup's exchange constant,
        # docs/methods.md §8.5), so the stated u is also taken without it for the comparison
        room = sum(b.share for b in a.gum.budget if b.name == "delta_t.model")
        out.append(
            (
                sim.truth.delta_t_adiabatic,
                a.delta_t.value,
                a.gum.values["molar_enthalpy"],
                a.gum.uncertainties["molar_enthalpy"] * (1.0 - room) ** 0.5,
            )
        )
    return np.array(out)


def test_plan_predicts_simulated_dissolution_runs_analyzed_end_to_end(tmp_path):
    # Tolerances: the true adiabatic ΔT of the simulator within 0.3 % (same heat capacities, so
    # only the model chain differs); the mean analyzed ΔT within 1 % (the Regnault–Pfaundler bias
    # is ≤ 0.05 %, docs/methods.md §2.3); the mean stated u(ΔH) within 15 % (same GUM model; only the
    # predicted ΔT terms differ); the scatter of the 16 results within a factor 0.6–1.6 of the
    # predicted u (an SD from 16 values is itself uncertain by about 18 %, so ±2 SE).
    plan = _kcl_plan()
    r = _simulated_dissolutions(plan, tmp_path, mass=3.7, u_cal=2.0, q=0.01, sigma=0.005, runs=16)
    assert r[:, 0].mean() == pytest.approx(plan.predicted_delta_t, rel=0.003)
    assert r[:, 1].mean() == pytest.approx(plan.predicted_delta_t, rel=0.01)
    assert r[:, 3].mean() == pytest.approx(plan.predicted_u, rel=0.15)
    assert 0.6 <= r[:, 2].std(ddof=1) / plan.predicted_u <= 1.6
    assert plan.limiting == "calorimeter heat capacity (its calibration)"


def test_plan_predicts_a_thermometer_limited_run(tmp_path):
    # A coarse thermometer (q = 0.05 K, σ = 0.01 K) and a well-known calorimeter: the resolution
    # limits the result. The analysis credits the after drift's sweep through steps and carries
    # the slope floors through its own fit (docs/methods.md §8.2); the plan knows neither the room
    # temperature nor the exchange constant, so it cannot foresee that sweep and stays cautious:
    # the stated u(ΔH) is 0.65–1.1 of the plan's (0.71 measured, 0.77 before the slope floors went
    # through the fit). The results must not scatter more than the plan says.
    plan = _kcl_plan(mass=1.9, u_cal=0.2, q=0.05, sigma=0.01)
    assert plan.limiting == "thermometer resolution"
    r = _simulated_dissolutions(plan, tmp_path, mass=1.9, u_cal=0.2, q=0.05, sigma=0.01, runs=12)
    assert r[:, 1].mean() == pytest.approx(plan.predicted_delta_t, rel=0.01)
    assert 0.65 * plan.predicted_u <= r[:, 3].mean() <= 1.1 * plan.predicted_u
    assert r[:, 2].std(ddof=1) <= 1.2 * plan.predicted_u


def test_plan_predicts_simulated_neutralization_runs(tmp_path):
    # Same tolerances as for dissolution; 10 runs (the scatter ratio then within 0.5–1.7).
    plan = plan_run(
        "neutralization",
        acid="HCl",
        base="NaOH",
        acid_concentration="1.000 ± 0.005 mol/L",
        base_concentration="1.050 ± 0.005 mol/L",
        acid_volume="50.0 ± 0.1 mL",
        base_volume="50.0 ± 0.1 mL",
        calorimeter_heat_capacity="15.0 ± 2.0 J/K",
        thermometer_resolution=0.01,
        thermometer_noise=0.005,
        temperature=T_ROOM,
        interval=1.0,
        fore=180.0,
        after=600.0,
        release_time=4.0,
    )
    pr = plan.properties.values
    u_tb = float(plan.budget[[b.name for b in plan.budget].index("base.temperature")].standard_uncertainty)
    out = []
    for seed in range(10):
        sim = simulate_neutralization(
            seed,
            molar_enthalpy_kJ_mol=plan.predicted_result,
            acid_concentration=1.0,
            base_concentration=1.05,
            acid_volume_mL=50.0,
            base_volume_mL=50.0,
            acid_density=pr["acid.density"][0],
            base_density=pr["base.density"][0],
            mixture_cp=pr["mixture.specific_heat_capacity"][0],
            base_temperature_offset=0.0,
            tau_r=4.0,
            c_cal=15.0,
            tau_s=5.0,
            t_initial_C=21.5 + float(np.random.default_rng(100 + seed).uniform(0, 0.01)),
            noise=0.005,
            resolution=0.01,
            fore_s=180.0,
            after_s=600.0,
            dt=1.0,
            perturb_inputs=True,
            uncertainties={
                "volume_mL": 0.1,
                "concentration_mol_L": 0.005,
                "c_cal_J_K": 2.0,
                "cp_J_gK": pr["mixture.specific_heat_capacity"][1],
                "density_g_mL": pr["acid.density"][1],
                "temperature_K": u_tb,
            },
        )
        a = analyze_run(write_run(sim, tmp_path, f"n{seed:02d}"), with_reference=False)
        out.append(
            (
                sim.truth.delta_t_from_contents,
                a.delta_t.value,
                a.gum.values["molar_enthalpy"],
                a.gum.uncertainties["molar_enthalpy"],
            )
        )
    r = np.array(out)
    assert plan.predicted_delta_t > 6.0  # exothermic: about 6.6 K for 1 mol/L, 50 + 50 mL
    assert r[:, 0].mean() == pytest.approx(plan.predicted_delta_t, rel=0.003)
    assert r[:, 1].mean() == pytest.approx(plan.predicted_delta_t, rel=0.01)
    assert r[:, 3].mean() == pytest.approx(plan.predicted_u, rel=0.15)
    assert 0.5 <= r[:, 2].std(ddof=1) / plan.predicted_u <= 1.7


def test_plan_uses_the_heat_balance_and_the_reference_value():
    plan = _kcl_plan(mass=3.7)
    rho = plan.properties.values["water.density"][0]
    cp = plan.properties.values["mixture.specific_heat_capacity"][0]
    n = 3.7 / Formula("KCl").mass  # molar mass from the molmass package
    c_total = (100.0 * rho + 3.7) * cp + 15.0
    # heat balance (docs/methods.md §4.1): ΔH = −C_total ΔT / n
    assert plan.predicted_delta_t == pytest.approx(-n * plan.predicted_result * 1000 / c_total, rel=1e-9)
    # the calorimeter's line: ∂ΔH/∂C_cal · u(C_cal) = |ΔH| u(C_cal)/C_total
    line = next(b for b in plan.budget if b.name == "calorimeter.heat_capacity")
    assert line.contribution == pytest.approx(abs(plan.predicted_result) * 2.0 / c_total, rel=1e-6)
    # KCl(s): +17.58 kJ/mol at 0.111 mol/kg and 25 °C (docs/methods.md §7.2, from memory)
    at_ref = _kcl_plan(mass=0.8275, q=0.001, temperature=298.15)
    assert at_ref.predicted_result == pytest.approx(17.58, abs=0.05)


def test_a_too_small_amount_gets_a_suggestion_that_simulation_confirms(tmp_path):
    plan = _kcl_plan(mass=0.5)
    assert abs(plan.predicted_delta_t) < 1.0
    assert any("below the useful window" in w for w in plan.warnings)
    s = plan.suggestion
    assert s is not None and s.quantity == "solute.mass" and s.low < s.recommended < s.high
    sim = simulate_dissolution(
        0,
        formula="KCl",
        molar_enthalpy_kJ_mol=17.2,
        solute_mass_g=s.recommended,
        water_volume_mL=100.0,
        c_cal=15.0,
        noise=0.0,
        resolution=0.0001,
    )
    assert plan.window[0] <= abs(sim.truth.delta_t_adiabatic) <= plan.window[1]
    assert abs(_kcl_plan(mass=s.recommended).predicted_delta_t) == pytest.approx(abs(s.predicted_delta_t), rel=1e-4)


def test_a_hot_dissolution_is_flagged_with_the_cautions():
    # NaOH(s): ΔsolH about −44.5 kJ/mol (docs/methods.md §7.2); GHS: H314, corrosive (from memory)
    plan = plan_run(
        "dissolution",
        formula="NaOH",
        mass="10.00 ± 0.01 g",
        water_volume="100.0 ± 0.1 mL",
        calorimeter_heat_capacity="15 ± 2 J/K",
        thermometer_resolution=0.01,
        temperature=T_ROOM,
    )
    assert plan.predicted_delta_t > 10.0
    assert any(w.startswith("HOT") for w in plan.warnings)
    naoh = next(c for c in plan.cautions if c.substance.startswith("NaOH"))
    assert any(h.startswith("H314") for h in naoh.hazard_statements)
    assert plan.cautions[-1].substance == "general" and "eye protection" in plan.cautions[-1].note
    assert plan.suggestion is not None and plan.suggestion.recommended < 10.0
    assert abs(plan.suggestion.predicted_delta_t) <= 10.0


def test_the_limiting_equipment_follows_the_largest_share():
    coarse = _kcl_plan(mass=1.0, u_cal=0.5, q=0.1, sigma=0.002)
    assert coarse.limiting == "thermometer resolution"
    assert coarse.equipment[0].share == pytest.approx(
        # the resolution enters the start and end levels and (a floor on) the drift slopes
        sum(b.share for b in coarse.budget if b.name.startswith(("delta_t.resolution", "delta_t.drift_resolution")))
    )
    assert any("10 × the thermometer resolution" in w for w in coarse.warnings)
    assert coarse.window == (2.0, 10.0)  # 20 × 0.1 K
    poor_cal = _kcl_plan(u_cal=10.0)
    assert poor_cal.limiting.startswith("calorimeter")
    assert any("more than 20 %" in w for w in poor_cal.warnings)


#: a dissolution plan_run accepts but for its molar enthalpy (it has no reference value for glucose)
GLUCOSE = dict(
    formula="C6H12O6",
    mass="3.00 ± 0.01 g",
    water_volume="100.0 ± 0.1 mL",
    calorimeter_heat_capacity="15 ± 2 J/K",
    thermometer_resolution=0.01,
)


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({}, "molar_enthalpy"),
        ({"formula": "KCl", "mass": "3 mL"}, "mass"),
        ({"formula": "KCl", "thermometer_resolution": -0.01}, "thermometer_resolution"),
    ],
    ids=["no-reference-enthalpy", "mass-in-mL", "negative-resolution"],
)
def test_plan_errors_name_the_input(change, field):
    with pytest.raises(InputError) as err:
        plan_run("dissolution", **{**GLUCOSE, **change})
    assert err.value.field == field


def test_plan_takes_a_molar_enthalpy_it_has_no_reference_for():
    given = plan_run("dissolution", **GLUCOSE, molar_enthalpy=11.0)
    assert given.predicted_result == pytest.approx(11.0)


def test_plan_refuses_a_kind_it_cannot_plan():
    with pytest.raises(InputError, match="cannot plan"):
        plan_run("titration", calorimeter_heat_capacity="15 ± 2 J/K", thermometer_resolution=0.01)


EXAMPLE = [*KCL_DISSOLUTION, "--noise", "0.005 K", "--balance", "0.0002 g", "--glassware", "0.1 mL"]


def test_cli_plan_prints_the_prediction_and_the_limiting_equipment():
    res = CliRunner().invoke(cli, EXAMPLE)
    assert res.exit_code == 0, res.output
    assert "predicted ΔT" in res.output and "limited by:" in res.output and "safety:" in res.output
    rec = json.loads(CliRunner().invoke(cli, [*EXAMPLE, "--json"]).output)
    assert rec["predicted_delta_t"]["unit"] == "K" and rec["predicted_delta_t"]["value"] < 0
    assert rec["limiting"] == rec["equipment"][0]["equipment"]
    assert math.isclose(sum(b["share"] for b in rec["budget"]), 1.0, rel_tol=1e-9)


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--mass", "3.0 mL"], "--mass"),
        (["--resolution", "fine"], "--resolution"),
        (["--temperature", "22"], "--temperature"),
        (["--formula", "Xq"], "--formula"),
    ],
)
def test_cli_plan_errors_are_one_line_with_exit_2(args, needle):
    argv = list(EXAMPLE)
    for flag, value in zip(args[::2], args[1::2]):
        if flag in argv:
            argv[argv.index(flag) + 1] = value
        else:
            argv += [flag, value]
    res = CliRunner().invoke(cli, argv)
    assert res.exit_code == 2
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0] and "Traceback" not in res.output


# ----------------------------------------------------------------- every kind is planned


def _props(plan, key):
    return plan.properties.values[key][0]


def test_plan_an_electrical_calibration_by_joules_law():
    # Joule heating Q = U·I·t and the heat balance Q = (m c + C_cal) ΔT (common practice, no source)
    plan = plan_run(
        "electrical-calibration",
        calorimeter_heat_capacity="20 ± 5 J/K",
        thermometer_resolution=0.01,
        water_volume="100.0 ± 0.1 mL",
        temperature=T_ROOM,
        kind_inputs=dict(
            heater_voltage="5.00 ± 0.01 V", heater_current="1.000 ± 0.002 A", heater_duration="120.0 ± 0.2 s"
        ),
    )
    m_c = 100.0 * _props(plan, "water.density") * _props(plan, "mixture.specific_heat_capacity")
    assert plan.predicted_result == pytest.approx(20.0, rel=1e-6)
    assert plan.predicted_delta_t == pytest.approx(5.0 * 1.0 * 120.0 / (m_c + 20.0), rel=1e-6)
    assert plan.result_unit == "J/K" and "heater.duration" in plan.suggestion.quantity


def test_plan_a_mixing_calibration_by_the_first_law():
    # warm water gives up what the cool water and the cup take up (common practice, no source)
    plan = plan_run(
        "mixing-calibration",
        calorimeter_heat_capacity="20 ± 5 J/K",
        thermometer_resolution=0.01,
        water_volume="50.0 ± 0.1 mL",
        temperature=T_ROOM,
        kind_inputs=dict(warm_volume="50.0 ± 0.1 mL", warm_temperature="45.00 ± 0.05 degC"),
    )
    dT = plan.predicted_delta_t
    assert 9.0 < dT < 12.0 and plan.predicted_result == pytest.approx(20.0, rel=1e-6)
    # the cool side at T_ROOM rises by ΔT, the warm water falls from 45 °C to T_ROOM + ΔT: water's c within 0.3 %
    warm_drop = 45.0 + 273.15 - (T_ROOM + dT)
    ratio = (50.0 * warm_drop) / (50.0 * dT + 20.0 / 4.18 * dT)
    assert ratio == pytest.approx(1.0, rel=0.01)


def test_plan_a_reaction_with_a_given_enthalpy():
    # Mg + 2 H+ → Mg2+ + H2: ΔrH ≈ −466 kJ/mol (from memory); n = m / M with M from the molmass package
    plan = plan_run(
        "reaction",
        calorimeter_heat_capacity="20 ± 3 J/K",
        thermometer_resolution=0.01,
        water_volume="100.0 ± 0.1 mL",
        formula="Mg",
        mass="0.1000 ± 0.0002 g",
        molar_enthalpy=-466.0,
        temperature=T_ROOM,
    )
    n = 0.1 / Formula("Mg").mass
    c_total = 100.0 * _props(plan, "solution.density") * _props(plan, "mixture.specific_heat_capacity") + 20.0
    assert plan.predicted_delta_t == pytest.approx(n * 466.0e3 / c_total, rel=1e-6)
    assert any("Mg" in c.substance for c in plan.cautions)
    with pytest.raises(InputError) as exc:
        plan_run(
            "reaction",
            calorimeter_heat_capacity="20 ± 3 J/K",
            thermometer_resolution=0.01,
            water_volume="100.0 mL",
            formula="Mg",
            mass="0.1 g",
        )
    assert exc.value.field == "molar_enthalpy"


@pytest.mark.parametrize(
    "args",
    [
        [
            "electrical-calibration",
            "--water",
            "100 mL",
            "--heater-voltage",
            "5.00 V",
            "--heater-current",
            "1.000 A",
            "--heater-time",
            "120 s",
        ],
        ["mixing-calibration", "--water", "50 mL", "--warm-volume", "50 mL", "--warm-temperature", "45.0 degC"],
        ["reaction", "--formula", "Mg", "--mass", "0.1000 g", "--water", "100 mL", "--enthalpy", "-466 kJ/mol"],
    ],
)
def test_cli_plans_every_kind(args):
    r = CliRunner().invoke(cli, ["plan", *args, "--calorimeter", "20 ± 3 J/K", "--resolution", "0.01 K"])
    assert r.exit_code == 0, r.output
    assert "predicted ΔT" in r.output and "planned run file" in r.output
    r = CliRunner().invoke(cli, ["plan", args[0], "--calorimeter", "20 ± 3 J/K", "--resolution", "0.01 K"])
    assert r.exit_code == 2 and "--" in r.output and "Traceback" not in r.output
