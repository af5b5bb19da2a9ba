"""One title per run kind: the report's heading, the new-run form and the Plan page all use calc.kinds.

A consistency check of the project's own surfaces (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

from calc import kinds
from calc.analysis import analyze_run
from calc.report import format_report
from webapp.planning.views import KIND_TITLES as PLAN_TITLES
from webapp.runs.entry_form import KIND_TITLES as FORM_TITLES

ROOT = Path(__file__).resolve().parents[2]


def test_the_forms_show_the_registry_titles():
    assert set(FORM_TITLES) == set(kinds.kind_names())
    for name, (title, summary) in FORM_TITLES.items():
        assert (title, summary) == (kinds.get_kind(name).title, kinds.get_kind(name).summary)
    assert set(PLAN_TITLES) <= set(kinds.plannable_kinds())
    for name, title in PLAN_TITLES.items():
        assert title == kinds.get_kind(name).title


def test_the_report_heading_carries_the_same_title():
    for path in sorted(ROOT.joinpath("fixtures", "demo").glob("*.toml"))[:3]:
        a = analyze_run(path, with_reference=False)
        head = format_report(a, path.name).splitlines()[0]
        assert head.startswith(f"{path.name} — {kinds.get_kind(a.kind).title}")
