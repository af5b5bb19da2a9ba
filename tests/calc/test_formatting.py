"""The one number formatter: two significant digits of u, the value rounded to match, units always."""

from __future__ import annotations

import math

import pytest
from uncertainties import ufloat

from calc import formatting as fmt


@pytest.mark.parametrize(
    ("value", "u", "unit", "text"),
    [
        # GUM 7.2.2 writes m_S = 100.02147 g with u_c = 0.35 mg as "100,021 47(35) g" (JCGM 100:2008)
        (100.02147, 0.00035, "g", "100.02147 ± 0.00035 g"),
        (18.67451548263969, 1.166440396627191, "J/K", "18.7 ± 1.2 J/K"),  # the raw input line
        (-57.34, 0.847, "kJ/mol", "-57.34 ± 0.85 kJ/mol"),
        (2531.4, 12.7, "J", "2531 ± 13 J"),
        (0.9970, 0.0005, "g/mL", "0.99700 ± 0.00050 g/mL"),
    ],
)
def test_measured_two_digits_of_u(value: float, u: float, unit: str, text: str) -> None:
    assert fmt.measured(value, u, unit) == text
    # the same rounding as the uncertainties package's own ".2uf" format (a reference library)
    assert fmt.measured(value, u, unit).split(" ± ")[0] == format(ufloat(value, u), ".2uf").split("+/-")[0]


def test_no_exponent_for_ordinary_numbers_and_units_always() -> None:
    assert fmt.uncertainty(100.0, "kJ/mol") == "100 kJ/mol"  # not "1e+02"
    assert fmt.uncertainty(12.7, "J") == "13 J"
    assert fmt.number(-123456.0) == "-123456"
    assert fmt.number(9.96, digits=2) == "10"
    assert fmt.measured(17.98, 0.0, "K") == "17.98 K"
    assert "×10" in fmt.measured(1.2e-5, 5e-7, "mol") and fmt.measured(1.2e-5, 5e-7, "mol").endswith(" mol")
    assert fmt.like(0.7262, 0.19, "kJ/mol", signed=True) == "+0.73 kJ/mol"  # "difference 0.726" had no unit
    for missing in (None, math.nan, math.inf, "text"):
        assert fmt.measured(missing, 1.0, "K") == fmt.DASH and fmt.number(missing) == fmt.DASH


def test_degrees_of_freedom_above_a_bound() -> None:
    assert fmt.dof(1782410582426.9) == "> 1000"  # the "ν_eff 1782410582426.9"
    assert fmt.dof(37726013.9) == "> 1000"
    assert fmt.dof(None) == "∞" and fmt.dof(math.inf) == "∞"
    assert fmt.dof(7.26) == "7.3" and fmt.dof(213.4) == "213"


def test_intervals_keep_distinct_ends_distinct() -> None:
    assert fmt.interval(17.981, 17.984, "kJ/mol") == "17.981 to 17.984 kJ/mol"  # not "17.98 to 17.98"
    assert fmt.interval(17.75, 18.14, "kJ/mol", u=0.19) == "17.75 to 18.14 kJ/mol"
    assert fmt.interval(5.0, 5.0, "K") == "5 K"


def test_temperatures_in_the_unit_entered() -> None:
    # 44.6 °C = 317.75 K (ITS-90: T/K = t/°C + 273.15)
    assert fmt.temperature(317.75, 0.05, "degC") == "44.600 ± 0.050 °C"
    assert fmt.temperature(317.75, None, "degC") == "44.60 °C"
    # °F = °C × 9/5 + 32, and a difference scales by 9/5
    assert fmt.temperature(317.75, 0.05, "degF") == "112.280 ± 0.090 °F"
    assert fmt.temperature(317.75, 0.05, "K") == "317.750 ± 0.050 K"
