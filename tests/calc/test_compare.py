"""Comparison of a result with a reference value (ISO 13528 E_n).

Check values: ISO 13528 definitions (as summarized in docs/methods.md §6.1), docs/methods.md §3.3
and §4.6, SRM 1655 (Kilday 1980, from memory).
"""

from __future__ import annotations

import math

import pytest

from calc.errors import InputError
from calc.refdata.comparison import compare
from calc.refdata.neutralization import neutralization_reference
from calc.refdata.reference import find_reference, solution_enthalpy
from calc.refdata.reference_value import ReferenceValue


def _ref(value: float = 10.0, u: float = 0.5, **kw) -> ReferenceValue:
    base = dict(
        name="test",
        quantity="q",
        value=value,
        u=u,
        unit="kJ/mol",
        temperature_K=298.15,
        molality=None,
        source="invented for the test",
    )
    base.update(kw)
    return ReferenceValue(**base)


def test_en_follows_iso_13528() -> None:
    # E_n = (x - x_ref) / sqrt(U^2 + U_ref^2), U_ref = 2 u_ref; |E_n| <= 1 satisfactory.
    ref = _ref(10.0, 0.5, formula=None, conditions="invented")
    c = compare(11.0, 1.0, ref, molality=None, T_K=298.15)
    assert c.difference == pytest.approx(1.0)
    assert c.relative_difference == pytest.approx(0.1)
    assert c.En == pytest.approx(1.0 / math.sqrt(1.0 + 1.0))
    assert c.satisfactory
    assert c.U_reference == pytest.approx(1.0)
    assert not compare(13.0, 1.0, ref, molality=None, T_K=298.15).satisfactory
    # The boundary |E_n| = 1 is satisfactory.
    edge_ref = _ref(10.0, 0.4, formula=None, conditions="invented")
    edge = compare(11.0, 0.6, edge_ref, molality=None, T_K=298.15)
    assert edge.En == 1.0 and edge.satisfactory


def test_like_for_like_has_no_notes() -> None:
    srm = find_reference("dissolution", name="SRM 1655")
    c = compare(17.6, 0.3, srm, molality=0.111, T_K=298.15)
    assert c.notes == [] and c.adjusted_reference is None


def test_temperature_difference_gives_the_kirchhoff_size() -> None:
    # docs/methods.md §3.3: ΔsolCp(KCl) ~ -0.15 to -0.17 kJ/(mol K), about 1 % per K, so a run
    # 4 K below 25 degC expects a value 0.60-0.68 kJ/mol higher.
    ref = solution_enthalpy("KCl")
    c = compare(17.9, 0.6, ref, molality=None, T_K=294.15)
    assert any("Kirchhoff" in n for n in c.notes)
    assert c.adjusted_reference is not None
    assert 0.60 <= c.adjusted_reference - ref.value <= 0.68


def test_finite_molality_against_infinite_dilution_reproduces_srm_1655() -> None:
    # The KCl infinite-dilution value adjusted to 0.111 mol/kg with φ_L must agree with the
    # SRM 1655 certified value 17.584 kJ/mol (Kilday 1980, from memory) within 2u.
    ref = solution_enthalpy("KCl")
    c = compare(17.584, 0.017, ref, molality=0.111, T_K=298.15)
    assert any("infinite dilution" in n and "kJ/mol" in n for n in c.notes)
    assert c.adjusted_reference is not None
    assert abs(c.adjusted_reference - 17.584) <= 2 * math.hypot(c.adjusted_u, 0.0085)
    assert abs(c.En_adjusted) < abs(c.En_published)
    # the verdict is the adjusted comparison; the published one stays as context
    assert c.basis == "conditions" and c.En == c.En_adjusted and c.satisfactory


def test_molality_away_from_a_finite_reference_molality() -> None:
    srm = find_reference("dissolution", name="SRM 1655")
    c = compare(17.4, 0.3, srm, molality=0.5, T_K=298.15)
    assert any("0.111 mol/kg" in n for n in c.notes)
    assert c.adjusted_reference is not None and c.adjusted_reference < srm.value


