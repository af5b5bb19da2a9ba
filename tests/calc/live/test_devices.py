"""Device profiles read the lines they describe; units go through pint; bad units are refused by name."""

from __future__ import annotations

import pytest

from calc.errors import InputError
from calc.live.devices import PROFILES, load_profile, make_profile, temperature_unit


@pytest.mark.parametrize(
    ("name", "line", "stamp", "celsius"),
    [
        ("bare-celsius", "21.370", None, 21.370),
        ("bare-celsius", "  -3.5 \r", None, -3.5),
        # T/K = t/°C + 273.15 (SI Brochure, 9th ed., 2.3.1)
        ("stamped-kelvin", "12.0;294.520", 12.0, 21.370),
        ("stamped-kelvin", "12.5\t273.15", 12.5, 0.0),
        ("stamped-kelvin", "3 300.00", 3.0, 26.85),
        # t/°C = (t/°F − 32)/1.8 (NIST SP 811, 2008 ed., B.9, from memory);
        # 98.6 °F = 37 °C and 212 °F = 100 °C (common practice, no source)
        ("labelled-fahrenheit", "TEMP: 98.60 F", None, 37.0),
        ("labelled-fahrenheit", "T=212 °F", None, 100.0),
        ("labelled-fahrenheit", "TEMP 32.00F", None, 0.0),
    ],
)
def test_builtin_profiles_read_known_lines(name, line, stamp, celsius):
    reading = PROFILES[name].read(line)
    assert reading is not None
    assert reading.device_time_s == stamp
    assert reading.temperature_c == pytest.approx(celsius, abs=1e-9)


@pytest.mark.parametrize(
    ("name", "line"),
    [
        ("bare-celsius", ""),
        ("bare-celsius", "21.3.7"),
        ("bare-celsius", "ERR"),
        ("bare-celsius", "nan"),
        ("stamped-kelvin", "294.52"),
        ("stamped-kelvin", "12;abc"),
        ("labelled-fahrenheit", "TEMP: 70.1 C"),
        ("labelled-fahrenheit", "70.1"),
    ],
)
def test_lines_that_do_not_match_are_refused(name, line):
    assert PROFILES[name].read(line) is None


@pytest.mark.parametrize("name", sorted(PROFILES))
def test_each_profile_reads_back_the_lines_it_writes(name):
    profile = PROFILES[name]
    for t, c in ((0.0, 21.0), (61.5, 24.987), (3600.0, -2.25)):
        reading = profile.read(profile.format(t, c))
        assert reading is not None
        # the template keeps 3 decimals of K or °C, 2 of °F (0.01 °F = 0.0056 K)
        assert reading.temperature_c == pytest.approx(c, abs=0.006)
        if profile.has_time:
            assert reading.device_time_s == pytest.approx(t, abs=0.05)


@pytest.mark.parametrize("text", ["°C", "degC", "celsius", "K", "kelvin", "°F", "degF", "fahrenheit"])
def test_temperature_units_are_read_through_pint(text):
    assert temperature_unit(text)


@pytest.mark.parametrize(
    ("text", "said"),
    [
        ("grad Celsius", "unknown unit 'grad Celsius'"),
        ("℃", "unknown unit '℃'"),
        ("", "unknown unit ''"),
        # pint reads a bare C as the coulomb and F as the farad (SI symbols, SI Brochure Table 4)
        ("C", "'C' is not a temperature"),
        ("F", "'F' is not a temperature"),
        ("m", "'m' is not a temperature"),
        ("furlong", "'furlong' is not a temperature"),
    ],
)
def test_unreadable_units_are_refused_by_name(text, said):
    with pytest.raises(InputError) as info:
        temperature_unit(text)
    assert said in str(info.value)
    assert "°C" in str(info.value)


def test_a_profile_needs_a_value_group_and_a_valid_pattern():
    with pytest.raises(InputError, match="no \\(\\?P<value>"):
        make_profile("x", r"\d+", "K")
    with pytest.raises(InputError, match="not a regular expression"):
        make_profile("x", r"(?P<value>\d+", "K")
    with pytest.raises(InputError, match="example line 'T 1' does not match"):
        make_profile("x", r"T(?P<value>\d+)", "K", example="T 1")


def test_a_profile_file_is_read_and_checked(tmp_path):
    path = tmp_path / "probe.toml"
    path.write_text(
        "name = \"bench probe\"\npattern = '^T(?P<time>\\d+)\\s+(?P<value>-?\\d+\\.\\d+)$'\n"
        'unit = "K"\nexample = "T120 294.812"\n',
        encoding="utf-8",
    )
    profile = load_profile(path)
    reading = profile.read("T120 294.812")
    assert profile.name == "bench probe" and profile.has_time
    assert reading.device_time_s == 120.0 and reading.temperature_c == pytest.approx(21.662)
    path.write_text('pattern = "(?P<value>.+)"\nunit = "Celsius degrees"\n', encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_profile(path)
    assert "probe.toml" in str(info.value) and "'Celsius degrees'" in str(info.value)
    with pytest.raises(InputError, match="file not found"):
        load_profile(tmp_path / "missing.toml")
