"""Water and solution property models checked against published values.

Sources of the check values are named beside each one. "(from memory)" marks values
typed from memory and not re-checked against the primary source.
"""

from __future__ import annotations

import csv
import math
from importlib import resources

import iapws
import pytest

from calc.errors import InputError
from calc.refdata.properties import (
    FALLBACK_HALF_WIDTH_CP,
    FALLBACK_HALF_WIDTH_DENSITY,
    _laliberte_table,
    solution_properties,
)
from calc.refdata.water import (
    GRID_FILE,
    GRID_NODES,
    T_MAX_K,
    T_MIN_K,
    ModelledProperty,
    _iapws_direct,
    debye_huckel_slopes,
    water_density,
    water_dielectric_constant,
    water_specific_heat,
)

# --------------------------------------------------------------------------- water


def test_iapws_package_reproduces_the_iapws95_check_values() -> None:
    # IAPWS-95 release, Table 7 (single-phase check values; from memory):
    # T = 300 K, rho = 996.5560 kg/m3: p = 0.0992418352 MPa, cv = 4.13018112 kJ/(kg K),
    # w = 1501.51914 m/s;  T = 300 K, rho = 1005.308 kg/m3: p = 20.0022515 MPa.
    s = iapws.IAPWS95(T=300.0, rho=996.5560)
    assert s.P == pytest.approx(0.0992418352, rel=1e-8)
    assert s.cv == pytest.approx(4.13018112, rel=1e-8)
    assert s.w == pytest.approx(1501.51914, rel=1e-8)
    s = iapws.IAPWS95(T=300.0, rho=1005.308)
    assert s.P == pytest.approx(20.0022515, rel=1e-7)


def test_water_density_at_300_K_matches_the_iapws95_check_state() -> None:
    # IAPWS-95 Table 7 (from memory): rho = 996.5560 kg/m3 at 300 K and 0.0992 MPa. At
    # 0.101325 MPa the density is higher by kappa_T * dp ~ 4.5e-4 /MPa * 0.0021 MPa
    # ~ 0.9e-6 relative (kappa_T of water from memory), so allow 1.5e-6 g/mL.
    rho = water_density(300.0)
    assert rho.value == pytest.approx(0.9965560, abs=1.5e-6)
    assert rho.value > 0.9965560
    assert rho.unit == "g/mL"
    assert rho.model.startswith("IAPWS-95")


@pytest.mark.parametrize(
    ("t_c", "rho_g_ml", "digits"),
    [
        # Water densities at 0.101325 MPa quoted in docs/methods.md §4.2
        # ("IAPWS-95; memory"), compared to the digits given.
        (20.0, 0.99821, 5),
        (25.0, 0.99705, 5),
        (45.0, 0.9902, 4),
        (60.0, 0.9832, 4),
    ],
)
def test_water_density_matches_quoted_values(t_c: float, rho_g_ml: float, digits: int) -> None:
    rho = water_density(273.15 + t_c)
    assert abs(rho.value - rho_g_ml) <= 0.5 * 10.0**-digits


def test_water_specific_heat_at_25_c() -> None:
    # c_p(25 degC) = 4.1813 J/(g K) (docs/methods.md §4.3, IAPWS-95; memory); 4.184 is
    # the thermochemical calorie, not c_p.
    cp = water_specific_heat(298.15)
    assert cp.value == pytest.approx(4.1813, abs=5e-5)
    assert cp.unit == "J/(g*K)"
    assert abs(cp.value - 4.184) > 0.002


@pytest.mark.parametrize("T", [273.15, 273.37, 280.13, 291.666, 298.15, 310.377, 333.01, 362.9])
def test_interpolation_error_below_1e_6_relative(T: float) -> None:
    # Reference: direct IAPWS-95 evaluation (iapws package) at off-grid temperatures.
    rho_direct, cp_direct = _iapws_direct(T)
    assert water_density(T).value == pytest.approx(rho_direct, rel=1e-6)
    assert water_specific_heat(T).value == pytest.approx(cp_direct, rel=1e-6)


