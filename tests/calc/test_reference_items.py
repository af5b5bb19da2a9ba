"""Two reference-data items: the dilution term's model spread and hydrogen chloride gas.

Check values:
- φ_L of KCl at 1 mol/kg from wide-range models: −0.11 to −0.17 kJ/mol (the spread quoted in the
  project's issue tracker for later wide-range models; not re-checked against the papers here).
- GHS for hydrogen chloride (anhydrous): Press. Gas H280, Skin Corr. 1A H314, Acute Tox. 3 H331
  (EU CLP Annex VI harmonised classification, from memory).
"""

from __future__ import annotations

import pytest

from calc.refdata.dilution import phi_L
from calc.refdata.hazards import cautions_for


@pytest.mark.parametrize("wide_range", [True, False])
def test_interval_at_1_molal_kcl_holds_the_wide_range_models(wide_range: bool) -> None:
    # default: the wide-range table (docs/methods.md §4.6); False: the 25 °C Pitzer term with its
    # model-spread term
    r = phi_L("KCl", 1.0, 298.15, wide_range=wide_range)
    assert r is not None
    for published in (-0.11, -0.17):  # wide-range models (see module docstring)
        assert abs(r.value - published) <= 2.0 * r.u
    assert ("model-spread" in r.source) is not wide_range


@pytest.mark.parametrize("m", [0.5, 1.0])
def test_uncertainty_is_at_least_five_times_the_old_estimate(m: float) -> None:
    # the 25 °C Pitzer term (still used for salts without a wide-range table)
    r = phi_L("KCl", m, 298.15, wide_range=False)
    old = (max(0.03 * abs(r.value), 0.02) ** 2) ** 0.5  # the fit term alone, as before the spread term
    assert r.u >= 4.5 * old


def test_dilute_solutions_keep_their_small_uncertainty() -> None:
    r = phi_L("KCl", 0.05, 298.15)
    assert r is not None and r.u < 0.03


@pytest.mark.parametrize("name", ["HCl(g)", "HCl (g)", "hydrogen chloride gas"])
def test_hydrogen_chloride_gas_has_its_own_hazards(name: str) -> None:
    c = cautions_for([name])[0]
    codes = {h.split(":")[0] for h in c.hazard_statements}
    assert {"H280", "H331", "H314"} <= codes  # EU CLP harmonised classification (from memory)
    assert any(p.startswith("GHS04") for p in c.pictograms) and any(p.startswith("GHS06") for p in c.pictograms)


@pytest.mark.parametrize("name", ["HCl", "HCl(aq)"])
def test_hydrochloric_acid_is_not_a_gas_cylinder(name: str) -> None:
    c = cautions_for([name])[0]
    codes = {h.split(":")[0] for h in c.hazard_statements}
    assert "H280" not in codes and "H314" in codes
