"""φ_L of calc/refdata/dilution.py against the Pitzer models of the reference library pytzer.

pytzer (Humphreys & Schiller, PyPI ``pytzer`` 0.6) evaluates the excess Gibbs energy Gex/(w RT)
per kilogram of water with jax, so its temperature derivative comes exactly from automatic
differentiation, and φ_L = −R T² ∂(Gex/(w RT))/∂T / m at constant molality (docs/methods.md §4.6;
the definition of the relative apparent molar enthalpy, common practice, no source).

Two checks (docs/methods.md §8.7):

* **The same model, coded twice.** pytzer carries the enthalpy parameters of Silvester & Pitzer
  (1978) (its functions ``bC_*_SP78``), the source cupcal's table cites. calc and pytzer must agree
  to within the difference of their Debye–Hückel slopes (calc: IAPWS-95 with the dielectric
  constant of Fernández et al. 1997; pytzer: Archer & Wang 1990), i.e. 0.01 kJ/mol + 2 %.
* **Wide-range models.** NaCl: Archer (1992) (``bC_Na_Cl_A92ii``); KCl: Archer (1999)
  (``bC_K_Cl_A99``); HCl: the model pytzer keys CMR93 (``bC_H_Cl_CMR93``); all with pytzer's
  Archer & Wang (1990) A_φ. calc's φ_L must lie within two of its own standard uncertainties
  (k = 2) of them. Where it does not, the cell is an ``xfail(strict=True)`` naming the measured
  distance: the numbers are not widened to pass (docs/methods.md §8.7 says why calc is off there).
  The models are named by pytzer's keys; authors and years above are from memory.
"""

from __future__ import annotations

import jax  # pytzer's array library (CPU); both in the `test` extra
import pytest
import pytzer as pz

from calc.refdata.dilution import phi_L

R_GAS = 8.314462618  # J/(mol K), CODATA 2018
P_DBAR = 10.1325  # 1 atm in pytzer's unit (dbar)

SALTS = {"NaCl": ("Na", "Cl"), "KCl": ("K", "Cl"), "HCl": ("H", "Cl")}
WIDE = {"NaCl": "bC_Na_Cl_A92ii", "KCl": "bC_K_Cl_A99", "HCl": "bC_H_Cl_CMR93"}
TEMPS_C = (15.0, 20.0, 25.0, 35.0)
MOLALITIES = (0.05, 0.1, 0.2, 0.3, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0)

#: Cells where calc is more than 2 u(φ_L) from the wide-range model, with the measured distance in u
#: (calc − reference)/u. At 15 and 20 °C calc's temperature dependence (A_H(T) and T² with the enthalpy
#: parameters of 25 °C held fixed) misses the heat-capacity term φ_J = ∂φ_L/∂T, about
#: +0.04 kJ mol⁻¹ K⁻¹ near 1 mol/kg in every wide-range model pytzer carries; calc's "2 % of φ_L per
#: K" is near zero where φ_L crosses zero.
OFF = {
    ("NaCl", 15.0, 0.5): 2.2,
    ("NaCl", 15.0, 0.75): 3.5,
    ("NaCl", 15.0, 1.0): 4.4,
    ("NaCl", 15.0, 1.5): 3.8,
    ("NaCl", 15.0, 2.0): 3.3,
    ("NaCl", 15.0, 3.0): 2.7,
    ("KCl", 15.0, 0.3): 2.0,
    ("KCl", 15.0, 0.5): 2.1,
    ("KCl", 15.0, 0.75): 3.1,
    ("KCl", 15.0, 1.0): 3.8,
    ("KCl", 15.0, 1.5): 3.1,
    ("KCl", 15.0, 2.0): 2.7,
    ("KCl", 15.0, 3.0): 2.1,
    ("NaCl", 20.0, 1.0): 2.6,
    ("NaCl", 20.0, 1.5): 2.4,
    ("NaCl", 20.0, 2.0): 2.1,
    ("KCl", 20.0, 1.0): 2.3,
    ("KCl", 20.0, 1.5): 2.05,
    ("HCl", 20.0, 3.0): -2.01,
    ("HCl", 25.0, 3.0): -2.5,
}


