"""Molar masses against the IUPAC standard atomic weights.

Check values are sums of the IUPAC abridged standard atomic weights (CIAAW/IUPAC 2021,
from memory): H 1.008, C 12.011, N 14.007, O 15.999, Na 22.990, S 32.06, Cl 35.45,
K 39.098, Cu 63.546. The abridged values carry 4–5 significant digits, hence the tolerance.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from calc.errors import InputError
from calc.refdata.formula import element_counts, molar_mass


@pytest.mark.parametrize(
    "formula, expected",
    [
        ("KCl", 39.098 + 35.45),
        ("NaCl", 22.990 + 35.45),
        ("H2O", 2 * 1.008 + 15.999),
        ("NH4NO3", 2 * 14.007 + 4 * 1.008 + 3 * 15.999),
        ("C12H22O11", 12 * 12.011 + 22 * 1.008 + 11 * 15.999),  # sucrose
        ("CuSO4.5H2O", 63.546 + 32.06 + 4 * 15.999 + 5 * (2 * 1.008 + 15.999)),
        ("CuSO4·5H2O", 63.546 + 32.06 + 4 * 15.999 + 5 * (2 * 1.008 + 15.999)),
        ("(HOCH2)3CNH2", 4 * 12.011 + 11 * 1.008 + 14.007 + 3 * 15.999),  # TRIS
    ],
)
def test_molar_mass_matches_iupac_standard_atomic_weights(formula, expected):
    assert molar_mass(formula) == pytest.approx(expected, abs=0.01)


def test_element_counts_of_a_hydrate():
    assert element_counts("CuSO4.5H2O") == {"Cu": 1, "S": 1, "O": 9, "H": 10}


@pytest.mark.parametrize("bad", ["", "Xx2", "K(Cl", "3.7 g"])
def test_bad_formula_names_the_field(bad):
    with pytest.raises(InputError) as e:
        molar_mass(bad, field="solute.formula", source="run.toml")
    assert "solute.formula" in str(e.value)


# One formula module: every hydrate dot people write reads the same (issue: "CuSO4•5H2O" passed the run
# file's check and then failed inside the analysis). Check value: CuSO4·5H2O, 249.69 g/mol from the IUPAC
# standard atomic weights (Cu 63.546, S 32.06, O 15.999, H 1.008; from memory).
@pytest.mark.parametrize(
    "text", ["CuSO4.5H2O", "CuSO4·5H2O", "CuSO4•5H2O", "CuSO4∙5H2O", "CuSO4⋅5H2O", "CuSO4*5H2O", " CuSO4.5H2O "]
)
def test_every_hydrate_dot_reads_the_same(text):
    from calc.refdata.formula import element_composition, split_hydrate

    assert molar_mass(text) == pytest.approx(249.69, abs=0.02)
    assert split_hydrate(text) == ("CuSO4", 5)
    assert dict(element_composition(text)) == {"Cu": 1, "S": 1, "O": 9, "H": 10}


def test_a_bullet_hydrate_is_analyzed_end_to_end(tmp_path):
    # the same run twice, with "." and with "•": the same result, no parser diagram, no error
    from calc.analysis import analyze_run

    demo = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
    text = (demo / "diss-kcl-01.toml").read_text(encoding="utf-8")
    (tmp_path / "diss-kcl-01.csv").write_bytes((demo / "diss-kcl-01.csv").read_bytes())
    results = []
    for name, formula in (("dot", "CuSO4.5H2O"), ("bullet", "CuSO4•5H2O")):
        run = tmp_path / f"{name}.toml"
        run.write_text(text.replace('formula = "KCl"', f'formula = "{formula}"'), encoding="utf-8")
        gum = analyze_run(run, monte_carlo_trials=0).gum
        results.append(gum.values[gum.main])
    assert results[0] == pytest.approx(results[1], rel=1e-12)


def test_an_unreadable_formula_names_its_field():
    from calc.errors import InputError
    from calc.refdata.formula import split_hydrate

    with pytest.raises(InputError, match="solute.formula"):
        molar_mass("CuSO4..H2O)", field="solute.formula")
    with pytest.raises(InputError, match="solute.formula"):
        split_hydrate("CuSO4.5NaCl", field="solute.formula")
