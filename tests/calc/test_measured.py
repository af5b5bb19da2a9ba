"""Tests for calc.io.quantities: "value ± u unit" strings from run files.

Outside facts used as check values (each also named beside its use):
- SI Brochure, 9th ed. (BIPM 2019), 2.3.1: t/°C = T/K − 273.15, so 0 °C = 273.15 K exactly,
  and a difference of 1 °C equals 1 K.
- SI Brochure, 9th ed., Table 8: 1 L = 1 dm³ = 10⁻³ m³ (so 1 mL = 1 cm³); 1 min = 60 s;
  1 h = 3600 s. Table 7: the prefix kilo is 10³.
- NIST SP 811 (2008), Appendix B (from memory): T/K = (t/°F + 459.67)/1.8, so a difference of
  1 °F is 5/9 K; the thermochemical calorie is 4.184 J exactly.
- GUM, JCGM 100:2008, 4.3.7: a rectangular distribution of half-width a has u = a/√3.
- scipy.constants (a general-purpose reference library): zero_Celsius, calorie,
  convert_temperature.
- uncertainties.ufloat_fromstr (a reference library) for reading "value+/-u".
"""

from __future__ import annotations

import dataclasses
import math

import pint
import pytest
import scipy.constants
from uncertainties import ufloat_fromstr

from calc.errors import InputError
from calc.io.quantities import Measured, default_uncertainty, describe_dimension, parse_measured

SQRT3 = math.sqrt(3.0)


def parse(text: object, expected: str) -> Measured:
    return parse_measured(text, field="run.quantity", expected=expected, source="run.toml")


# --------------------------------------------------------------------------- accepted forms


@pytest.mark.parametrize(
    ("text", "expected", "value", "u", "unit"),
    [
        ("100.0 ± 0.1 mL", "mL", 100.0, 0.1, "mL"),
        ("100.0 +/- 0.1 mL", "mL", 100.0, 0.1, "mL"),
        ("100.0±0.1mL", "mL", 100.0, 0.1, "mL"),
        ("  100.0 ±  0.1   mL ", "mL", 100.0, 0.1, "mL"),
        ("(100.0 ± 0.1) mL", "mL", 100.0, 0.1, "mL"),
        ("0.1000 ± 0.0001 L", "mL", 0.1, 0.0001, "L"),
        ("5.000 ± 0.002 g", "g", 5.0, 0.002, "g"),
        ("1.000 ± 0.005 mol/L", "mol/L", 1.0, 0.005, "mol/L"),
        ("1.000 ± 0.005 M", "mol/L", 1.0, 0.005, "M"),
        ("25 ± 3 J/K", "J/K", 25.0, 3.0, "J/K"),
        ("25 ± 3 J/°C", "J/K", 25.0, 3.0, "J/degC"),
        ("4.18 ± 0.01 J/(g*K)", "J/(g*K)", 4.18, 0.01, "J/(g*K)"),
        ("21.50 ± 0.05 degC", "K", 21.5, 0.05, "degC"),
        ("21.50 ± 0.05 °C", "K", 21.5, 0.05, "degC"),
        ("21.50 ± 0.05 ℃", "K", 21.5, 0.05, "degC"),
        ("21.50±0.05°C", "K", 21.5, 0.05, "degC"),
        ("−5.0 ± 0.1 °C", "K", -5.0, 0.1, "degC"),  # U+2212 minus sign
        ("294.65 ± 0.05 K", "K", 294.65, 0.05, "K"),
        ("70.7 ± 0.1 degF", "K", 70.7, 0.1, "degF"),
        ("70.7 ± 0.1 °F", "K", 70.7, 0.1, "degF"),
        ("180 ± 1 s", "s", 180.0, 1.0, "s"),
        ("3.0 ± 0.1 min", "s", 3.0, 0.1, "min"),
        ("0.05 ± 0.01 h", "s", 0.05, 0.01, "h"),
        ("3:00 ± 2 s", "s", 180.0, 2.0, "s"),
        ("12.00 ± 0.01 V", "V", 12.0, 0.01, "V"),
        ("1.500 ± 0.002 A", "A", 1.5, 0.002, "A"),
        ("0.0500 ± 0.0002 mol", "mol", 0.05, 0.0002, "mol"),
        ("-57.0 ± 0.5 kJ/mol", "kJ/mol", -57.0, 0.5, "kJ/mol"),
        ("1.00 ± 0.01 g/mL", "g/mL", 1.0, 0.01, "g/mL"),
        ("1.50e3 ± 2e1 J", "J", 1500.0, 20.0, "J"),
        ("0.50 ± 0.01", "", 0.5, 0.01, ""),
        ("100 ± 0 mL", "mL", 100.0, 0.0, "mL"),
    ],
)
def test_stated_uncertainty_is_read_as_normal(text: str, expected: str, value: float, u: float, unit: str) -> None:
    m = parse(text, expected)
    assert m.value == pytest.approx(value, rel=1e-15, abs=0)
    assert m.u == pytest.approx(u, rel=1e-15, abs=0)
    assert m.unit == unit
    assert m.distribution == "normal"
    assert m.text == text


