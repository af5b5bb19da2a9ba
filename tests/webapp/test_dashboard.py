"""Class dashboard: each flag triggered by a crafted run, Grubbs as calc.statistics.precision, sorting, access, feedback."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from calc.statistics.precision import grubbs, iso5725
from tests.webapp.class_fixtures import build_section, make_class, simulated_run
from webapp.models import Person
from webapp.services.dashboard import section_dashboard
from webapp.services.errors import NotFound
from webapp.services.imports import files_from_folder, import_files


def test_flags_each_triggered_by_a_crafted_run(session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    board = section_dashboard(session, session.get(Person, lab.ids["coord"]), cl.section_id)
    rows = {r.run_id: r for r in board.rows}
    far, tiny = rows[ids["M04-far.toml"]], rows[ids["M04-tiny.toml"]]
    assert "outlier" in far.flags and "En" in far.flags
    assert "small-dT" in tiny.flags and "small-dT" not in far.flags
    assert abs(tiny.delta_t) < 10 * tiny.resolution
    # Grubbs as calc.statistics.precision (itself checked against ISO 5725-2 critical values in tests/calc)
    values = [r.value for r in board.rows if r.value is not None]
    g = grubbs(values, alpha=0.05)
    assert g.is_outlier and board.rows[g.index].run_id == far.run_id
    assert [r.run_id for r in board.rows if "outlier" in r.flags] == [far.run_id]
    # the run on a calorimeter with a calibration on record is not flagged; the others name no known cup
    assert "no-calibration" not in rows[ids["M01-run0.toml"]].flags
    assert "no-calibration" in rows[ids["M01-run1.toml"]].flags
    # statistics: ISO 5725-2 over the groups' results, as calc.statistics.precision computes it
    st = board.stats[0]
    cells: dict[str, list[float]] = {}
    for r in board.rows:
        cells.setdefault(r.group, []).append(r.value)
    p = iso5725(list(cells.values()))
    assert st.s_r == pytest.approx(p.s_r) and st.s_R == pytest.approx(p.s_R)
    # feedback names the input that limited the result and the flag in plain words
    m04 = " ".join(board.feedback["M04"])
    assert "largest part of the uncertainty" in m04 and "thermometer" in m04 and "Grubbs" in m04


def test_flags_for_drift_and_short_after_period(session: Any, lab: Any, tmp_path: Path) -> None:
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "drift"
    simulated_run(d, "M01-drift", 300, t_env_offset=6.0, tau_h=600.0)  # strong exchange with a warm room
    simulated_run(d, "M02-short", 301, after_s=200.0)  # log stops soon after the change
    import_files(session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(d))
    board = section_dashboard(session, session.get(Person, lab.ids["coord"]), cl.section_id)
    flags = {r.group: r.flags for r in board.rows}
    assert "drift" in flags["M01"]
    assert "short-after" in flags["M02"]


def test_sorting_and_access(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    r = client.get(f"/api/sections/{cl.section_id}/dashboard?sort=value&dir=desc", headers=lab.auth("coord"))
    values = [row["value"] for row in r.get_json()["rows"]]
    assert values == sorted(values, reverse=True)
    assert (
        client.get(f"/api/sections/{cl.section_id}/dashboard?sort=bogus", headers=lab.auth("coord")).status_code == 400
    )
    # a student of another section (a1 is in Group A, no section) cannot see it
    assert client.get(f"/api/sections/{cl.section_id}/dashboard", headers=lab.auth("a1")).status_code == 404
    assert client.get(f"/api/courses/{cl.course_id}/dashboard", headers=lab.auth("a1")).status_code == 403
    with pytest.raises(NotFound):
        section_dashboard(session, session.get(Person, lab.ids["b1"]), cl.section_id)
    from tests.webapp.conftest import sign_in

    sign_in(client, "coord@lab.example")
    page = client.get(f"/classes/sections/{cl.section_id}/dashboard?sort=en&dir=desc")
    html = page.get_data(as_text=True)
    assert page.status_code == 200 and "<svg" in html and "Feedback per group" in html and "outlier" in html
    assert client.get(f"/classes/courses/{cl.course_id}/dashboard").status_code == 200
    assert client.get(f"/classes/sections/{cl.section_id}/dashboard?sort=x").status_code == 400
