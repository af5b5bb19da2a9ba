"""φ_L of calc/refdata/dilution.py against the Pitzer models of the reference library pytzer.

pytzer (Humphreys & Schiller, PyPI ``pytzer`` 0.6) evaluates the excess Gibbs energy Gex/(w RT)
per kilogram of water with jax, so its temperature derivative comes exactly from automatic
differentiation, and φ_L = −R T² ∂(Gex/(w RT))/∂T / m at constant molality (docs/methods.md §4.6;
the definition of the relative apparent molar enthalpy, common practice, no source).

Three checks (docs/methods.md §4.6, §8.7):

* **The same model, coded twice.** pytzer carries the enthalpy parameters of Silvester & Pitzer
  (1978) (its functions ``bC_*_SP78``), the source of calc's 25 °C Pitzer term (``phi_L(...,
  wide_range=False)``). calc and pytzer must agree to within the difference of their Debye–Hückel
  slopes (calc: IAPWS-95 with the dielectric constant of Fernández et al. 1997; pytzer: Archer &
  Wang 1990), i.e. 0.01 kJ/mol + 2 %.
* **Wide-range models.** NaCl: Archer (1992) (``bC_Na_Cl_A92ii``); KCl: Archer (1999)
  (``bC_K_Cl_A99``); HCl: the model pytzer keys CMR93 (``bC_H_Cl_CMR93``); all with pytzer's
  Archer & Wang (1990) A_φ. calc's φ_L comes from a table made from these models by
  ``tests/tools/make_phi_L.py`` on a grid in √m and whole degrees; it must lie within two of its own
  standard uncertainties (k = 2) of the model evaluated here, live, at molalities and temperatures
  mostly off that grid (17.3 °C is off the temperature grid).
* **Interpolation.** Closer still: within calc's stated interpolation and Debye–Hückel terms, so a
  wrong grid, a shifted column or a poor interpolant fails even where the model spread is wide.

The models are named by pytzer's keys; authors and years above are from memory. Before the table
(2026-12), calc's 25 °C term was 2–4.4 u off these models at 15–20 °C near 1 mol/kg (§8.7).
"""

from __future__ import annotations

import jax  # pytzer's array library (CPU); both in the `test` extra
import pytest
import pytzer as pz

from calc.refdata.dilution import (
    U_INTERPOLATION,
    U_REL_LONG_RANGE,
    WIDE_RANGE_MODEL,
    _long_range,
    phi_L,
)
from calc.refdata.water import debye_huckel_slopes

R_GAS = 8.314462618  # J/(mol K), CODATA 2018
P_DBAR = 10.1325  # 1 atm in pytzer's unit (dbar)

SALTS = {"NaCl": ("Na", "Cl"), "KCl": ("K", "Cl"), "HCl": ("H", "Cl")}
WIDE = {"NaCl": "bC_Na_Cl_A92ii", "KCl": "bC_K_Cl_A99", "HCl": "bC_H_Cl_CMR93"}
TEMPS_C = (15.0, 17.3, 20.0, 25.0, 35.0)
MOLALITIES = (0.05, 0.1, 0.2, 0.3, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0)


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
                yield pytest.param(salt, tc, m, id=f"{salt}-{tc:g}C-{m:g}")


@pytest.mark.parametrize("salt", list(SALTS))
def test_same_parameters_give_the_same_phi_L(same_source, salt):
    # Silvester & Pitzer (1978) enthalpy parameters in both codes
    for tc in TEMPS_C:
        for m in MOLALITIES:
            ref = same_source[(salt, tc, m)]
            got = phi_L(salt, m, 273.15 + tc, wide_range=False)
            assert got is not None and got.model == "Pitzer"
            assert abs(got.value - ref) <= 0.01 + 0.02 * abs(ref), (salt, tc, m, got.value, ref)


@pytest.mark.parametrize("salt, tc, m", list(_cells()))
def test_phi_L_within_two_u_of_the_wide_range_model(wide_range, salt, tc, m):
    ref = wide_range[(salt, tc, m)]
    got = phi_L(salt, m, 273.15 + tc)
    assert got is not None and got.model == WIDE_RANGE_MODEL
    assert abs(got.value - ref) <= 2.0 * got.u, (
        f"{salt} {tc} °C {m} mol/kg: calc {got.value:+.3f} ± {got.u:.3f}, {WIDE[salt]} {ref:+.3f} kJ/mol "
        f"({(got.value - ref) / got.u:+.2f} u)"
    )


@pytest.mark.parametrize("salt", list(SALTS))
def test_table_reproduces_the_model_between_its_grid_points(wide_range, salt):
    # what is left is the interpolation and calc's own Debye–Hückel slope (IAPWS-95 against
    # Archer & Wang 1990): U_INTERPOLATION + U_REL_LONG_RANGE of the long-range term each
    worst = 0.0
    for tc in TEMPS_C:
        for m in MOLALITIES:
            got = phi_L(salt, m, 273.15 + tc)
            lr = _long_range(m, debye_huckel_slopes(273.15 + tc)[1])
            diff = abs(got.value - wide_range[(salt, tc, m)])
            worst = max(worst, diff)
            assert diff <= U_INTERPOLATION + U_REL_LONG_RANGE * lr, (salt, tc, m, got.value, diff)
    print(f"{salt}: largest |calc - pytzer| {worst:.4f} kJ/mol")


def test_old_25C_term_still_misses_the_heat_capacity_term(wide_range):
    # the finding that made the table (docs/methods.md §8.7): KCl and NaCl at 1 mol/kg, 15 °C
    for salt in ("NaCl", "KCl"):
        old = phi_L(salt, 1.0, 288.15, wide_range=False)
        assert (old.value - wide_range[(salt, 15.0, 1.0)]) / old.u > 3.0, salt


def test_model_spread_at_1_molal_covers_the_wide_range_models_at_25C(wide_range):
    # the old term's model-spread half-width (MODEL_SPREAD_AT_1_MOLAL) was set from this disagreement
    from calc.refdata.dilution import MODEL_SPREAD_AT_1_MOLAL

    for salt in ("NaCl", "KCl"):
        got = phi_L(salt, 1.0, wide_range=False)
        assert abs(got.value - wide_range[(salt, 25.0, 1.0)]) <= MODEL_SPREAD_AT_1_MOLAL, salt
