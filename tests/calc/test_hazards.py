"""Hazard data: GHS statements, pictograms and the general caution.

Check values: the GHS / EU CLP Regulation (EC) No 1272/2008 statement wording and
pictogram assignment (from memory); harmonised classifications of common reagents
(from memory).
"""

from __future__ import annotations

import tomllib
from importlib import resources

import pytest

from calc.refdata.hazards import cautions_for, general_caution
from calc.refdata.reference import tabulated_solution_enthalpies


def _data() -> tuple[dict, dict]:
    base = resources.files("calc.refdata") / "data"
    hazards = tomllib.loads((base / "hazards.toml").read_text("utf-8"))["substance"]
    ghs = tomllib.loads((base / "ghs.toml").read_text("utf-8"))
    return hazards, ghs


def test_statement_texts_and_pictogram_names() -> None:
    # GHS / CLP wording (from memory).
    _, ghs = _data()
    assert ghs["hazard_statements"]["H314"] == "Causes severe skin burns and eye damage"
    assert ghs["hazard_statements"]["H290"] == "May be corrosive to metals"
    assert ghs["hazard_statements"]["H319"] == "Causes serious eye irritation"
    assert ghs["pictograms"]["GHS05"] == "corrosion"
    assert ghs["pictograms"]["GHS07"] == "exclamation mark"
    assert set(ghs["pictograms"]) == {f"GHS0{i}" for i in range(1, 10)}


def test_every_code_in_the_substance_data_has_a_text() -> None:
    hazards, ghs = _data()
    for key, entry in hazards.items():
        for h in entry.get("hazard_statements", []):
            assert h in ghs["hazard_statements"], (key, h)
        for p in entry.get("pictograms", []):
            assert p in ghs["pictograms"], (key, p)
        assert entry.get("not_classified") or entry.get("hazard_statements"), key


# Pictogram each statement calls for (CLP Annex I / GHS; from memory). Precedence (CLP
# Art. 26): no exclamation mark where the skull and crossbones applies, and none for
# skin or eye irritation where the corrosion pictogram applies.
_NEEDS = {
    "H220": "GHS02",
    "H225": "GHS02",
    "H226": "GHS02",
    "H228": "GHS02",
    "H261": "GHS02",
    "H271": "GHS03",
    "H272": "GHS03",
    "H280": "GHS04",
    "H290": "GHS05",
    "H314": "GHS05",
    "H318": "GHS05",
    "H301": "GHS06",
    "H311": "GHS06",
    "H331": "GHS06",
    "H370": "GHS08",
    "H400": "GHS09",
    "H410": "GHS09",
    "H411": "GHS09",
}
_DANGER = {"H220", "H225", "H271", "H301", "H311", "H314", "H318", "H331", "H370"}


@pytest.mark.parametrize("key", list(_data()[0]))
def test_pictograms_and_signal_word_follow_the_statements(key: str) -> None:
    entry = _data()[0][key]
    hs = set(entry.get("hazard_statements", []))
    pics = set(entry.get("pictograms", []))
    expected = {_NEEDS[h] for h in hs if h in _NEEDS}
    if hs & {"H302", "H332", "H335"} and "GHS06" not in expected:
        expected.add("GHS07")
    if hs & {"H315", "H319"} and not expected & {"GHS05", "GHS06"}:
        expected.add("GHS07")
    assert pics == expected
    if hs & _DANGER:
        assert entry["signal_word"] == "Danger"
    if not hs:
        assert "signal_word" not in entry


@pytest.mark.parametrize("formula", ["HCl", "NaOH", "H2SO4", "NH4NO3", "CaCl2", "KOH", "Mg"])
def test_substances_students_handle_have_data(formula: str) -> None:
    c = cautions_for([formula])[0]
    assert c.hazard_statements and c.pictograms and c.signal_word in {"Danger", "Warning"}


def test_hydrochloric_acid_and_sodium_hydroxide_are_corrosive() -> None:
    # EU CLP harmonised classification (from memory): both Skin Corr. (H314), GHS05.
    for formula in ("HCl", "NaOH"):
        c = cautions_for([formula])[0]
        assert "H314: Causes severe skin burns and eye damage" in c.hazard_statements
        assert "GHS05 (corrosion)" in c.pictograms
        assert c.signal_word == "Danger"


def test_general_caution_is_always_last() -> None:
    out = cautions_for(["KCl", "HCl"])
    assert out[-1].substance == "general"
    assert out[-1].note == general_caution()
    text = general_caution().lower()
    assert "eye protection" in text and "safety data sheet" in text and "local codes" in text
    assert cautions_for([])[-1].note == general_caution()


def test_unknown_substance_says_so() -> None:
    c = cautions_for(["KBr"])[0]
    assert c.hazard_statements == [] and "no hazard data" in c.note and "safety data sheet" in c.note
    c = cautions_for(["not a formula"])[0]
    assert "no hazard data" in c.note


def test_not_classified_and_hydrates_and_duplicates() -> None:
    out = cautions_for(["NaCl", "CuSO4·5H2O", "CuSO4", "NaCl(s)"])
    assert len(out) == 3  # NaCl, copper sulfate (two forms, one entry), general
    assert "not classified" in out[0].note
    assert "H410: Very toxic to aquatic life with long lasting effects" in out[1].hazard_statements
    assert cautions_for(["THAM"])[0].substance.startswith("THAM")


def test_exothermic_dissolution_note_uses_the_reference_data() -> None:
    # ΔsolH°(NaOH) = -44.51 kJ/mol (CRC table, from memory) is below -40 kJ/mol.
    assert "44 kJ/mol" in cautions_for(["NaOH"])[0].note or "45 kJ/mol" in cautions_for(["NaOH"])[0].note
    assert "hot" not in cautions_for(["KCl"])[0].note


def test_every_tabulated_solute_has_data_or_says_it_has_none() -> None:
    for ref in tabulated_solution_enthalpies():
        c = cautions_for([ref.formula])[0]
        assert c.hazard_statements or "not classified" in c.note or "no hazard data" in c.note
