"""Plausibility checks (calc.checks) on simulated runs with a known truth.

Check values:
- solubility of KCl in water: 34.2 g per 100 g at 20 °C, 37.2 at 30 °C (CRC Handbook, aqueous
  solubility table, from memory); 37.7 g in 100 mL of water at room temperature is above it.
- Dewar flask of 100–500 mL: about 100–200 J/K (common practice, no source); foam cups: a few tens of J/K.
- ΔT = −n ΔH / C (energy balance; common practice, no source).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from calc.analysis import analyze_run
from calc.checks import plausible_heat_capacity, solubility
from calc.cli.commands import cli
from calc.errors import InputError
from calc.simulation.scenarios import random_scenario
from calc.simulation.simulator import simulate_dissolution, simulate_electrical_calibration, write_run


def codes(a) -> set[str]:  # noqa: ANN001
    return {c.code for c in a.checks}


def test_solubility_table_holds_the_handbook_values() -> None:
    assert solubility("KCl", 20.0)[0] == pytest.approx(34.2)  # CRC Handbook (from memory)
    assert solubility("KCl", 25.0)[0] == pytest.approx(35.7)  # halfway between 34.2 and 37.2
    assert "CRC" in solubility("KCl", 20.0)[1]
    assert solubility("C6H12O6", 20.0) is None


def test_kcl_37_7_g_in_100_ml_is_flagged(tmp_path: Path) -> None:
    sim = simulate_dissolution(3, solute_mass_g=3.77)
    p = write_run(sim, tmp_path, "run")
    p.write_text(p.read_text().replace('mass = "3.77', 'mass = "37.7'))
    a = analyze_run(p, with_reference=False)
    found = {c.code: c for c in a.checks}
    assert found["solubility"].severity == "warning" and found["solubility"].value > 100.0
    # the ΔT of 3.77 g is about a tenth of what 37.7 g would give: the prediction check fires as well
    assert -92.0 < found["delta_t_expected"].value < -80.0


def test_checks_in_json_and_text(tmp_path: Path) -> None:
    sim = simulate_dissolution(4, solute_mass_g=3.77)
    p = write_run(sim, tmp_path, "run")
    p.write_text(p.read_text().replace('mass = "3.77', 'mass = "37.7'))
    out = CliRunner().invoke(cli, ["analyze", "--json", "--monte-carlo", "0", str(p)])
    record = json.loads(out.output)
    assert {c["code"] for c in record["checks"]} >= {"solubility", "delta_t_expected"}
    assert all(set(c) == {"code", "severity", "message", "value"} for c in record["checks"])
    text = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(p)]).output
    assert "plausibility checks:" in text and "[solubility]" in text


@pytest.mark.parametrize(
    "kind", ["dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction"]
)
def test_ordinary_runs_raise_no_check(tmp_path: Path, kind: str) -> None:
    for seed in range(6):
        sim = random_scenario(kind, 100 + seed)
        a = analyze_run(write_run(sim, tmp_path, f"r{seed}"), with_reference=False)
        truth = (
            sim.truth.molar_enthalpy_kJ_mol if a.main == "molar_enthalpy" else sim.truth.calorimeter_heat_capacity_J_K
        )
        off = abs(a.gum.values[a.main] - truth) > 3 * a.gum.uncertainties[a.main]
        assert off or not codes(a), (seed, [c.message for c in a.checks])


def test_a_dewar_is_plausible_when_its_type_is_given(tmp_path: Path) -> None:
    sim = simulate_electrical_calibration(7, c_cal=133.0, voltage_V=6.0, current_A=2.0, duration_s=200.0)
    p = write_run(sim, tmp_path, "dewar")
    assert "calorimeter_heat_capacity" in codes(analyze_run(p, with_reference=False))
    p.write_text(p.read_text().replace("[calorimeter]\n", '[calorimeter]\ntype = "dewar"\n'))
    a = analyze_run(p, with_reference=False)
    assert "calorimeter_heat_capacity" not in codes(a)
    assert a.gum.values["calorimeter_heat_capacity"] == pytest.approx(133.0, abs=3 * a.gum.uncertainties[a.main])
    low, high, _ = plausible_heat_capacity("dewar", 100.0)
    assert low <= 133.0 <= high


def test_unknown_calorimeter_type_is_refused_in_one_line(tmp_path: Path) -> None:
    p = write_run(simulate_electrical_calibration(8), tmp_path, "cal")
    p.write_text(p.read_text().replace("[calorimeter]\n", '[calorimeter]\ntype = "thermos"\n'))
    with pytest.raises(InputError) as caught:
        analyze_run(p)
    assert caught.value.field == "calorimeter.type" and "dewar" in caught.value.message
    out = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(p)])
    assert out.exit_code == 2 and len(out.output.strip().splitlines()) == 1


def test_a_calibration_far_from_the_history_is_flagged(tmp_path: Path) -> None:
    from calc.analysis import analyze_spec
    from calc.io.readings import read_readings
    from calc.io.runfile import load_run

    p = write_run(simulate_electrical_calibration(9, c_cal=30.0), tmp_path, "cal")
    spec = load_run(p)
    readings = read_readings(spec.readings_path)
    near = [(29.0, 2.0), (31.0, 2.0), (30.5, 2.0)]
    far = [(80.0, 2.0), (82.0, 2.0), (81.0, 2.0)]
    assert "calibration_history" not in codes(analyze_spec(spec, readings, history=near, with_reference=False))
    a = analyze_spec(spec, readings, history=far, with_reference=False)
    found = [c for c in a.checks if c.code == "calibration_history"]
    assert found and found[0].value > 3.0


def test_concentration_beyond_the_property_model(tmp_path: Path) -> None:
    sim = simulate_dissolution(10, formula="NH4Cl", molar_enthalpy_kJ_mol=14.8, solute_mass_g=3.0, water_volume_mL=15.0)
    p = write_run(sim, tmp_path, "conc")
    text = "\n".join(line for line in p.read_text().splitlines() if "specific_heat_capacity" not in line)
    p.write_text(text.replace("[mixture]\n", ""))
    a = analyze_run(p, with_reference=False)
    found = {c.code: c for c in a.checks}
    # 3 g in 15 mL of water: mass fraction 0.167, beyond the Laliberté c_p fit of NH4Cl (w ≤ 0.14,
    # the coefficients shipped with the thermo package); below NH4Cl's solubility (37 g per 100 g)
    assert found["concentration_range"].value == pytest.approx(3.0 / (3.0 + 15.0 * 0.998), abs=0.005)
    assert "solubility" not in found