def test_every_node_of_the_shipped_grid_is_what_iapws_computes() -> None:
    # Reference: the iapws package (IAPWS-95 at 0.101325 MPa, IAPWS 1997 dielectric constant), node by node.
    from iapws._iapws import _Dielectric

    path = resources.files("calc.refdata") / "data" / GRID_FILE
    with path.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(line for line in fh if not line.startswith("#")))
    assert [int(r["node"]) for r in rows] == list(range(GRID_NODES[0], GRID_NODES[1] + 1))
    assert float(rows[0]["T_K"]) <= T_MIN_K - 0.5 and float(rows[-1]["T_K"]) >= T_MAX_K + 0.5
    for row in rows:
        T = float(row["T_K"])
        rho, cp = _iapws_direct(T)
        assert float(row["density_g_mL"]) == pytest.approx(rho, rel=1e-12), T
        assert float(row["cp_J_gK"]) == pytest.approx(cp, rel=1e-12), T
        assert float(row["dielectric_constant"]) == pytest.approx(_Dielectric(rho * 1000.0, T), rel=1e-12), T


@pytest.mark.parametrize("T", [273.15, 277.13, 298.15, 303.401, 341.7, 363.15])
def test_dielectric_constant_is_the_iapws_release_at_the_iapws95_density(T: float) -> None:
    # Reference: iapws package, IAPWS 1997 static dielectric constant at the direct IAPWS-95 density;
    # 78.4 at 25 °C (IAPWS R8-97 table, from memory).
    from iapws._iapws import _Dielectric

    rho, _cp = _iapws_direct(T)
    assert water_dielectric_constant(T) == pytest.approx(_Dielectric(rho * 1000.0, T), rel=1e-9)
    if T == 298.15:
        assert water_dielectric_constant(T) == pytest.approx(78.4, abs=0.05)