@pytest.mark.parametrize("text", ["100.0 ± 0.1 mL", "5.000 ± 0.002 g", "-57.0 ± 0.5 kJ/mol", "1.50e3 ± 2e1 J"])
def test_value_and_u_agree_with_the_uncertainties_library(text: str) -> None:
    # uncertainties.ufloat_fromstr reads "value+/-u" independently of our parser.
    number, unit = text.rsplit(" ", 1)
    reference = ufloat_fromstr(number.replace(" ± ", "+/-"))
    m = parse(text, unit)
    assert m.value == reference.nominal_value
    assert m.u == reference.std_dev


def test_bare_numbers_are_accepted_where_dimensionless() -> None:
    m = parse(3, "")
    assert (m.value, m.unit, m.distribution, m.text) == (3.0, "", "rectangular", "3")
    m = parse(0.25, "")
    assert (m.value, m.unit, m.distribution) == (0.25, "", "rectangular")
    m = parse("0.5", "")
    assert (m.value, m.unit) == (0.5, "")


def test_percent_is_a_dimensionless_unit() -> None:
    m = parse("5.0 %", "")
    assert m.unit == "%"
    assert m.m_as("") == pytest.approx(0.05, rel=1e-15)  # 1 % = 0.01 (definition of per cent)


@pytest.mark.parametrize(
    ("text", "seconds"),
    [
        ("3:00", 180.0),  # 3 min = 180 s (SI Brochure, Table 8)
        ("0:45", 45.0),
        ("12:05.5", 725.5),
        ("1:02:03", 3723.0),  # 1 h + 2 min + 3 s = 3600 + 120 + 3 s (SI Brochure, Table 8)
        ("-0:30", -30.0),
    ],
)
def test_clock_times_become_seconds(text: str, seconds: float) -> None:
    m = parse(text, "s")
    assert m.value == seconds
    assert m.unit == "s"
    assert m.m_as("s") == seconds


# --------------------------------------------------------------------------- default u


@pytest.mark.parametrize(
    ("text", "expected", "u"),
    [
        # "100": last written digit is the units digit, half of it is a = 0.5 mL;
        # rectangular (GUM 4.3.7): u = 0.5/√3 = 0.288675... mL.
        ("100 mL", "mL", 0.5 / SQRT3),
        # "100.0": last digit 0.1 mL, a = 0.05 mL, u = 0.05/√3 = 0.0288675... mL.
        ("100.0 mL", "mL", 0.05 / SQRT3),
        # "1.20e-3": two decimals in the mantissa and exponent −3, so the last digit is
        # 10^-(2+3) = 1e-5 mol, a = 0.5e-5 = 0.005e-3 mol, u = 0.005e-3/√3 = 2.88675e-6 mol.
        ("1.20e-3 mol", "mol", 0.005e-3 / SQRT3),
        # "1.2e3": one decimal, exponent +3, last digit 10^(3-1) = 100 J, a = 50 J.
        ("1.2e3 J", "J", 50 / SQRT3),
        # "21.50 °C": last digit 0.01 °C, a = 0.005 °C.
        ("21.50 °C", "K", 0.005 / SQRT3),
        # "3:00": last digit of the seconds is 1 s, a = 0.5 s.
        ("3:00", "s", 0.5 / SQRT3),
        # TOML float 0.25: last digit 0.01, a = 0.005.
        (0.25, "", 0.005 / SQRT3),
        # TOML integer 3: last digit 1, a = 0.5.
        (3, "", 0.5 / SQRT3),
    ],
)
def test_default_uncertainty_is_half_the_last_digit_rectangular(text: object, expected: str, u: float) -> None:
    m = parse(text, expected)
    assert m.u == pytest.approx(u, rel=1e-12)
    assert m.distribution == "rectangular"


