"""Hess's law and the ``cupcal hess`` command.

Check values: the NBS 1982 tables (Wagman et al.; values from memory), docs/methods.md
§3.3 and §4.5, and textbook-level facts marked as such.
"""

from __future__ import annotations

import json
from fractions import Fraction

import pytest
from click.testing import CliRunner

from calc.cli.hess import hess_command, parse_temperature
from calc.errors import InputError
from calc.refdata.hess import formation_enthalpy, hess


def test_calcium_chloride_dissolution() -> None:
    # NBS 1982 (from memory): CaCl2(s) -795.8, Ca2+(aq) -542.83, Cl-(aq) -167.159 kJ/mol;
    # the tabulated ΔsolH° is -81.33 kJ/mol (CRC table, from memory).
    r = hess("CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)")
    assert r.value == pytest.approx(-542.83 + 2 * -167.159 + 795.8, abs=1e-9)
    assert r.value == pytest.approx(-81.33, abs=0.05)
    assert r.unit == "kJ/mol"
    assert r.u > 0
    assert "Wagman" in r.source
    assert [str(t.coefficient) for t in r.terms] == ["-1", "1", "2"]


def test_neutralization_of_strong_acid_and_base() -> None:
    # docs/methods.md §3.3: -55.815 kJ/mol from CODATA key values (memory); NBS 1982 gives
    # -55.836. Both within 2u of each other.
    r = hess("H+(aq) + OH-(aq) -> H2O(l)")
    assert r.value == pytest.approx(-55.836, abs=1e-9)
    assert abs(r.value + 55.815) <= 2 * r.u


def test_combustion_of_methane() -> None:
    # Standard enthalpy of combustion of methane to liquid water: -890.3 kJ/mol
    # (handbook value, from memory).
    r = hess("CH4(g) + 2 O2(g) -> CO2(g) + 2 H2O(l)")
    assert r.value == pytest.approx(-890.3, abs=0.5)


def test_formation_reaction_returns_the_table_value() -> None:
    r = hess("H2(g) + 1/2 O2(g) -> H2O(l)")
    assert r.value == pytest.approx(formation_enthalpy("H2O(l)").value)
    assert r.terms[1].coefficient == Fraction(-1, 2)
    r2 = hess("2 H2(g) + O2(g) = 2 H2O(l)")
    assert r2.value == pytest.approx(2 * r.value)
    r3 = hess("H2(g) + 0.5 O2(g) → H2O(l)")
    assert r3.value == pytest.approx(r.value)


def test_spacing_and_hydrate_notation() -> None:
    a = hess("CuSO4.5H2O(s) -> Cu2+(aq) + SO42-(aq) + 5 H2O(l)")
    b = hess("CuSO4·5H2O(s)->Cu2+(aq)+SO4^2-(aq)+5H2O(l)")
    assert a.value == pytest.approx(b.value)
    assert a.equation == b.equation == "CuSO4·5H2O(s) -> Cu2+(aq) + SO4^2-(aq) + 5 H2O(l)"


def test_unbalanced_atoms_and_charge_are_named() -> None:
    with pytest.raises(InputError) as info:
        hess("CaCl2(s) -> Ca2+(aq) + Cl-(aq)")
    msg = str(info.value)
    assert "Cl: 2 on the left, 1 on the right" in msg
    assert "charge not balanced" in msg


def test_unbalanced_charge_alone_is_named() -> None:
    with pytest.raises(InputError) as info:
        hess("Cu(s) + 2 H+(aq) -> Cu2+(aq) + H2(g) + Cl-(aq)")
    assert "Cl: 0 on the left, 1 on the right" in str(info.value)
    with pytest.raises(InputError) as info:
        hess("Fe2+(aq) -> Fe3+(aq)")
    assert "charge not balanced: 2 on the left, 3 on the right" in str(info.value)


def test_unknown_species_are_named_with_the_states_the_table_has() -> None:
    with pytest.raises(InputError) as info:
        hess("KCl(aq) -> K+(aq) + Cl-(aq)")
    msg = str(info.value)
    assert "'KCl(aq)'" in msg and "KCl(s)" in msg
    with pytest.raises(InputError) as info:
        hess("Xe(g) -> Xe(aq)")
    assert "'Xe(g)'" in str(info.value) and "'Xe(aq)'" in str(info.value)


@pytest.mark.parametrize(
    "bad",
    [
        "NaCl -> Na+ + Cl-",
        "NaCl(s)",
        "a -> b -> c",
        "NaCl(s) -> Na+(plasma) + Cl-(aq)",
        "-> H2O(l)",
        "0 H2(g) -> H2(g)",
    ],
)
def test_malformed_equations_are_input_errors(bad: str) -> None:
    with pytest.raises(InputError):
        hess(bad)


def test_kirchhoff_correction_of_neutralization() -> None:
    # docs/methods.md §4.5: with ΔrCp ≈ +0.215 kJ/(mol K), a run at 20 degC is about 1.1 kJ/mol
    # more exothermic than at 25 degC.
    r25 = hess("H+(aq) + OH-(aq) -> H2O(l)")
    r20 = hess("H+(aq) + OH-(aq) -> H2O(l)", 293.15)
    assert r20.value - r25.value == pytest.approx(-1.1, abs=0.1)
    assert r20.value == pytest.approx(r25.value + r25.delta_cp * -5.0)
    assert r20.u > r25.u
    assert r20.temperature_K == 293.15


def test_kirchhoff_needs_heat_capacities() -> None:
    # The table has no Cp° for Ca2+(aq) (NBS 1982 lists none; from memory).
    with pytest.raises(InputError) as info:
        hess("CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)", 310.0)
    assert "Ca2+(aq)" in str(info.value)


def test_kirchhoff_range() -> None:
    with pytest.raises(InputError):
        hess("H+(aq) + OH-(aq) -> H2O(l)", 500.0)


# ---------------------------------------------------------------------------- CLI


def test_cli_json_object() -> None:
    result = CliRunner().invoke(hess_command, ["CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)", "--json"])
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert {"equation", "value", "standard_uncertainty", "unit", "terms", "source"} <= set(data)
    assert data["unit"] == "kJ/mol"
    assert data["value"] == pytest.approx(hess("CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)").value)
    assert len(data["terms"]) == 3


def test_cli_human_output_and_temperature() -> None:
    result = CliRunner().invoke(hess_command, ["H+(aq) + OH-(aq) -> H2O(l)", "--temperature", "20 degC"])
    assert result.exit_code == 0
    assert "293.15 K" in result.stdout and "Kirchhoff" in result.stdout and "source:" in result.stdout


@pytest.mark.parametrize(
    "args",
    [["NaCl(s) -> Na+(aq)"], ["Xe(g) -> Xe(aq)"], ["H+(aq) + OH-(aq) -> H2O(l)", "--temperature", "hot"]],
)
def test_cli_errors_are_one_line_exit_2(args: list[str]) -> None:
    result = CliRunner().invoke(hess_command, args)
    assert result.exit_code == 2
    assert result.stdout == ""
    assert len(result.stderr.strip().splitlines()) == 1
    assert "Traceback" not in result.stderr
    assert result.stderr.startswith("cupcal hess: error:")


@pytest.mark.parametrize(("text", "kelvin"), [("310 K", 310.0), ("37 degC", 310.15), ("298.15", 298.15)])
def test_parse_temperature(text: str, kelvin: float) -> None:
    assert parse_temperature(text) == pytest.approx(kelvin)