def _phi_L_table(param_names: dict[str, str]) -> dict[tuple[str, float, float], float]:
    """Return {(salt, °C, m): φ_L in kJ/mol} from pytzer with one c–a parameter function per salt."""
    from pytzer import debyehueckel, parameters, unsymmetrical
    from pytzer.libraries import Library

    jax.config.update("jax_enable_x64", True)  # derivatives of sums of nearly equal terms
    out = {}
    try:
        for salt, fn in param_names.items():
            cat, ani = SALTS[salt]
            lib = Library(name=f"cupcal-check-{salt}")
            lib.update_Aphi(debyehueckel.Aosm_AW90)
            lib.update_func_J(unsymmetrical.P75_eq47)
            lib.update_ca(cat, ani, getattr(parameters, fn))
            model = pz.set_library(pz, lib).model
            d_dT = jax.jit(jax.grad(lambda T, m: model.Gibbs_nRT({cat: m, ani: m}, T, P_DBAR)))
            # evaluated now: set_library reloads the module in place for the next salt
            for tc in TEMPS_C:
                T = 273.15 + tc
                for m in MOLALITIES:
                    out[(salt, tc, m)] = -R_GAS * T * T * float(d_dT(T, m)) / m / 1000.0
    finally:
        pz.set_library(pz, "CWTD23")  # pytzer's default library back
    return out


@pytest.fixture(scope="module")
def same_source():
    return _phi_L_table({s: f"bC_{a}_{b}_SP78" for s, (a, b) in SALTS.items()})


@pytest.fixture(scope="module")
def wide_range():
    return _phi_L_table(WIDE)


def _cells():
    for salt in SALTS:
        for tc in TEMPS_C:
            for m in MOLALITIES:
                key = (salt, tc, m)
                marks = []
                if key in OFF:
                    why = (
                        "HCl at 3 mol/kg"
                        if salt == "HCl"
                        else "no heat-capacity term: φ_L's temperature dependence away from 25 °C"
                    )
                    marks.append(
                        pytest.mark.xfail(
                            strict=True,
                            reason=f"calc is {OFF[key]:+.1f} u from {WIDE[salt]}: {why} (docs/methods.md §8.7)",
                        )
                    )
                yield pytest.param(*key, marks=marks, id=f"{salt}-{tc:g}C-{m:g}")


@pytest.mark.parametrize("salt", list(SALTS))
def test_same_parameters_give_the_same_phi_L(same_source, salt):
    # Silvester & Pitzer (1978) enthalpy parameters in both codes
    for tc in TEMPS_C:
        for m in MOLALITIES:
            ref = same_source[(salt, tc, m)]
            got = phi_L(salt, m, 273.15 + tc)
            assert got is not None and got.model == "Pitzer"
            assert abs(got.value - ref) <= 0.01 + 0.02 * abs(ref), (salt, tc, m, got.value, ref)


@pytest.mark.parametrize("salt, tc, m", list(_cells()))
def test_phi_L_within_two_u_of_the_wide_range_model(wide_range, salt, tc, m):
    ref = wide_range[(salt, tc, m)]
    got = phi_L(salt, m, 273.15 + tc)
    assert got is not None
    assert abs(got.value - ref) <= 2.0 * got.u, (
        f"{salt} {tc} °C {m} mol/kg: calc {got.value:+.3f} ± {got.u:.3f}, {WIDE[salt]} {ref:+.3f} kJ/mol "
        f"({(got.value - ref) / got.u:+.2f} u)"
    )


def test_model_spread_at_1_molal_covers_the_wide_range_models_at_25C(wide_range):
    # the model-spread term's half-width (MODEL_SPREAD_AT_1_MOLAL) was set from this disagreement
    from calc.refdata.dilution import MODEL_SPREAD_AT_1_MOLAL

    for salt in ("NaCl", "KCl"):
        got = phi_L(salt, 1.0)
        assert abs(got.value - wide_range[(salt, 25.0, 1.0)]) <= MODEL_SPREAD_AT_1_MOLAL, salt