def test_effect_of_unknown_size_is_said() -> None:
    ref = solution_enthalpy("CuSO4")
    c = compare(-66.5, 2.0, ref, molality=0.2, T_K=298.15)
    assert any("unknown" in n for n in c.notes)
    assert c.adjusted_reference is None
    c = compare(17.0, 0.5, solution_enthalpy("KCl"), molality=None, T_K=298.15)
    assert any("not known" in n for n in c.notes)
    c = compare(-30.0, 1.0, solution_enthalpy("CaCl2"), molality=None, T_K=293.15)
    assert any("no ΔCp data" in n for n in c.notes)


def test_neutralization_and_certified_conditions_notes() -> None:
    c = compare(-57.0, 1.5, neutralization_reference("HCl", "NaOH"), molality=0.5, T_K=295.15)
    assert any("dilution" in n and "not corrected" in n for n in c.notes)
    # Kirchhoff with ΔrCp = +215.2 J/(mol K) (Singh et al. 1976): 3 K colder -> -0.65.
    assert c.adjusted_reference == pytest.approx(-55.836 - 0.2152 * 3.0, abs=1e-6)
    tham = find_reference("reaction", formula="THAM")
    c = compare(-29.7, 0.2, tham, molality=None, T_K=298.15)
    assert any("0.1 mol/L HCl" in n for n in c.notes)


@pytest.mark.parametrize(
    ("x", "U", "m", "T"),
    [(float("nan"), 1.0, None, 298.15), (1.0, -1.0, None, 298.15), ("a", 1.0, None, 298.15), (1.0, 1.0, -0.1, 298.15)],
)
def test_bad_input_is_an_input_error(x, U, m, T) -> None:
    with pytest.raises(InputError):
        compare(x, U, _ref(formula="KCl"), molality=m, T_K=T)


def test_zero_uncertainty_is_an_input_error() -> None:
    with pytest.raises(InputError):
        compare(10.0, 0.0, _ref(10.0, 0.0), molality=None, T_K=298.15)


def test_the_verdict_is_judged_at_the_runs_conditions() -> None:
    # A KCl run at 21.8 degC and 0.50 mol/kg: the value carried there (Kirchhoff + phi_L) is the
    # verdict; the infinite-dilution value is context only. E_n per ISO 13528 against the adjusted value.
    from calc.refdata.comparison import verdict, verdict_record

    ref = solution_enthalpy("KCl")
    c = compare(17.95, 0.40, ref, molality=0.50, T_K=294.95)
    v = verdict(c)
    assert v is not None and v.basis == "conditions" and v.label == "reference at the run's conditions"
    assert v.reference == pytest.approx(c.adjusted_reference)
    assert v.En == pytest.approx((17.95 - c.adjusted_reference) / math.hypot(0.40, 2 * c.adjusted_u))
    assert v.satisfactory and c.satisfactory
    # against the value as published the same result would fail; that stays context only
    assert v.En_published is not None and abs(v.En_published) > 1
    assert v.published == ref.value and v.published_state == "infinite dilution"
    rec = verdict_record(v)
    assert rec["En"] == pytest.approx(v.En) and rec["context"]["En"] == pytest.approx(v.En_published)


def test_a_stored_record_from_before_the_change_gives_the_same_verdict() -> None:
    # Older records kept the published E_n in "En" and the adjusted one in "En_adjusted".
    import dataclasses

    from calc.refdata.comparison import verdict

    c = compare(17.95, 0.40, solution_enthalpy("KCl"), molality=0.50, T_K=294.95)
    new = dataclasses.asdict(c)
    old = dict(new, En=c.En_published, difference=c.difference_published, satisfactory=False)
    for key in ("basis", "En_published", "difference_published", "relative_difference_published"):
        old.pop(key)
    a, b = verdict(new), verdict(old)
    assert a is not None and b is not None
    assert (a.En, a.satisfactory, a.basis) == (b.En, b.satisfactory, b.basis)
    assert b.En_published == pytest.approx(c.En_published)
    # no adjustment possible: the published value is the verdict
    plain = compare(11.0, 1.0, _ref(10.0, 0.5, formula=None, conditions="invented"), molality=None, T_K=298.15)
    pv = verdict(dataclasses.asdict(plain))
    assert pv.basis == "published" and pv.En == pytest.approx(plain.En) and pv.label == "reference as published"
    assert verdict(None) is None and verdict({}) is None