def test_the_water_model_does_not_import_iapws() -> None:
    # the grid is shipped: analyzing a run need not load iapws (and scipy.optimize with it)
    import subprocess
    import sys

    code = (
        "import sys\nimport calc.refdata.properties\nfrom calc.refdata.water import water_density, debye_huckel_slopes\n"
        "water_density(298.15); debye_huckel_slopes(298.15)\nprint('iapws' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_water_uncertainties_follow_the_stated_rule() -> None:
    # Stated in calc/refdata/properties.py: 1e-6 relative (density), 1e-3 relative (c_p),
    # IAPWS-95 stated uncertainties for liquid water at ambient pressure (from memory).
    rho = water_density(298.15)
    cp = water_specific_heat(298.15)
    assert rho.u == pytest.approx(1e-6 * rho.value)
    assert cp.u == pytest.approx(1e-3 * cp.value)


@pytest.mark.parametrize("bad", [200.0, 400.0, "warm", None])
def test_water_temperature_out_of_range_is_an_input_error(bad: object) -> None:
    with pytest.raises(InputError):
        water_density(bad)  # type: ignore[arg-type]


def test_debye_huckel_slopes_at_25_c() -> None:
    # Pitzer's values at 25 degC (from memory): A_phi = 0.3915 kg^1/2 mol^-1/2,
    # A_H/RT = 0.801 kg^1/2 mol^-1/2. cupcal derives both from IAPWS-95 and the IAPWS
    # dielectric constant; different dielectric models shift A_H by about 1 %.
    a_phi, a_h = debye_huckel_slopes(298.15)
    assert a_phi == pytest.approx(0.3915, abs=0.001)
    assert a_h / (8.314462618 * 298.15) == pytest.approx(0.801, rel=0.01)


# ----------------------------------------------------------------------- Laliberté


@pytest.mark.parametrize(
    ("solute", "w", "rho_20c"),
    [
        # CRC Handbook of Chemistry and Physics, "Concentrative properties of aqueous
        # solutions", densities at 20 degC in g/mL (from memory).
        ("NaCl", 0.01, 1.0053),
        ("NaCl", 0.10, 1.0707),
        ("NaCl", 0.20, 1.1478),
        ("NaCl", 0.26, 1.1972),
        ("KCl", 0.10, 1.0633),
        ("KCl", 0.20, 1.1328),
        ("CaCl2", 0.10, 1.0835),
        ("H2SO4", 0.10, 1.0661),
        ("C12H22O11", 0.10, 1.0381),
    ],
)
def test_laliberte_density_matches_handbook_densities(solute: str, w: float, rho_20c: float) -> None:
    rho, _ = solution_properties({solute: 100.0 * w}, 100.0 * (1.0 - w), 293.15)
    assert rho.model.startswith("Laliberté")
    # Within the stated expanded uncertainty (k = 2) plus the handbook's rounding.
    assert abs(rho.value - rho_20c) <= 2.0 * rho.u + 0.00005


def test_laliberte_heat_capacity_of_half_molal_nacl() -> None:
    # docs/methods.md §4.3 (estimate, memory): 0.5 mol/kg NaCl has c_p ~ 4.03 J/(g K)
    # at 25 degC (-3.6 % against water). M(NaCl) = 58.443 g/mol.
    _, cp = solution_properties({"NaCl": 0.5 * 58.443}, 1000.0, 298.15)
    assert cp.model.startswith("Laliberté")
    assert cp.value == pytest.approx(4.03, abs=0.006)


def _ion_cp_crc() -> dict[str, float]:
    path = resources.files("chemicals") / "Electrolytes" / "CRC Thermodynamic Properties of Aqueous Ions.tsv"
    with path.open(encoding="utf-8") as fh:
        return {r["Formula"]: float(r["Cp(aq)"]) for r in csv.DictReader(fh, delimiter="\t") if r["Cp(aq)"]}


@pytest.mark.parametrize(
    ("salt", "M", "ions"),
    [
        ("NaCl", 58.443, ("Na+", "Cl-")),
        ("KCl", 74.551, ("K+", "Cl-")),
        ("NaOH", 39.997, ("Na+", "OH-")),
        ("KNO3", 101.103, ("K+", "NO3-")),
        ("KOH", 56.106, ("K+", "OH-")),
    ],
)
def test_laliberte_heat_capacity_near_infinite_dilution(salt: str, M: float, ions: tuple[str, str]) -> None:
    # Independent route: at 0.1 mol/kg, c_p ~ (1000 c_p,w + m Cp°) / (1000 + m M) with
    # Cp° the sum of the ionic heat capacities at infinite dilution from the CRC Handbook
    # table "Thermodynamic properties of aqueous ions" (shipped by the chemicals
    # package). The Debye-Hückel change of the apparent Cp at 0.1 mol/kg moves c_p by
    # < 0.05 %; the check allows the model's expanded uncertainty.
    cp_ion = _ion_cp_crc()
    cp0 = cp_ion[ions[0]] + cp_ion[ions[1]]
    m = 0.1
    cw = water_specific_heat(298.15).value
    expected = (1000.0 * cw + m * cp0) / (1000.0 + m * M)
    _, cp = solution_properties({salt: m * M}, 1000.0, 298.15)
    assert cp.model.startswith("Laliberté")
    assert abs(cp.value - expected) <= 2.0 * cp.u


def test_hydrate_is_split_into_salt_and_water() -> None:
    # Molar masses from molmass (IUPAC standard atomic weights).
    import molmass

    m_h = 2.49685
    m_a = m_h * molmass.Formula("CuSO4").mass / molmass.Formula("CuSO4.5H2O").mass
    rho_h, _ = solution_properties({"CuSO4.5H2O": m_h}, 100.0, 298.15)
    rho_a, _ = solution_properties({"CuSO4": m_a}, 100.0 + (m_h - m_a), 298.15)
    assert rho_h.value == pytest.approx(rho_a.value, rel=1e-9)
    rho_dot, _ = solution_properties({"CuSO4·5H2O": 2.49685}, 100.0, 298.15)
    assert rho_dot.value == pytest.approx(rho_h.value, rel=1e-12)


def test_mixture_of_covered_solutes_uses_laliberte() -> None:
    rho, cp = solution_properties({"NaCl": 2.92, "NaOH": 0.1}, 95.0, 298.15)
    assert rho.model.startswith("Laliberté") and cp.model.startswith("Laliberté")
    rho1, _ = solution_properties({"NaCl": 3.02}, 95.0, 298.15)
    assert abs(rho.value - rho1.value) < 0.002


def test_pure_water_gives_iapws() -> None:
    rho, cp = solution_properties({}, 100.0, 298.15)
    assert rho == water_density(298.15)
    assert cp == water_specific_heat(298.15)


def test_uncovered_solute_falls_back_to_water_with_growing_uncertainty() -> None:
    # Urea is not in the Laliberté table.
    rho1, cp1 = solution_properties({"CO(NH2)2": 1.0}, 99.0, 298.15)
    rho10, cp10 = solution_properties({"CO(NH2)2": 10.0}, 90.0, 298.15)
    water = water_density(298.15)
    assert rho1.model.startswith("water fallback") and "CO(NH2)2" in rho1.model
    assert rho1.value == water.value
    assert cp10.value == water_specific_heat(298.15).value
    # Rule: u_rel = 1.25 w / sqrt(3) (density), 1.75 w / sqrt(3) (c_p).
    assert rho10.u == pytest.approx(math.hypot(water.u, water.value * 1.25 * 0.10 / math.sqrt(3)))
    assert rho10.u > 5 * rho1.u and cp10.u > 5 * cp1.u


def test_partial_coverage_is_recorded_per_property() -> None:
    # Sucrose has Laliberté density coefficients but no heat-capacity coefficients.
    rho, cp = solution_properties({"C12H22O11": 10.0}, 90.0, 298.15)
    assert rho.model.startswith("Laliberté")
    assert cp.model.startswith("water fallback")


def test_fallback_rule_covers_the_laliberte_solutes() -> None:
    # The fallback's half-widths (1.25 w for density, 1.75 w for c_p) must cover the
    # actual deviation from water of every solute in the Laliberté table at 25 degC,
    # w = 0.05 and 0.10 (where within the fitted range). Data: chemicals' table.
    checked = 0
    rho_w = water_density(298.15).value
    cp_w = water_specific_heat(298.15).value
    for row in _laliberte_table().values():
        for w in (0.05, 0.10):
            rho, cp = solution_properties({row.formula: 100.0 * w}, 100.0 * (1 - w), 298.15)
            if rho.model.startswith("Laliberté"):
                assert abs(rho.value / rho_w - 1.0) <= FALLBACK_HALF_WIDTH_DENSITY * w, row.formula
                checked += 1
            if cp.model.startswith("Laliberté"):
                assert abs(cp.value / cp_w - 1.0) <= FALLBACK_HALF_WIDTH_CP * w, row.formula
                checked += 1
    assert checked > 150


@pytest.mark.parametrize(
    ("solutes", "water"),
    [
        ({"NaCl": -1.0}, 100.0),
        ({"NaCl": 1.0}, 0.0),
        ({"NaCl": "x"}, 100.0),
        ({"Qq9": 1.0}, 100.0),
        ({"CuSO4.5NH3": 1.0}, 100.0),
    ],
)
def test_bad_solution_input_is_an_input_error(solutes: dict, water: float) -> None:
    with pytest.raises(InputError):
        solution_properties(solutes, water, 298.15)


def test_property_value_is_frozen() -> None:
    v = ModelledProperty(1.0, 0.1, "g/mL", "x")
    with pytest.raises(AttributeError):
        v.value = 2.0  # type: ignore[misc]


# ------------------------------------------------------- Laliberté: ours against the thermo package
# cupcal computes Laliberté's models itself from the papers' coefficient table (calc/refdata/laliberte.py),
# so the calculation-only install needs neither thermo nor pandas. Check value: the thermo package's
# implementation (thermo.electrochem, Chemical Engineering Design Library), an independent library from
# the package registry. Water's c_p differs (IAPWS-95 here, a Chebyshev fit of it in thermo), so c_p
# agrees to 2e-4 relative and density, where both use Laliberté's water equation, to 1e-9.
@pytest.mark.parametrize(
    "formula, cas",
    [
        ("KCl", "7447-40-7"),
        ("NaCl", "7647-14-5"),
        ("NH4NO3", "6484-52-2"),
        ("CaCl2", "10043-52-4"),
        ("C12H22O11", "57-50-1"),
    ],
)
@pytest.mark.parametrize("t_c, w", [(15.0, 0.01), (25.0, 0.05), (40.0, 0.15)])
def test_laliberte_agrees_with_the_thermo_package(formula, cas, t_c, w):
    electrochem = pytest.importorskip("thermo.electrochem")
    from calc.refdata import laliberte
    from calc.refdata.properties import _laliberte_row

    row = _laliberte_row(formula)
    assert row is not None and row.cas == cas
    T = t_c + 273.15
    rho = laliberte.density(t_c, {row: w})
    assert rho == pytest.approx(electrochem.Laliberte_density(T, [w], [cas]), rel=1e-9)
    if row.cp is None:  # the table has density coefficients only for sucrose
        assert formula == "C12H22O11"
        return
    cp = laliberte.specific_heat(t_c, {row: w}, 1000.0 * water_specific_heat(T).value)
    assert cp == pytest.approx(electrochem.Laliberte_heat_capacity(T, [w], [cas]), rel=2e-4)


def test_the_calculation_library_needs_neither_thermo_nor_pandas():
    import subprocess
    import sys

    code = (
        "import sys\nfrom calc.refdata.properties import solution_properties\n"
        "solution_properties({'KCl': 3.7}, 100.0, 298.15)\n"
        "print(','.join(m for m in ('thermo', 'chemicals', 'pandas') if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
