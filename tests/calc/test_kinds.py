"""The run-kind registry (calc.kinds): every kind is answered in one place and every hook resolves.

These are consistency checks of the registry against the rest of the library (no outside source:
common practice, no source).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from calc import kinds
from calc.io.runfile import KINDS, REQUIRED_SECTIONS, SCHEMA

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize("kind", list(kinds.REGISTRY))
def test_every_hook_resolves_to_a_callable(kind):
    entry = kinds.get_kind(kind)
    assert entry.hooks, f"{kind} has no hooks"
    for name in entry.hooks:
        assert callable(entry.hook(name)), f"{kind}.{name} → {entry.hooks[name]}"
    assert entry.hook("no-such-hook") is None


@pytest.mark.parametrize("kind", list(kinds.REGISTRY))
def test_every_kind_has_a_schema_holding_its_required_sections(kind):
    assert set(kinds.get_kind(kind).required_sections) <= set(SCHEMA[kind])
    assert REQUIRED_SECTIONS[kind] == kinds.get_kind(kind).required_sections


def test_the_run_file_knows_exactly_the_registered_kinds():
    assert KINDS == kinds.kind_names() == tuple(SCHEMA)


def test_titles_are_one_per_kind_and_distinct():
    titles = [k.title for k in kinds.REGISTRY.values()]
    assert len(set(titles)) == len(titles) and all(t and t[0].isupper() for t in titles)


def test_a_kind_either_has_its_own_analysis_or_a_model():
    for k in kinds.REGISTRY.values():
        assert k.has("analyze") != k.has("model"), k.name


def test_questions_about_kinds():
    assert kinds.calibration_kinds() == ("electrical-calibration", "mixing-calibration")
    assert [k.name for k in kinds.REGISTRY.values() if k.two_solution] == ["neutralization", "mixing-calibration"]
    assert [k.name for k in kinds.REGISTRY.values() if k.timed_heater] == ["electrical-calibration"]
    assert [k.name for k in kinds.REGISTRY.values() if k.needs_heat_capacity] == [
        "dissolution",
        "neutralization",
        "reaction",
    ]
    assert "dissolution-with-calibration" not in kinds.plannable_kinds()
    assert kinds.get_kind("dissolution-with-calibration").compared_with == "dissolution"


def test_an_entry_is_frozen_and_an_unknown_kind_is_named():
    entry = kinds.get_kind("dissolution")
    with pytest.raises(dataclasses.FrozenInstanceError):
        entry.title = "x"  # type: ignore[misc]
    with pytest.raises(TypeError):
        entry.hooks["model"] = "x"  # type: ignore[index]
    with pytest.raises(KeyError, match="unknown run kind 'boiling'.*dissolution"):
        kinds.get_kind("boiling")


def test_the_main_output_is_what_each_demo_run_reports():
    from calc.analysis import analyze_run

    seen = set()
    for path in sorted(ROOT.joinpath("fixtures", "demo").glob("*.toml")):
        a = analyze_run(path, with_reference=False)
        entry = kinds.get_kind(a.kind)
        assert a.main == entry.main_output and a.value(a.main)[2] == entry.main_unit, path.name
        seen.add(a.kind)
    assert len(seen) >= 3


def test_importing_the_registry_loads_no_other_calc_module():
    import subprocess
    import sys

    code = "import sys, calc.kinds\nprint(','.join(sorted(m for m in sys.modules if m.startswith('calc.') and m != 'calc.kinds')))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