def test_default_uncertainty_numbers() -> None:
    # 0.5/√3 = 0.28867513459481287 (1/(2·1.7320508075688772)), by hand.
    assert default_uncertainty("7") == pytest.approx(0.28867513459481287, rel=1e-15)
    assert default_uncertainty("7.00") == pytest.approx(0.0028867513459481287, rel=1e-14)
    assert default_uncertainty("-7.00E+2") == pytest.approx(0.28867513459481287, rel=1e-14)


# --------------------------------------------------------------------------- conversions


def test_zero_celsius_is_273_15_kelvin() -> None:
    # SI Brochure 9th ed., 2.3.1: t/°C = T/K − 273.15 (exact); scipy.constants.zero_Celsius.
    assert parse("0 °C", "K").m_as("K") == 273.15
    assert parse("0 °C", "K").m_as("K") == scipy.constants.zero_Celsius


def test_celsius_value_is_offset_and_its_uncertainty_is_a_difference() -> None:
    m = parse("25.00 ± 0.10 °C", "K")
    assert m.m_as("K") == pytest.approx(298.15, abs=1e-12)  # 25 + 273.15 (SI Brochure 2.3.1)
    # A difference of 1 °C is 1 K (SI Brochure 2.3.1), so u stays 0.10.
    assert m.u_as("K") == pytest.approx(0.10, rel=1e-15)
    assert m.m_as("degC") == 25.0


@pytest.mark.parametrize(
    ("fahrenheit", "kelvin"),
    [
        # NIST SP 811 (from memory): T/K = (t/°F + 459.67)/1.8
        (212.0, 373.15),  # (212 + 459.67)/1.8 = 671.67/1.8 = 373.15
        (32.0, 273.15),  # (32 + 459.67)/1.8 = 491.67/1.8 = 273.15
        (-40.0, 233.15),  # (−40 + 459.67)/1.8 = 419.67/1.8 = 233.15
        (77.0, 298.15),  # (77 + 459.67)/1.8 = 536.67/1.8 = 298.15
    ],
)
def test_fahrenheit_to_kelvin(fahrenheit: float, kelvin: float) -> None:
    m = parse(f"{fahrenheit} ± 0.9 °F", "K")
    assert m.m_as("K") == pytest.approx(kelvin, abs=1e-9)
    expected = scipy.constants.convert_temperature(fahrenheit, "Fahrenheit", "Kelvin")
    assert m.m_as("K") == pytest.approx(expected, abs=1e-9)
    # A difference of 1 °F is 5/9 K (NIST SP 811): 0.9 °F = 0.5 K.
    assert m.u_as("K") == pytest.approx(0.5, rel=1e-12)


def test_celsius_to_fahrenheit() -> None:
    # 100 °C = 373.15 K = 212 °F (NIST SP 811 formula above).
    assert parse("100 °C", "K").m_as("degF") == pytest.approx(212.0, abs=1e-9)
    assert parse("1.0 ± 1.0 °C", "K").u_as("degF") == pytest.approx(1.8, rel=1e-12)


def test_millilitre_is_cubic_centimetre() -> None:
    # SI Brochure 9th ed., Table 8: 1 L = 1 dm³ = 10⁻³ m³, so 1 mL = 1 cm³ exactly.
    m = parse("100.0 ± 0.2 mL", "mL")
    assert m.m_as("cm**3") == pytest.approx(100.0, rel=1e-15)
    assert m.u_as("cm**3") == pytest.approx(0.2, rel=1e-15)
    assert m.m_as("L") == pytest.approx(0.1, rel=1e-15)
    assert m.m_as("m**3") == pytest.approx(1e-4, rel=1e-15)


