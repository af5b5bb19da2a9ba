"""Run-file validation: every bad field is named with what was expected."""

from __future__ import annotations

import pytest

from calc.errors import InputError
from calc.io.runfile import parse_run
from tests.calc.run_texts import NEUT

GOOD = """
kind = "dissolution"
readings = "readings.csv"
mixing_time = "180.0 s"
[calorimeter]
heat_capacity = "35.0 ± 2.0 J/K"
[thermometer]
resolution = "0.01 K"
[water]
volume = "100.00 ± 0.08 mL"
density = "0.9970 ± 0.0005 g/mL"
[solute]
formula = "KCl"
mass = "3.7276 ± 0.0002 g"
[mixture]
specific_heat_capacity = "4.160 ± 0.010 J/(g*K)"
"""


def test_the_documented_example_parses():
    spec = parse_run(GOOD, source="run.toml")
    assert spec.kind == "dissolution"
    assert spec.get("water", "volume").m_as("mL") == pytest.approx(100.0)
    assert spec.get("water", "volume").u_as("mL") == pytest.approx(0.08)
    assert spec.mixing_time.m_as("s") == pytest.approx(180.0)
    assert spec.resolution_K == pytest.approx(0.01)


def _bad(text, field_name, words):
    with pytest.raises(InputError) as e:
        parse_run(text, source="run.toml")
    msg = str(e.value)
    assert "run.toml" in msg
    if field_name:
        assert field_name in msg, msg
    for w in words:
        assert w in msg, msg
    return msg


def test_wrong_dimension_names_field_and_expectation():
    _bad(GOOD.replace('volume = "100.00 ± 0.08 mL"', 'volume = "100.00 ± 0.08 g"'), "water.volume", ["volume"])


def test_missing_field_is_named():
    _bad(GOOD.replace('mass = "3.7276 ± 0.0002 g"\n', ""), "solute.mass", ["missing"])


def test_missing_section_is_named():
    text = GOOD.split("[solute]")[0] + '[mixture]\nspecific_heat_capacity = "4.16 J/(g*K)"\n'
    _bad(text, "solute", ["missing section"])


def test_unknown_field_is_rejected():
    _bad(GOOD.replace("[water]\n", '[water]\ncolour = "blue"\n'), "water.colour", ["unknown field"])


def test_unknown_section_and_top_level_field_are_rejected():
    _bad(GOOD + '\n[lid]\nmass = "2 g"\n', "lid", ["unknown section"])
    _bad('stirrer = "fast"\n' + GOOD, "stirrer", ["unknown field"])


def test_unknown_kind_lists_the_kinds():
    _bad(GOOD.replace('"dissolution"', '"combustion"'), "kind", ["neutralization", "electrical-calibration"])


def test_invalid_toml_gives_the_line():
    with pytest.raises(InputError) as e:
        parse_run(GOOD.replace("[water]", "[water"), source="run.toml")
    assert e.value.line is not None


def test_reaction_needs_amount_or_mass():
    text = """
kind = "reaction"
readings = "r.csv"
[calorimeter]
heat_capacity = "20 ± 2 J/K"
[thermometer]
resolution = "0.01 K"
[solution]
volume = "100.0 ± 0.1 mL"
[reaction]
coefficient = 1
"""
    _bad(text, "reaction.amount", ["either amount"])


def test_neutralization_base_needs_its_temperature():
    text = NEUT.replace('temperature = "22.50 ± 0.05 degC"\n', "")
    assert "temperature" not in text
    _bad(text, "base.temperature", ["missing"])


def test_value_without_uncertainty_gets_half_a_last_digit_rectangular():
    spec = parse_run(GOOD.replace('"100.00 ± 0.08 mL"', '"100.0 mL"'), source="run.toml")
    v = spec.get("water", "volume")
    # half a unit of the last digit (0.1 mL) as a rectangular half-width: 0.05/√3 = 0.0289 mL
    assert v.u_as("mL") == pytest.approx(0.05 / 3**0.5)
    assert v.distribution == "rectangular"


def test_purity_in_percent_is_a_mass_fraction(tmp_path):
    # "%" is a unit: 99.5 % = 0.995 (SI Brochure, 9th ed.: % = 0.01); the model uses the fraction
    text = GOOD.replace("[solute]\n", '[solute]\npurity = "99.5 ± 0.2 %"\n', 1)
    spec = parse_run(text, source="run.toml")
    purity = spec.sections["solute"]["purity"]
    assert purity.m_as("") == pytest.approx(0.995) and purity.u_as("") == pytest.approx(0.002)
    bad = GOOD.replace("[solute]\n", '[solute]\npurity = "120 %"\n', 1)
    with pytest.raises(InputError) as exc:
        parse_run(bad, source="run.toml")
    assert exc.value.field == "solute.purity"


def test_text_fields_have_length_limits(tmp_path):
    text = GOOD + '[info]\ntitle = "' + "t" * 96000 + '"\n'
    with pytest.raises(InputError) as exc:
        parse_run(text, source="run.toml")
    assert exc.value.field == "info.title" and "96,000 characters" in str(exc.value) and "300" in str(exc.value)
