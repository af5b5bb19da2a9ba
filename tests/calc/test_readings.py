"""Tests for calc.io.readings: the thermometer's CSV log.

Outside facts used as check values (each also named beside its use):
- SI Brochure, 9th ed. (BIPM 2019), 2.3.1: T/K = t/°C + 273.15 (exact).
- SI Brochure, 9th ed., Table 8: 1 min = 60 s, 1 h = 3600 s.
- NIST SP 811 (2008), Appendix B (from memory): T/K = (t/°F + 459.67)/1.8.
- scipy.constants.convert_temperature (a general-purpose reference library).
The temperature traces below are invented demo data from our own lab.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
import scipy.constants

from calc.errors import InputError
from calc.io.readings import MIN_READINGS, Readings, parse_readings, read_readings

N = 30
TIMES_S = np.arange(N) * 5.0 - 30.0  # −30 s … 115 s, mixing at 0 s
TEMPS_C = np.round(21.0 + 0.8 * (1 - np.exp(-np.clip(TIMES_S, 0, None) / 20.0)), 3)


def own_file(times: np.ndarray = TIMES_S, temps: np.ndarray = TEMPS_C) -> str:
    """Return a log with our own header, time_s,temperature_C."""
    rows = "".join(f"{t:g},{c:.3f}\n" for t, c in zip(times, temps, strict=True))
    return "time_s,temperature_C\n" + rows


def rejection(text: str) -> InputError:
    with pytest.raises(InputError) as caught:
        parse_readings(text, source="bench3.csv")
    assert caught.value.source == "bench3.csv"
    assert str(caught.value).startswith("bench3.csv")
    return caught.value


def replace_line(text: str, line: int, new: str) -> str:
    """Return ``text`` with its 1-based ``line`` replaced by ``new``."""
    lines = text.splitlines()
    lines[line - 1] = new
    return "\n".join(lines) + "\n"


# --------------------------------------------------------------------------- accepted forms


def test_our_own_header() -> None:
    r = parse_readings(own_file(), source="run1.csv")
    assert isinstance(r, Readings)
    assert len(r) == N
    assert r.source == "run1.csv"
    assert (r.time_unit, r.temperature_unit) == ("s", "degC")
    assert r.time_s.dtype == np.float64 and r.temperature_K.dtype == np.float64
    np.testing.assert_array_equal(r.time_s, TIMES_S)
    # T/K = t/°C + 273.15 (SI Brochure 9th ed., 2.3.1)
    np.testing.assert_allclose(r.temperature_K, TEMPS_C + 273.15, rtol=0, atol=1e-12)
    np.testing.assert_allclose(
        r.temperature_K,
        scipy.constants.convert_temperature(TEMPS_C, "Celsius", "Kelvin"),
        rtol=0,
        atol=1e-12,
    )
    np.testing.assert_array_equal(r.lines, np.arange(2, N + 2))  # line 1 is the header


def fahrenheit(celsius: np.ndarray) -> np.ndarray:
    # Inverse of T/K = (t/°F + 459.67)/1.8 (NIST SP 811, from memory).
    return (celsius + 273.15) * 1.8 - 459.67


@pytest.mark.parametrize(
    ("header", "sep", "per_s", "to_unit", "time_unit", "temperature_unit"),
    [
        # per_s: file time units per second (1 min = 60 s, 1 h = 3600 s: SI Brochure Table 8)
        ("t/s,T/K", ",", 1.0, lambda c: c + 273.15, "s", "K"),
        ("time (s),temperature (°C)", ",", 1.0, lambda c: c, "s", "degC"),
        ("Time (min),Temperature (°F)", ",", 1 / 60, fahrenheit, "min", "degF"),
        ("time_min,temperature_K", ",", 1 / 60, lambda c: c + 273.15, "min", "K"),
        ("t/s,temp/°C", ",", 1.0, lambda c: c, "s", "degC"),
        ("time (s),T (degC)", ",", 1.0, lambda c: c, "s", "degC"),
        ("time [h],T [°C]", ",", 1 / 3600, lambda c: c, "h", "degC"),
        ("time (ms),T (℃)", ",", 1000.0, lambda c: c, "ms", "degC"),
        ("Time (s)\tTemperature (°C)", "\t", 1.0, lambda c: c, "s", "degC"),
        ("t/s;T/°C", ";", 1.0, lambda c: c, "s", "degC"),
        ('"time (s)","temperature (°F)"', ",", 1.0, fahrenheit, "s", "degF"),
        ("elapsed_time_s, Probe A (deg C)", ",", 1.0, lambda c: c, "s", "degC"),
    ],
)
def test_header_forms(header: str, sep: str, per_s: float, to_unit, time_unit: str, temperature_unit: str) -> None:
    file_times = TIMES_S * per_s
    file_temps = to_unit(TEMPS_C)
    body = "".join(f"{float(t)!r}{sep}{float(c)!r}\n" for t, c in zip(file_times, file_temps, strict=True))
    r = parse_readings(header + "\n" + body, source="x.csv")
    assert (r.time_unit, r.temperature_unit) == (time_unit, temperature_unit)
    np.testing.assert_allclose(r.time_s, TIMES_S, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(r.temperature_K, TEMPS_C + 273.15, rtol=0, atol=1e-9)


def test_fahrenheit_matches_reference_library() -> None:
    temps_f = np.linspace(68.0, 80.0, N).round(2)
    text = "time (s),Temperature (°F)\n" + "".join(f"{t:g},{f:.2f}\n" for t, f in zip(TIMES_S, temps_f, strict=True))
    r = parse_readings(text, source="f.csv")
    reference = scipy.constants.convert_temperature(temps_f, "Fahrenheit", "Kelvin")
    np.testing.assert_allclose(r.temperature_K, reference, rtol=0, atol=1e-9)
    # (77 + 459.67)/1.8 = 298.15 (NIST SP 811 formula, from memory)
    r77 = parse_readings(text.replace(f"{temps_f[3]:.2f}", "77.00"), source="f.csv")
    assert r77.temperature_K[3] == pytest.approx(298.15, abs=1e-9)


def test_no_header_means_seconds_and_celsius() -> None:
    text = "".join(f"{t:g},{c:.3f}\n" for t, c in zip(TIMES_S, TEMPS_C, strict=True))
    r = parse_readings(text, source="bare.csv")
    assert (r.time_unit, r.temperature_unit) == ("s", "degC")
    np.testing.assert_array_equal(r.time_s, TIMES_S)
    np.testing.assert_allclose(r.temperature_K, TEMPS_C + 273.15, atol=1e-12)
    np.testing.assert_array_equal(r.lines, np.arange(1, N + 1))


def test_no_header_with_semicolons_and_decimal_commas() -> None:
    lines = ["12,5;21,37"] + [f"{12.5 + 2 * i:.1f};{21.37 + 0.01 * i:.2f}" for i in range(1, 12)]
    text = "\n".join(line if i == 0 else line.replace(".", ",") for i, line in enumerate(lines))
    r = parse_readings(text, source="eu.csv")
    assert r.time_s[0] == 12.5
    assert r.temperature_K[0] == pytest.approx(21.37 + 273.15, abs=1e-12)
    assert r.time_s[-1] == pytest.approx(34.5)


def test_tab_separated_with_decimal_commas() -> None:
    text = "t/s\tT/°C\n" + "".join(f"{t:g}\t{c:.3f}\n".replace(".", ",") for t, c in zip(TIMES_S, TEMPS_C, strict=True))
    r = parse_readings(text, source="tab.csv")
    np.testing.assert_allclose(r.temperature_K, TEMPS_C + 273.15, atol=1e-12)


@pytest.mark.parametrize(
    ("header", "cells", "unit"),
    [
        ("time (mm:ss),T (°C)", ["0:00", "0:05", "0:59", "1:00", "12:30.5"], "mm:ss"),
        ("time (h:mm:ss),T (°C)", ["0:00:00", "0:00:05", "0:59:59", "1:00:00", "1:02:03"], "h:mm:ss"),
        ("", ["0:00", "0:05", "0:59", "1:00", "12:30.5"], "mm:ss"),
    ],
)
def test_clock_times(header: str, cells: list[str], unit: str) -> None:
    # 1 min = 60 s and 1 h = 3600 s (SI Brochure, Table 8)
    seconds = {
        "0:00": 0,
        "0:05": 5,
        "0:59": 59,
        "1:00": 60,
        "12:30.5": 750.5,
        "0:00:00": 0,
        "0:00:05": 5,
        "0:59:59": 3599,
        "1:00:00": 3600,
        "1:02:03": 3723,
    }
    # 12 more readings after the listed ones keep the file above the minimum length.
    extra = [f"{13 + i}:00" if unit == "mm:ss" else f"{2 + i}:00:00" for i in range(12)]
    times = cells + extra
    body = "".join(f"{t},21.{i:02d}\n" for i, t in enumerate(times))
    r = parse_readings((header + "\n" if header else "") + body, source="clock.csv")
    assert r.time_unit == unit
    expected = [seconds[c] for c in cells]
    np.testing.assert_allclose(r.time_s[: len(cells)], expected)


def test_negative_times_are_fine() -> None:
    r = parse_readings(own_file(TIMES_S - 1000.0), source="neg.csv")
    assert r.time_s[0] == -1030.0


def test_blank_lines_comments_bom_and_crlf() -> None:
    body = own_file().splitlines()
    lines = (
        ["# bench 3, probe B, invented demo run", "", body[0], "# stirrer on"]
        + body[1:5]
        + ["", "   ", "# poured at 0 s"]
        + body[5:]
        + ["", ""]
    )
    text = "\ufeff" + "\r\n".join(lines)
    r = parse_readings(text, source="messy.csv")
    np.testing.assert_array_equal(r.time_s, TIMES_S)
    assert r.lines[0] == 5  # header on line 3, comment on line 4
    assert r.lines[4] == 12  # lines 9-11 are blank, blank, comment
    assert list(r.lines[:6]) == [5, 6, 7, 8, 12, 13]


def test_extra_columns_are_ignored_when_the_header_names_the_first_two() -> None:
    text = "t/s,T/°C,stirrer,note\n" + "".join(
        f"{t:g},{c:.3f},on,bench 3\n" for t, c in zip(TIMES_S, TEMPS_C, strict=True)
    )
    r = parse_readings(text, source="wide.csv")
    np.testing.assert_allclose(r.temperature_K, TEMPS_C + 273.15, atol=1e-12)


def test_fast_and_careful_paths_agree() -> None:
    clean = own_file()
    # A comment between readings sends the file through the line-by-line path.
    lines = clean.splitlines()
    with_comment = "\n".join(lines[:10] + ["# note"] + lines[10:]) + "\n"
    a = parse_readings(clean, source="a.csv")
    b = parse_readings(with_comment, source="a.csv")
    np.testing.assert_array_equal(a.time_s, b.time_s)
    np.testing.assert_array_equal(a.temperature_K, b.temperature_K)
    np.testing.assert_array_equal(a.lines[:9], b.lines[:9])
    np.testing.assert_array_equal(a.lines[9:] + 1, b.lines[9:])


def test_round_trip_through_a_file_with_decimal_commas(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    times = np.cumsum(rng.uniform(1.0, 3.0, size=120)) - 60.0
    temps = 22.0 + rng.normal(0.0, 0.02, size=120).round(3)
    rows = [f"{t:.3f};{c:.3f}".replace(".", ",") for t, c in zip(times, temps, strict=True)]
    text = "# invented run, bench 3\r\nZeit (s);Temperatur (°C)\r\n" + "\r\n".join(rows) + "\r\n"
    path = tmp_path / "run-eu.csv"
    path.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    r = read_readings(path)
    assert r.source == str(path)
    np.testing.assert_allclose(r.time_s, times.round(3), atol=1e-9)
    np.testing.assert_allclose(r.temperature_K, temps + 273.15, atol=1e-9)
    assert r.lines[0] == 3 and r.lines[-1] == 122
    named = read_readings(str(path), source="upload.csv")
    assert named.source == "upload.csv"


def test_windows_1252_degree_sign(tmp_path: Path) -> None:
    path = tmp_path / "legacy.csv"
    path.write_bytes(own_file().replace("temperature_C", "T (°C)").encode("cp1252"))
    r = read_readings(path)
    assert r.temperature_unit == "degC"
    assert len(r) == N


# --------------------------------------------------------------------------- rejections


def test_empty_file() -> None:
    error = rejection("")
    assert error.line is None
    assert "the file is empty; expected a header like 'time_s,temperature_C'" in error.message


def test_only_comments_is_empty() -> None:
    assert "the file is empty" in rejection("# nothing\n\n  \n").message


def test_header_without_readings() -> None:
    error = rejection("time_s,temperature_C\n")
    assert error.line == 1
    assert "found no readings; expected at least 10" in str(error)


def test_too_few_readings() -> None:
    error = rejection(own_file(TIMES_S[: MIN_READINGS - 1], TEMPS_C[: MIN_READINGS - 1]))
    assert "found only 9 readings; expected at least 10" in error.message
    assert error.line == 10


def test_exactly_min_readings_is_enough() -> None:
    r = parse_readings(own_file(TIMES_S[:MIN_READINGS], TEMPS_C[:MIN_READINGS]), source="x")
    assert len(r) == MIN_READINGS == 10


@pytest.mark.parametrize(
    ("line", "row", "says"),
    [
        (7, "5,abc", "the temperature cell 'abc' is not a number; expected a temperature in °C"),
        (7, "five,21.0", "the time cell 'five' is not a number; expected a time in s"),
        (7, "5,", "the temperature cell is empty"),
        (7, ",21.0", "the time cell is empty"),
        (7, "5,nan", "the temperature cell 'nan' is not finite"),
        (7, "inf,21.0", "the time cell 'inf' is not finite"),
        (7, "5,1e999", "the temperature cell '1e999' is not finite"),
        (7, "5", "found 1 cell ('5'); expected 2 cells"),
        (7, "5,21,0", "found 3 cells; expected at most 2 cells, as in the header; with decimal"),
        (7, "0:05,21.0", "the time cell '0:05' is a clock time but the header says s"),
        (7, "1_0,21.0", "the time cell '1_0' is not a number"),
        (12, "25,180.0", "the temperature 180 °C is outside the range -50 to 150 °C"),
        (12, "25,-60.0", "the temperature -60 °C is outside the range"),
    ],
)
def test_bad_cells_name_the_line(line: int, row: str, says: str) -> None:
    error = rejection(replace_line(own_file(), line, row))
    assert error.line == line
    assert f"bench3.csv, line {line}: " in str(error)
    assert says in error.message


def test_time_not_increasing_names_both_lines() -> None:
    text = replace_line(own_file(), 9, f"{TIMES_S[5]:g},21.5")  # line 9 holds TIMES_S[7]
    error = rejection(text)
    assert error.line == 9
    assert f"the time {TIMES_S[5]:g} s is before the time {TIMES_S[6]:g} s on line 8" in (error.message)
    assert "expected increasing times" in error.message


def test_repeated_time_is_kept_for_the_analysis_to_merge() -> None:
    # loggers repeat a time stamp now and then; the reading is kept and calc.deltat.logprep merges it
    text = replace_line(own_file(), 5, f"{TIMES_S[2]:g},21.0")
    readings = parse_readings(text, source="own.csv")
    assert readings.time_s[2] == readings.time_s[3]


def test_all_times_equal() -> None:
    error = rejection(own_file(np.full(N, 12.0)))
    assert "all 30 times are equal (12 s)" in error.message
    assert error.line == 3


def test_kelvin_values_under_a_celsius_header() -> None:
    error = rejection(own_file(TIMES_S, TEMPS_C + 273.15))
    assert error.line == 1
    assert "the temperatures look like kelvin" in error.message
    assert "but the header says °C" in error.message


def test_celsius_values_under_a_kelvin_header() -> None:
    error = rejection(own_file().replace("temperature_C", "temperature_K"))
    assert error.line == 1
    assert "the temperatures look like °C (median" in error.message
    assert "but the header says K" in error.message


def test_kelvin_values_without_a_header() -> None:
    text = "".join(f"{t:g},{c + 273.15:.3f}\n" for t, c in zip(TIMES_S, TEMPS_C, strict=True))
    error = rejection(text)
    assert "look like kelvin" in error.message
    assert "the file has no header, so they are read as °C" in error.message


def test_fahrenheit_out_of_range() -> None:
    text = own_file(TIMES_S, TEMPS_C * 20).replace("temperature_C", "T (°F)")
    error = rejection(text)
    assert "°F is outside the range -58 to 302 °F (-50 to 150 °C)" in error.message


@pytest.mark.parametrize(
    ("header", "says"),
    [
        ("time (fortnights),T/K", "unknown unit 'fortnights' in the header cell"),
        ("t/s,T (Réaumur)", "unknown unit 'Réaumur'"),
        ("time,temperature", "the header cell 'time' (first column) gives no unit"),
        ("t/s,temperature", "the header cell 'temperature' (second column) gives no unit"),
        ("T/K,t/s", "the header names temperature ('T/K') then time ('t/s')"),
        ("time (K),temperature_C", "names a time but gives the temperature unit 'K'"),
        ("t/s,temperature (min)", "names a temperature but gives the time unit 'min'"),
        ("hello", "could not read the first line 'hello' as a header or as two numbers"),
    ],
)
def test_bad_headers(header: str, says: str) -> None:
    error = rejection(own_file().replace("time_s,temperature_C", header))
    assert error.line == 1
    assert says in error.message


def test_three_columns_without_header() -> None:
    text = "".join(f"{t:g},{c:.3f},1\n" for t, c in zip(TIMES_S, TEMPS_C, strict=True))
    error = rejection(text)
    assert error.line == 1
    assert "found 3 cells but the file has no header" in error.message


def test_decimal_commas_with_comma_separator() -> None:
    text = "time_s,temperature_C\n" + "".join(
        f"{t:.1f},{c:.3f}\n".replace(".", ",") for t, c in zip(TIMES_S, TEMPS_C, strict=True)
    )
    error = rejection(text)
    assert error.line == 2
    assert "separate the cells with ';' or a tab" in error.message


@pytest.mark.parametrize(
    ("cell", "says"),
    [
        ("35", "the time cell '35' is not a clock time; expected mm:ss"),
        ("0:75", "the time cell '0:75' is not a valid clock time"),
        ("1:75:00", "the time cell '1:75:00' is not a valid clock time"),
    ],
)
def test_bad_clock_cells(cell: str, says: str) -> None:
    rows = [f"{i}:00,21.0" for i in range(12)]
    rows[4] = f"{cell},21.0"
    error = rejection("time (mm:ss),T (°C)\n" + "\n".join(rows))
    assert error.line == 6
    assert says in error.message


def test_missing_file(tmp_path: Path) -> None:
    path = tmp_path / "nope.csv"
    with pytest.raises(InputError) as caught:
        read_readings(path)
    assert caught.value.source == str(path)
    assert "file not found" in str(caught.value)


def test_directory_is_not_a_log(tmp_path: Path) -> None:
    with pytest.raises(InputError) as caught:
        read_readings(tmp_path, source="upload")
    assert str(caught.value).startswith("upload: cannot read the file")


def test_binary_file(tmp_path: Path) -> None:
    path = tmp_path / "logger.bin"
    path.write_bytes(b"\x00\x01\x02time_s" * 10)
    with pytest.raises(InputError) as caught:
        read_readings(os.fspath(path))
    assert "not a text file" in str(caught.value)