def test_minutes_and_hours_to_seconds() -> None:
    # SI Brochure 9th ed., Table 8: 1 min = 60 s, 1 h = 3600 s.
    m = parse("3.0 ± 0.1 min", "s")
    assert (m.m_as("s"), m.u_as("s")) == (pytest.approx(180.0), pytest.approx(6.0))
    assert parse("0.5 h", "s").m_as("s") == pytest.approx(1800.0, rel=1e-15)


def test_molar_and_kilocalorie() -> None:
    # 1 mol/L = 1000 mol/m³ (1 L = 10⁻³ m³, SI Brochure Table 8).
    assert parse("1.000 M", "mol/L").m_as("mol/m**3") == pytest.approx(1000.0, rel=1e-12)
    # Thermochemical calorie = 4.184 J (NIST SP 811, from memory; scipy.constants.calorie).
    m = parse("-13.7 ± 0.1 kcal/mol", "kJ/mol")
    assert m.m_as("kJ/mol") == pytest.approx(-13.7 * 4.184, rel=1e-12)
    assert m.m_as("kJ/mol") == pytest.approx(-13.7 * scipy.constants.calorie, rel=1e-12)


def test_specific_heat_capacity_prefixes() -> None:
    # kilo = 10³ (SI Brochure Table 7): 4.184 J/(g·K) = 4184 J/(kg·K).
    m = parse("4.184 ± 0.004 J/(g*K)", "J/(g*K)")
    assert m.m_as("J/(kg*K)") == pytest.approx(4184.0, rel=1e-12)
    assert m.u_as("J/(kg*K)") == pytest.approx(4.0, rel=1e-12)
    # A heat capacity per °C equals one per K (a 1 °C difference is 1 K, SI Brochure 2.3.1).
    assert parse("25 ± 3 J/°C", "J/K").m_as("J/K") == pytest.approx(25.0, rel=1e-15)


def test_to_returns_a_converted_measurement() -> None:
    m = parse("25.00 ± 0.10 °C", "K").to("K")
    assert m.unit == "K"
    assert m.value == pytest.approx(298.15, abs=1e-12)
    assert m.u == pytest.approx(0.10, rel=1e-15)
    assert m.distribution == "normal"
    assert m.text == "25.00 ± 0.10 °C"
    back = m.to("degC")
    assert back.value == pytest.approx(25.0, abs=1e-12)


def test_conversion_to_a_wrong_dimension_is_a_dimensionality_error() -> None:
    with pytest.raises(pint.DimensionalityError):
        parse("100 mL", "mL").m_as("g")


def test_measured_is_frozen() -> None:
    m = parse("100 mL", "mL")
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.value = 2.0  # type: ignore[misc]


# --------------------------------------------------------------------------- dimensions


@pytest.mark.parametrize(
    ("unit", "words"),
    [
        ("mL", "volume"),
        ("L", "volume"),
        ("g", "mass"),
        ("mol/L", "amount concentration"),
        ("M", "amount concentration"),
        ("J/K", "heat capacity"),
        ("J/(g*K)", "specific heat capacity"),
        ("degC", "temperature"),
        ("°C", "temperature"),
        ("K", "temperature"),
        ("s", "time"),
        ("min", "time"),
        ("V", "voltage"),
        ("A", "current"),
        ("mol", "amount of substance"),
        ("g/mL", "density"),
        ("J", "energy"),
        ("kJ", "energy"),
        ("kJ/mol", "molar energy"),
        ("W", "power"),
        ("", "dimensionless number"),
    ],
)
def test_describe_dimension(unit: str, words: str) -> None:
    assert describe_dimension(unit) == words


def test_describe_unknown_dimension_names_it() -> None:
    assert describe_dimension("m**4") == "quantity of dimension [length] ** 4"


# --------------------------------------------------------------------------- rejections


