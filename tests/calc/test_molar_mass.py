"""Molar masses against the IUPAC standard atomic weights.

Check values are sums of the IUPAC abridged standard atomic weights (CIAAW/IUPAC 2021,
from memory): H 1.008, C 12.011, N 14.007, O 15.999, Na 22.990, S 32.06, Cl 35.45,
K 39.098, Cu 63.546. The abridged values carry 4–5 significant digits, hence the tolerance.
"""

from __future__ import annotations

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
