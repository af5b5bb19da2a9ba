"""End-to-end analysis: property defaults, reference comparison and cautions in the report."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from calc.analysis import analyze_run
from calc.errors import InputError
from calc.report import format_report

DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo"


def _copy(tmp_path: Path, name: str) -> Path:
    for ext in (".toml", ".csv"):
        shutil.copy(DEMO / f"{name}{ext}", tmp_path / f"{name}{ext}")
    return tmp_path / f"{name}.toml"


def test_missing_properties_come_from_the_models_and_are_recorded(tmp_path):
    path = _copy(tmp_path, "diss-kcl-01")
    explicit = analyze_run(path)
    text = path.read_text()
    text = re.sub(r'density = "[^"]*"\n', "", text)
    text = re.sub(r'\[mixture\]\nspecific_heat_capacity = "[^"]*"\n', "", text)
    path.write_text(text)
    modelled = analyze_run(path)
    src = {k: v[3] for k, v in modelled.properties.values.items()}
    assert "IAPWS-95" in src["water.density"]
    assert "Laliberté" in src["mixture.specific_heat_capacity"]
    # The demo states c_p of 0.5 mol/kg KCl(aq); the Laliberté value must agree within the
    # stated uncertainties (3e-3 relative for the model), so ΔH agrees within ~0.5 %.
    h1 = explicit.gum.values["molar_enthalpy"]
    h2 = modelled.gum.values["molar_enthalpy"]
    assert abs(h2 - h1) / h1 < 0.005
    assert "properties not in the run file" in format_report(modelled, str(path))


def test_report_compares_with_the_reference_and_shows_ghs_cautions():
    a = analyze_run(DEMO / "neut-hcl-naoh-01.toml", monte_carlo_trials=0)
    out = format_report(a, "neut.toml")
    # HCl + NaOH: ΔrH° = −55.8 kJ/mol at infinite dilution (NBS tables 1982, from memory)
    assert a.comparison is not None
    assert a.comparison.reference.value == pytest.approx(-55.8, abs=0.1)
    assert "E_n =" in out and "verdict against the reference" in out
    # NaOH is classified H314 (severe skin burns and eye damage) under GHS/CLP (from memory)
    assert "H314" in out and "GHS05" in out
    assert out.lower().count("wear eye protection") == 1


def test_unknown_reference_name_is_an_input_error_naming_the_field(tmp_path):
    path = _copy(tmp_path, "diss-kcl-01")
    path.write_text(path.read_text() + '\n[reference]\nname = "no such reference"\n')
    with pytest.raises(InputError) as e:
        analyze_run(path)
    assert "reference.name" in str(e.value)


def test_mixing_time_is_detected_when_absent(tmp_path):
    path = _copy(tmp_path, "diss-kcl-01")
    path.write_text(re.sub(r'mixing_time = "[^"]*"\n', "", path.read_text()))
    a = analyze_run(path)
    assert a.periods.mixing_time_detected
    assert abs(a.periods.mixing_time - 240.0) <= 10.0  # the demo's true mixing time (invented data)


def test_a_purity_in_percent_gives_the_same_result_as_the_fraction(tmp_path):
    # 99.5 % and 0.995 are the same mass fraction (SI Brochure, 9th ed.: % = 0.01)
    out = {}
    for name, purity in (("pct", "99.5 ± 0.2 %"), ("frac", "0.995 ± 0.002")):
        folder = tmp_path / name
        folder.mkdir()
        for ext in (".toml", ".csv"):
            shutil.copy(DEMO / f"diss-kcl-01{ext}", folder / f"diss-kcl-01{ext}")
        toml = folder / "diss-kcl-01.toml"
        toml.write_text(
            toml.read_text(encoding="utf-8").replace("[solute]\n", f'[solute]\npurity = "{purity}"\n', 1),
            encoding="utf-8",
        )
        a = analyze_run(toml, monte_carlo_trials=0)
        out[name] = (a.gum.values["molar_enthalpy"], a.gum.uncertainties["molar_enthalpy"])
    assert out["pct"][0] == pytest.approx(out["frac"][0], rel=1e-12)
    assert out["pct"][1] == pytest.approx(out["frac"][1], rel=1e-9)
