"""Dissolution with an in-situ electrical calibration in the same log (calc.insitu).

The truth comes from the simulator's closed-form lumped model (calc.simulation.insitu); check values
are the simulated ΔH and the heat capacity of cup + final solution (energy balance
V·I·t = C·ΔT; common practice, no source). The wide-range trueness and coverage figures are
measured in tests/benchmarks/test_insitu_coverage.py.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from calc.analysis import analyze_run
from calc.cli.commands import cli
from calc.errors import InputError
from calc.simulation.insitu import simulate_dissolution_with_calibration
from calc.simulation.simulator import write_run


def run(tmp_path: Path, seed: int, **kw: float) -> tuple[Path, object]:
    sim = simulate_dissolution_with_calibration(seed, **kw)
    return write_run(sim, tmp_path, f"insitu{seed}"), sim


@pytest.mark.parametrize(
    ("seed", "kw"),
    [
        (1, {"noise": 0.0, "resolution": 0.0001}),
        (2, {"formula": "NH4NO3", "molar_enthalpy_kJ_mol": 25.7, "solute_mass_g": 5.0, "tau_r": 30.0}),
        (
            3,
            {
                "formula": "NaOH",
                "molar_enthalpy_kJ_mol": -44.5,
                "solute_mass_g": 2.0,
                "c_cal": 130.0,
                "t_env_offset": 1.0,
                "tau_h": 1800.0,
            },
        ),
    ],
)
def test_holds_the_true_enthalpy_and_heat_capacity(tmp_path: Path, seed: int, kw: dict) -> None:
    path, sim = run(tmp_path, seed, **kw)
    assert "mixture" not in path.read_text()  # no solution heat-capacity model is needed
    a = analyze_run(path, monte_carlo_trials=2000, seed=5)
    truth = sim.truth.molar_enthalpy_kJ_mol
    value, U = a.gum.values["molar_enthalpy"], a.gum.expanded_uncertainty
    assert abs(value - truth) <= U
    c, uc = a.gum.values["heat_capacity_total"], a.gum.uncertainties["heat_capacity_total"]
    assert abs(c - sim.truth.heat_capacity_final_J_K) <= 3 * uc
    if kw.get("noise") == 0.0:
        assert abs(value - truth) / abs(truth) < 0.003  # near noise-free: within 0.3 %
    assert a.monte_carlo is not None and a.monte_carlo.agrees
    # the two ΔT share the drift fits: their correlation is kept and reported
    corr = a.delta_t.construction.correlation
    assert corr[0][1] != 0.0 and abs(corr[0][1]) < 1.0 and corr[0][1] == pytest.approx(corr[1][0])


def test_json_and_text_report(tmp_path: Path) -> None:
    path, _ = run(tmp_path, 4)
    out = CliRunner().invoke(cli, ["analyze", "--json", "--monte-carlo", "0", str(path)])
    assert out.exit_code == 0, out.output
    rec = json.loads(out.output)
    assert rec["kind"] == "dissolution-with-calibration" and rec["molar_enthalpy"]["unit"] == "kJ/mol"
    assert rec["heat_capacity_total"]["unit"] == "J/K" and rec["heat_capacity_total"]["value"] > 0
    text = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(path)]).output
    assert "C (cup+contents)" in text and "heater: on at" in text


@pytest.mark.parametrize(
    ("edit", "field"),
    [
        (lambda s: s.replace('start = "', 'start = "9', 1), "heater.start"),
        (lambda s: 'method = "naive"\n' + s, "method"),
    ],
)
def test_bad_input_is_refused_in_one_line(tmp_path: Path, edit, field: str) -> None:  # noqa: ANN001
    path, _ = run(tmp_path, 6)
    path.write_text(edit(path.read_text()))
    with pytest.raises(InputError) as caught:
        analyze_run(path)
    assert caught.value.field == field
    out = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(path)])
    assert out.exit_code == 2 and len(out.output.strip().splitlines()) == 1


def test_heater_too_soon_after_the_dissolution_is_refused(tmp_path: Path) -> None:
    path, _ = run(tmp_path, 7, tau_r=60.0, gap_s=200.0)
    with pytest.raises(InputError) as caught:
        analyze_run(path)
    assert caught.value.field == "mixing_time" and "switch the heater on later" in caught.value.message


@pytest.mark.parametrize("pulses", ["before", "both"])
def test_calibration_before_and_on_both_sides(tmp_path: Path, pulses: str) -> None:
    """Without heat exchange the simulated log is exact for a pulse before the dissolution too.

    In the lumped model the dissolution's heat goes into C_final, so a pulse before it (which
    measures C_initial) gives ΔH·C_initial/C_final, and one pulse on each side their mean: the
    analysis must reproduce that energy balance (common practice, no source).
    """
    import math

    sim = simulate_dissolution_with_calibration(8, pulses=pulses, tau_h=math.inf, noise=0.001, resolution=0.0001)
    a = analyze_run(write_run(sim, tmp_path, pulses), with_reference=False)
    c_i, c_f = sim.truth.inputs["c_before_J_K"], sim.truth.heat_capacity_final_J_K
    expected = sim.truth.molar_enthalpy_kJ_mol * (c_i / c_f if pulses == "before" else 0.5 * (c_i + c_f) / c_f)
    assert a.gum.values["molar_enthalpy"] == pytest.approx(expected, rel=0.002)
    assert ("end" if pulses == "before" else "middle") in a.model.amount_note
    assert len(a.delta_t.construction.events) == (2 if pulses == "before" else 3)


def test_heater_measured_heat_capacity_is_checked_against_the_cup_type(tmp_path: Path) -> None:
    """A Dewar (about 130 J/K; common practice, no source) is implausible as foam cups, plausible as a Dewar."""
    path, _ = run(tmp_path, 9, c_cal=130.0, noise=0.002, resolution=0.001)
    a = analyze_run(path, with_reference=False)
    assert "calorimeter_heat_capacity" in {c.code for c in a.checks}
    found = next(c for c in a.checks if c.code == "calorimeter_heat_capacity")
    assert found.value == pytest.approx(130.0, abs=15.0)  # the water's c_p is taken as 4.18 J/(g K)
    path.write_text(path.read_text().replace("[calorimeter]\n", '[calorimeter]\ntype = "dewar"\n'))
    assert "calorimeter_heat_capacity" not in {c.code for c in analyze_run(path, with_reference=False).checks}
