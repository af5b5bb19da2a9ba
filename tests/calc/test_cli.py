"""The command line: report, JSON records with the public keys, errors and exit codes."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from click.testing import CliRunner

from calc.cli.commands import cli
from tests.calc.closed_form import probe_temperature, write_run

P = dict(T_inf=295.15, k=1 / 3600, T0=294.9, t_m=240.0, D=-1.9, k_r=1 / 30, s=1 / 4)

DISSOLUTION = """[calorimeter]
heat_capacity = "20.0 ± 2.0 J/K"
[water]
volume = "100.00 ± 0.08 mL"
density = "0.9978 ± 0.0002 g/mL"
[solute]
formula = "KCl"
mass = "3.7276 ± 0.0002 g"
[mixture]
specific_heat_capacity = "4.130 ± 0.010 J/(g*K)"
"""


@pytest.fixture
def run_file(tmp_path):
    t = np.arange(0.0, 1200.0, 2.0)
    y = probe_temperature(t, **P) - 273.15
    y = y + np.random.default_rng(3).normal(0, 0.003, t.size)
    return write_run(
        tmp_path,
        t=t,
        y_C=np.round(y, 3),
        extra_toml=DISSOLUTION,
        resolution="0.001 K",
        mixing_time="240.0 ± 1.0 s",
        decimals=3,
    )


def test_json_record_has_exactly_the_public_keys(run_file):
    res = CliRunner().invoke(cli, ["analyze", "--json", "--monte-carlo", "0", str(run_file)])
    assert res.exit_code == 0, res.output
    rec = json.loads(res.output.strip().splitlines()[0])
    assert set(rec) == {
        "input",
        "kind",
        "corrected_delta_t",
        "heat",
        "molar_enthalpy",
        "expanded_uncertainty",
        "coverage_factor",
        "method",
        "budget",
        "warnings",
        "checks",
        "comparison",
        # the issue on real bench logs asks every output to show the mixing time (and whether it was
        # detected), the periods, the readings rejected as spikes and the gaps
        "mixing_time",
        "periods",
        "rejected_readings",
        "gaps_s",
    }
    assert rec["mixing_time"] == {"value": 240.0, "standard_uncertainty": 1.0, "unit": "s", "detected": False}
    assert rec["rejected_readings"] == [] and rec["gaps_s"] == []
    assert rec["input"] == str(run_file)
    # the verdict in the JSON is the one the text report prints
    cmp_ = rec["comparison"]
    assert cmp_["judged_against"] in ("reference at the run's conditions", "reference as published")
    text = CliRunner().invoke(cli, ["analyze", "--monte-carlo", "0", str(run_file)]).output
    assert f"verdict against the {cmp_['judged_against']}" in text and f"E_n = {cmp_['En']:+.2f}" in text
    assert rec["corrected_delta_t"]["unit"] == "K"
    assert rec["heat"]["unit"] == "J"
    assert rec["molar_enthalpy"]["unit"] == "kJ/mol"
    assert rec["method"] == "regnault-pfaundler"
    # the hand calculation: ΔH = −(m c_p + C) ΔT / n with the file's own inputs
    m = 100.00 * 0.9978 + 3.7276
    n = 3.7276 / 74.5512
    dT = rec["corrected_delta_t"]["value"]
    assert rec["molar_enthalpy"]["value"] == pytest.approx(-(m * 4.130 + 20.0) * dT / n / 1000, rel=1e-9)
    assert dT == pytest.approx(P["D"], rel=0.005)
    assert rec["expanded_uncertainty"] == pytest.approx(
        rec["coverage_factor"] * rec["molar_enthalpy"]["standard_uncertainty"], rel=1e-9
    )
    assert abs(sum(b["share"] for b in rec["budget"]) - 1) < 1e-9


def test_bad_input_gives_an_error_record_and_exit_2_while_others_run(run_file, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(run_file.read_text().replace('volume = "100.00 ± 0.08 mL"', 'volume = "100.00 ± 0.08 kg"'))
    missing = tmp_path / "nope.toml"
    res = CliRunner().invoke(cli, ["analyze", "--json", "--monte-carlo", "0", str(bad), str(run_file), str(missing)])
    assert res.exit_code == 2
    recs = [json.loads(line) for line in res.output.strip().splitlines()]
    assert recs[0]["input"] == str(bad) and "water.volume" in recs[0]["error"]
    assert set(recs[0]) == {"input", "error"}
    assert "molar_enthalpy" in recs[1]
    assert recs[2]["input"] == str(missing) and "not found" in recs[2]["error"]


def test_text_report_shows_result_budget_and_cautions(run_file):
    res = CliRunner().invoke(cli, ["analyze", "--seed", "1", "--monte-carlo", "20000", str(run_file)])
    assert res.exit_code == 0, res.output
    out = res.output
    assert "corrected ΔT" in out and "ΔH" in out and "k = " in out
    assert "uncertainty budget" in out
    assert "Monte Carlo" in out
    assert "eye protection" in out.lower()


def test_bad_csv_line_is_named(run_file):
    csv = run_file.with_suffix(".csv")
    lines = csv.read_text().splitlines()
    lines[10] = "18.0,abc"
    csv.write_text("\n".join(lines) + "\n")
    res = CliRunner().invoke(cli, ["analyze", "--json", "--monte-carlo", "0", str(run_file)])
    assert res.exit_code == 2
    rec = json.loads(res.output)
    assert "line 11" in rec["error"]


def test_console_script_runs_without_traceback(tmp_path):
    bad = tmp_path / "x.toml"
    bad.write_text("kind = 3\n")
    proc = subprocess.run([sys.executable, "-m", "calc.cli", "analyze", str(bad)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert "kind" in proc.stderr


def test_every_command_in_the_static_table_loads_and_its_help_matches():
    # `cupcal --help` reads the one-line help from calc/cli/commands.py::COMMANDS without importing
    # any command; the table must say what each command's own docstring says.
    import importlib

    import click

    from calc.cli.commands import COMMANDS

    for name, entry in COMMANDS.items():
        module_name, _, attribute = entry.target.partition(":")
        command = getattr(importlib.import_module(module_name), attribute)
        assert isinstance(command, click.Command), name
        assert command.name == name
        first_line = (command.help or "").strip().splitlines()[0]
        assert first_line == entry.help, name


def test_help_imports_no_command():
    code = (
        "import sys\n"
        "from calc.cli.commands import cli\n"
        "try:\n"
        "    cli(['--help'], prog_name='cupcal')\n"
        "except SystemExit:\n"
        "    pass\n"
        "heavy = ('numpy', 'scipy', 'pint', 'flask', 'sqlalchemy', 'calc.analysis', 'webapp')\n"
        "print('LOADED', ','.join(m for m in heavy if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert "analyze" in out.stdout and "serve" in out.stdout
    assert out.stdout.strip().splitlines()[-1] == "LOADED"
