"""Instrument exports read by calc.io.logger_formats through calc.io.readings.

Check values from outside the project:
- SI Brochure, 9th ed. (BIPM 2019), 2.3.1: T/K = t/°C + 273.15 (exact).
- Python's ``datetime`` (standard library): elapsed seconds between two date-times.
The logs are invented (our own lab); the shapes follow what bench data loggers commonly
export (common practice, no source): ``##KEY value`` or ``key: value`` metadata, space-separated
columns, a units row, date-time stamps, several probe channels.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from calc.analysis import analyze_run
from calc.cli.commands import cli
from calc.errors import InputError
from calc.io.readings import parse_readings
from calc.simulation.simulator import simulate_dissolution, write_run

N = 20
T1 = np.round(21.0 + 0.01 * np.arange(N), 2)
T2 = np.round(20.5 + 0.02 * np.arange(N), 2)


def teaching_export(with_units_row: bool = True) -> str:
    """A university teaching-lab instrument export: ##KEY value lines, space-separated channels."""
    head = [
        "##INSTRUMENT bench logger B-7 (invented)",
        "##OPERATOR R. Okafor",
        "##DATE 2026-03-04",
        "##INTERVAL 1 s",
        "##CHANNELS 2",
        "",
    ]
    head.append("Time T1 T2" if with_units_row else "Time (s) T1 (°C) T2 (°C)")
    if with_units_row:
        head.append("s degC degC")
    rows = [f"{i:.1f}  {a:.2f}  {b:.2f}" for i, a, b in zip(range(N), T1, T2)]
    return "\n".join(head + rows) + "\n"


@pytest.mark.parametrize("units_row", [True, False])
@pytest.mark.parametrize(("column", "expected"), [("T2", T2), (3, T2), ("t1", T1), (2, T1)])
def test_teaching_lab_export(units_row: bool, column: str | int, expected: np.ndarray) -> None:
    r = parse_readings(teaching_export(units_row), source="lab.txt", column=column)
    np.testing.assert_array_equal(r.time_s, np.arange(N, dtype=float))
    # T/K = t/°C + 273.15 (SI Brochure 9th ed., 2.3.1)
    np.testing.assert_allclose(r.temperature_K, expected + 273.15, atol=1e-9)
    first_data = 9 if units_row else 8  # 1-based line of the first reading, as in the file
    assert r.lines[0] == first_data and r.lines[-1] == first_data + N - 1


def test_several_temperature_columns_need_a_choice() -> None:
    with pytest.raises(InputError) as caught:
        parse_readings(teaching_export(), source="lab.txt")
    e = caught.value
    assert e.field == "temperature_column" and "'T1'" in e.message and "'T2'" in e.message
    assert "\n" not in str(e)