@pytest.mark.parametrize(
    ("text", "expected", "says"),
    [
        ("", "mL", "the entry is empty"),
        ("   ", "mL", "the entry is empty"),
        (None, "mL", "the entry is missing"),
        ("abc mL", "mL", "'abc mL' does not start with a number"),
        ("100 ± -0.1 mL", "mL", "the uncertainty in '100 ± -0.1 mL' is negative"),
        ("100 ± inf mL", "mL", "the uncertainty after '±' in '100 ± inf mL' is not a finite"),
        ("100 ± nan mL", "mL", "the uncertainty after '±' in '100 ± nan mL' is not a finite"),
        ("100 ± mL", "mL", "the uncertainty after '±' in '100 ± mL' is not a finite"),
        ("nan mL", "mL", "the value in 'nan mL' is not finite"),
        ("inf mL", "mL", "the value in 'inf mL' is not finite"),
        ("-inf mL", "mL", "the value in '-inf mL' is not finite"),
        ("1e999 mL", "mL", "too large to represent"),
        ("100 mLL", "mL", "unknown unit 'mLL' in '100 mLL'"),
        ("5 mL)", "mL", "unknown unit 'mL)'"),
        ("2 {x}", "mL", "unknown unit '{x}'"),
        ("100", "mL", "missing unit in '100'"),
        (100, "mL", "missing unit: got the bare number 100"),
        (0.5, "g", "missing unit"),
        ("2 J/K", "J/(g*K)", "got '2 J/K' (a heat capacity)"),
        ("1 V", "A", "got '1 V' (a voltage)"),
        ("0.5 g", "", "got '0.5 g' (a mass)"),
        ("25 C", "K", "'C' is the electric charge unit, write °C or degC"),
        ("-300 °C", "K", "'-300 °C' is below absolute zero"),
        ("-1 K", "K", "below absolute zero"),
        ("5 delta_degC", "K", "temperature difference"),
        ("100 mL ± 1 mL", "mL", "write the uncertainty before the unit"),
        ("100 ± 1 % mL", "mL", "a relative (%) uncertainty is not accepted"),
        ("12,5 mL", "mL", "'12,5 mL' uses a decimal comma"),
        ("1.2.3 mL", "mL", "could not read '1.2.3 mL' as one number"),
        ("(100 mL)", "mL", "could not read '(100 mL)'"),
        ("3:00", "mL", "got the clock time '3:00'"),
        ("3:75", "s", "'3:75' is not a valid m:ss or h:mm:ss time"),
        ("3:00 min", "s", "write clock times as m:ss or h:mm:ss"),
        ("3:00 ± 2", "s", "gives no unit for the uncertainty"),
        ("3:00 ± 2 g", "s", "got '3:00 ± 2 g' (a mass)"),
        (True, "", "got a bool"),
        ([1, 2], "", "got a list"),
        (float("nan"), "", "the value nan is not finite"),
        (float("inf"), "", "the value inf is not finite"),
        (10**400, "", "is not finite"),
        ("3:00 ± -2 s", "s", "must be a finite number >= 0"),
    ],
)
def test_rejections_name_the_field_and_what_was_expected(text: object, expected: str, says: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_measured(text, field="water.volume", expected=expected, source="run-07.toml")
    error = caught.value
    assert error.field == "water.volume"
    assert error.source == "run-07.toml"
    message = str(error)
    assert message.startswith("run-07.toml, field 'water.volume': expected ")
    assert says in message


def test_wrong_dimension_message_reads_as_specified() -> None:
    with pytest.raises(InputError) as caught:
        parse_measured("3.2 g", field="water.volume", expected="mL")
    assert caught.value.message == ("expected a volume like '100.0 ± 0.1 mL', got '3.2 g' (a mass)")
    assert str(caught.value) == "field 'water.volume': " + caught.value.message


@pytest.mark.parametrize(
    ("expected", "words"),
    [
        ("mL", "expected a volume like"),
        ("g", "expected a mass like"),
        ("mol/L", "expected an amount concentration like"),
        ("J/K", "expected a heat capacity like"),
        ("J/(g*K)", "expected a specific heat capacity like"),
        ("K", "expected a temperature like"),
        ("s", "expected a time like"),
        ("V", "expected a voltage like"),
        ("A", "expected a current like"),
        ("mol", "expected an amount of substance like"),
        ("g/mL", "expected a density like"),
        ("", "expected a dimensionless number like"),
    ],
)
def test_message_says_what_was_expected(expected: str, words: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_measured("not a number", field="f", expected=expected)
    assert caught.value.message.startswith(words)