@pytest.mark.parametrize(
    ("column", "says"),
    [
        ("T9", "no column of the log is named 'T9'"),
        (7, "column 7 does not exist"),
        (1, "holds the time, not a temperature"),
    ],
)
def test_wrong_column_is_named(column: str | int, says: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_readings(teaching_export(), source="lab.txt", column=column)
    assert caught.value.field == "temperature_column" and says in caught.value.message


def test_key_value_metadata_and_date_times_across_midnight() -> None:
    start = dt.datetime(2026, 3, 4, 23, 59, 50)
    stamps = [start + dt.timedelta(seconds=2 * i) for i in range(N)]
    rows = [f"{s:%Y-%m-%d %H:%M:%S} {t:.2f}" for s, t in zip(stamps, T1)]
    text = "Device: probe box 3\nOperator: M. Ferreira\nSample rate: 0.5 Hz\n\nDate Time Temperature (°C)\n"
    r = parse_readings(text + "\n".join(rows) + "\n", source="box.txt")
    expected = [(s - start).total_seconds() for s in stamps]  # datetime arithmetic (standard library)
    np.testing.assert_allclose(r.time_s, expected)
    assert r.lines[0] == 6


def test_iso_stamps_in_one_cell_and_clock_times_of_day() -> None:
    rows = [f"2026-03-04T10:15:{i:02d}.5,{t:.2f}" for i, t in enumerate(T1)]
    r = parse_readings("timestamp,T (°C)\n" + "\n".join(rows), source="a.csv")
    np.testing.assert_allclose(r.time_s, np.arange(N))
    rows = [f"10:15:{i:02d};{str(t).replace('.', ',')}" for i, t in enumerate(T1)]
    r = parse_readings("Time;Temp\n;°C\n" + "\n".join(rows), source="b.csv")
    np.testing.assert_allclose(r.time_s, np.arange(N))
    np.testing.assert_allclose(r.temperature_K, T1 + 273.15)


def test_bad_stamp_names_its_line() -> None:
    rows = [f"10:15:{i:02d} {t:.2f}" for i, t in enumerate(T1)]
    rows[4] = "10:61:00 21.04"
    with pytest.raises(InputError) as caught:
        parse_readings("Time T(°C)\n" + "\n".join(rows), source="c.txt")
    assert caught.value.line == 6


def test_temperature_column_without_unit_is_refused() -> None:
    text = "Time (s) T1 T2\n" + "\n".join(f"{i} {a} {b}" for i, a, b in zip(range(N), T1, T2))
    with pytest.raises(InputError) as caught:
        parse_readings(text, source="d.txt", column="T1")
    assert "gives no unit" in caught.value.message and caught.value.line == 1


def test_plain_logs_are_untouched() -> None:
    text = "time_s,temperature_C\n" + "\n".join(f"{i},{t}" for i, t in enumerate(T1))
    assert parse_readings(text, source="e.csv").time_unit == "s"


def _as_export(csv_path: Path, out: Path) -> None:
    """Rewrite a simulated log as a two-channel space-separated export (channel 2 is a second probe)."""
    body = csv_path.read_text().splitlines()[1:]
    rows = [f"{t}  {float(y) + 0.3:.3f}  {y}" for t, y in (line.split(",") for line in body)]
    head = "##LOGGER bench 4 (invented)\n##UNITS s degC degC\nTime Tamb Tcup\ns degC degC\n"
    out.write_text(head + "\n".join(rows) + "\n")


def test_run_file_picks_the_column_and_gives_the_same_result(tmp_path: Path) -> None:
    sim = simulate_dissolution(11, noise=0.002, resolution=0.001)
    toml = write_run(sim, tmp_path, "plain")
    export = tmp_path / "export.txt"
    _as_export(tmp_path / "plain.csv", export)
    text = toml.read_text().replace('readings = "plain.csv"', 'readings = "export.txt"\ntemperature_column = "Tcup"')
    (tmp_path / "export.toml").write_text(text)
    a = analyze_run(toml, with_reference=False)
    b = analyze_run(tmp_path / "export.toml", with_reference=False)
    assert b.gum.values["molar_enthalpy"] == pytest.approx(a.gum.values["molar_enthalpy"], rel=1e-12)
    # the true ΔH of the simulation is 17.2 kJ/mol; within its expanded uncertainty
    assert abs(b.gum.values["molar_enthalpy"] - 17.2) < b.gum.expanded_uncertainty


def test_cli_refuses_an_ambiguous_export_in_one_line(tmp_path: Path) -> None:
    sim = simulate_dissolution(12)
    toml = write_run(sim, tmp_path, "plain")
    _as_export(tmp_path / "plain.csv", tmp_path / "export.txt")
    toml.write_text(toml.read_text().replace('"plain.csv"', '"export.txt"'))
    result = CliRunner().invoke(cli, ["analyze", str(toml), "--monte-carlo", "0"])
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "temperature_column" in lines[0]


def test_run_file_column_must_be_a_name_or_number(tmp_path: Path) -> None:
    sim = simulate_dissolution(13)
    toml = write_run(sim, tmp_path, "plain")
    toml.write_text("temperature_column = 1.5\n" + toml.read_text())
    with pytest.raises(InputError) as caught:
        analyze_run(toml)
    assert caught.value.field == "temperature_column"


def test_mutated_exports_give_a_result_or_a_one_line_error() -> None:
    """Random edits of an export never raise anything but InputError, and errors stay one line."""
    import random

    rng = random.Random(7)
    base = teaching_export()
    pieces = list(" \t,;:#\n.-+e0123456789()[]/°CKsTime_") + ["##", "2026-03-04", "10:15:02", "degC", "nan"]
    for _ in range(400):
        s = list(base)
        for _ in range(rng.randint(1, 6)):
            if rng.random() < 0.4 and s:
                del s[rng.randrange(len(s))]
            else:
                s.insert(rng.randrange(len(s) + 1), rng.choice(pieces))
        for column in (None, "T2", 3):
            try:
                parse_readings("".join(s), source="m.txt", column=column)
            except InputError as exc:
                assert "\n" not in str(exc)


def test_a_long_header_cell_is_refused_quickly() -> None:
    import time

    text = "time" + " " * 20000 + "(s;T (C);x\n" + "".join(f"{i};21.{i};1\n" for i in range(20))
    start = time.perf_counter()
    with pytest.raises(InputError):
        parse_readings(text, source="h.csv")
    assert time.perf_counter() - start < 0.5
