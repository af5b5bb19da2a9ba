"""Withdraw, exclude and accept; comments; marks; feedback said once. Audited and reversible.

Check values: the section's statistics after excluding a run are recomputed by hand from the
remaining results (arithmetic mean and sample SD, common practice, no source); E_n bands by ISO
13528's |E_n| ≤ 1 rule.
"""

from __future__ import annotations

import statistics
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.class_fixtures import build_section
from tests.webapp.conftest import sign_in, upload
from webapp.models import AuditEntry, Person, Result
from webapp.services.dashboard import section_dashboard


def test_run_flagged_reads_the_checks_of_a_result() -> None:
    from webapp.services.review import run_flagged

    r = Result()
    assert not run_flagged(r) and not run_flagged(None)
    r.checks = [{"name": "mass", "severity": "info"}]
    assert not run_flagged(r)
    r.checks = [{"name": "mass", "severity": "info"}, {"name": "dT", "severity": "warning", "message": "…"}]
    assert run_flagged(r)
    r.checks = ["not a dict", {"severity": "error?"}]
    assert not run_flagged(r)


def _review(client: Any, lab: Any, who: str, run_id: int, action: str, reason: str = "a reason") -> Any:
    return client.post(f"/api/runs/{run_id}/review", json={"action": action, "reason": reason}, headers=lab.auth(who))


def test_withdraw_by_the_author_while_open_and_by_staff_after(client: Any, session: Any, lab: Any) -> None:
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    assert _review(client, lab, "b1", run_id, "withdraw").status_code == 404  # another group's run
    assert _review(client, lab, "a2", run_id, "withdraw").status_code == 403  # same group, not the author
    assert _review(client, lab, "a1", run_id, "withdraw", "  ").status_code == 400  # a reason is required
    assert _review(client, lab, "a1", run_id, "exclude").status_code == 403  # staff only
    r = _review(client, lab, "a1", run_id, "withdraw", "typed the mass wrong")
    assert r.status_code == 200 and r.get_json()["withdrawn"] and not r.get_json()["included_in_statistics"]
    shown = client.get(f"/api/runs/{run_id}", headers=lab.auth("a2")).get_json()["review"]
    assert shown["withdrawn"] and shown["withdrawn_reason"] == "typed the mass wrong"
    assert _review(client, lab, "a1", run_id, "withdraw").status_code == 409  # already withdrawn
    assert _review(client, lab, "a1", run_id, "restore", "it was right after all").status_code == 200
    # once signed, only staff may withdraw
    assert client.post(f"/api/runs/{run_id}/lock", headers=lab.auth("a1")).status_code == 200
    assert _review(client, lab, "a1", run_id, "withdraw").status_code == 409
    assert _review(client, lab, "tech", run_id, "withdraw", "signed by mistake").status_code == 200
    audit = session.scalars(
        sa.select(AuditEntry).where(
            AuditEntry.entity == "run", AuditEntry.entity_id == run_id, AuditEntry.field.like("withdrawn%")
        )
    ).all()
    assert [(a.field, a.new) for a in audit] == [
        ("withdrawn", "yes"),
        ("withdrawn_reason", "typed the mass wrong"),
        ("withdrawn", "no"),
        ("withdrawn_reason", "it was right after all"),
        ("withdrawn", "yes"),
        ("withdrawn_reason", "signed by mistake"),
    ]
    # the run page says so; the student sees it too
    sign_in(client, "a1@lab.example")
    html = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert "Withdrawn</strong>: signed by mistake" in html and 'class="badge">withdrawn' in html


def test_excluding_a_run_takes_it_out_of_the_statistics_marks_and_grubbs(
    client: Any, session: Any, lab: Any, tmp_path: Path
) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    coord = session.get(Person, lab.ids["coord"])
    far = ids["M04-far.toml"]
    before = section_dashboard(session, coord, cl.section_id)
    assert "outlier" in next(r for r in before.rows if r.run_id == far).flags
    assert _review(client, lab, "coord", far, "exclude", "mass typo").status_code == 200
    session.expire_all()
    board = section_dashboard(session, coord, cl.section_id)
    rows = {r.run_id: r for r in board.rows}
    assert rows[far].status == "excluded" and not rows[far].included and rows[far].mark.points is None
    kept = [r.value for r in board.rows if r.run_id != far]
    st = board.stats[0]
    assert st.n == 7 and st.mean == pytest.approx(statistics.fmean(kept))
    assert st.sd == pytest.approx(statistics.stdev(kept))
    assert "outlier" not in rows[far].flags
    # reversible
    assert _review(client, lab, "coord", far, "include", "checked: keep it").status_code == 200
    session.expire_all()
    assert section_dashboard(session, coord, cl.section_id).stats[0].n == 8


def test_accept_only_a_flagged_run(client: Any, session: Any, lab: Any, monkeypatch: Any) -> None:
    import webapp.services.review as review

    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    r = _review(client, lab, "coord", run_id, "accept", "looked fine")
    assert r.status_code == 400 and "no plausibility flag" in r.get_json()["error"]
    monkeypatch.setattr(review, "run_flagged", lambda result: True)
    assert _review(client, lab, "a1", run_id, "accept").status_code == 403
    r = _review(client, lab, "coord", run_id, "accept", "the long fore period is real")
    assert r.status_code == 200 and r.get_json()["accepted"]
    assert _review(client, lab, "coord", run_id, "unaccept", "on second thought").status_code == 200


def test_comments_and_marks(app: Any, client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    run_id = ids["M01-run1.toml"]
    # a student of M01 (Ada, from the roster) reads what staff wrote; a student cannot write
    ada = session.scalar(sa.select(Person).where(Person.email == "ada@lab.example"))
    group_id = ada.group_id
    r = client.post(f"/api/runs/{run_id}/comments", json={"body": "Good drift lines."}, headers=lab.auth("tech"))
    assert r.status_code == 201
    assert (
        client.post(f"/api/runs/{run_id}/comments", json={"body": "x" * 4001}, headers=lab.auth("tech")).status_code
        == 400
    )
    assert (
        client.post(
            f"/api/groups/{group_id}/comments", json={"body": "Weigh by difference."}, headers=lab.auth("coord")
        ).status_code
        == 201
    )
    assert client.post(f"/api/runs/{run_id}/comments", json={"body": "hi"}, headers=lab.auth("a1")).status_code in (
        403,
        404,
    )
    # the scheme: 1=6, 2=3, *=0 on |E_n| and 2 %=4, 5 %=2, *=0 on the relative error
    r = client.put(
        f"/api/sections/{cl.section_id}/marking-scheme",
        json={"en": "1=6, 2=3, *=0", "relative": "2%=4, 5%=2, *=0"},
        headers=lab.auth("coord"),
    )
    assert r.status_code == 200, r.get_json()
    bad = client.put(
        f"/api/sections/{cl.section_id}/marking-scheme",
        json={"en": "2=3, 1=6, *=0", "relative": "*=0"},
        headers=lab.auth("coord"),
    )
    assert bad.status_code == 400 and bad.get_json()["field"] == "en_bands"
    assert (
        client.put(
            f"/api/sections/{cl.section_id}/marking-scheme",
            json={"en": "*=1", "relative": "*=0"},
            headers=lab.auth("tech"),
        ).status_code
        == 403
    )
    coord = session.get(Person, lab.ids["coord"])
    session.expire_all()
    row = next(x for x in section_dashboard(session, coord, cl.section_id).rows if x.run_id == run_id)
    en, rel = abs(row.verdict.En), abs(row.verdict.relative_difference) * 100
    expect = (6 if en <= 1 else 3 if en <= 2 else 0) + (4 if rel <= 2 else 2 if rel <= 5 else 0)
    assert row.mark.points == expect and row.mark.source == "scheme"
    # a mark by hand needs a reason; it is audited and can be cleared
    assert client.put(f"/api/runs/{run_id}/mark", json={"points": 9}, headers=lab.auth("coord")).status_code == 400
    assert (
        client.put(
            f"/api/runs/{run_id}/mark", json={"points": 9, "reason": "good lab book"}, headers=lab.auth("coord")
        ).status_code
        == 200
    )
    session.expire_all()
    row = next(x for x in section_dashboard(session, coord, cl.section_id).rows if x.run_id == run_id)
    assert row.mark.points == 9 and row.mark.source == "set by hand"
    ada_client = app.test_client()
    from tests.webapp.conftest import PASSWORD
    from webapp.services.people import hash_password

    ada.password_hash = hash_password(PASSWORD, "scrypt:1024:8:1")
    session.commit()
    sign_in(ada_client, "ada@lab.example")
    html = ada_client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert "Good drift lines." in html and "Weigh by difference." in html and "9 points" in html
    assert 'name="body"' not in html  # no comment form for a student
    assert (
        client.put(
            f"/api/runs/{run_id}/mark", json={"points": None, "reason": "back to the scheme"}, headers=lab.auth("coord")
        ).status_code
        == 200
    )
    fields = [
        a.field
        for a in session.scalars(
            sa.select(AuditEntry).where(AuditEntry.entity_id == run_id, AuditEntry.entity == "run")
        )
    ]
    assert fields.count("mark_points") == 2 and "comment" in fields


def test_feedback_every_group_shares_is_said_once() -> None:
    from webapp.services.dashboard_rows import Row
    from webapp.services.feedback import split_feedback

    def row(run_id: int, group: str, flags: list[str]) -> Row:
        r = Row(run_id, "", "dissolution", 1, "S", group, "", "m", "kJ/mol", 17.0, 0.1, 0.2, 1.0, 0.01, 0.1, 17.0)
        r.top_input, r.top_label, r.top_share = "calorimeter.heat_capacity", "calorimeter heat capacity", 0.6
        r.flags = list(flags)
        return r

    rows = [row(1, "G1", []), row(2, "G2", ["drift"]), row(3, "G3", [])]
    common, per = split_feedback(rows)
    assert len(common) == 1 and "calorimeter heat capacity" in common[0]
    assert per["G1"] == ["No flags: your runs agree with the reference and with the section."]
    assert any("drifted" in line and "#2" in line for line in per["G2"])
    assert not any("calorimeter heat capacity" in line for lines in per.values() for line in lines)


def test_control_chart_and_plot_leave_excluded_runs_out(client: Any, session: Any, lab: Any) -> None:
    from webapp.services.control import control_view

    ids = [upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"] for _ in range(3)]
    coord = session.get(Person, lab.ids["coord"])
    assert [p["run_id"] for p in control_view(session, coord, lab.calorimeter_id).points] == ids
    assert _review(client, lab, "tech", ids[1], "exclude", "lid left off").status_code == 200
    assert _review(client, lab, "a1", ids[2], "withdraw", "duplicate upload").status_code == 200
    session.expire_all()
    assert [p["run_id"] for p in control_view(session, coord, lab.calorimeter_id).points] == ids[:1]


def test_students_see_only_their_own_groups_marks(client: Any, session: Any, lab: Any, tmp_path: Path) -> None:
    cl, ids = build_section(session, lab, tmp_path)
    ada = session.scalar(sa.select(Person).where(Person.email == "ada@lab.example"))  # group M01
    assert _review(client, lab, "coord", ids["M02-run2.toml"], "exclude", "private reason").status_code == 200
    session.expire_all()
    board = section_dashboard(session, ada, cl.section_id)
    own = [r for r in board.rows if r.group == "M01"]
    others = [r for r in board.rows if r.group != "M01"]
    assert own and all(r.mark is not None for r in own)
    assert others and all(r.mark is None and r.status_reason == "" for r in others)
    assert any(r.status == "excluded" for r in others)  # that it is excluded is shown, not why


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "bound=points"),
        ("1=6, 2=3", "open band"),
        ("2=3, 1=6, *=0", "increase"),
        ("1=6, *=0, 2=1", "last band"),
        ("x=1, *=0", "numbers"),
        ("1=-2, *=0", "points must be"),
        ("1=nan, *=0", "points must be"),
        ("inf=1, *=0", "bound"),
        ("1=6" + ", 1=6" * 20, "at most"),
        ("1=6, *=0" + " " * 500, "characters"),
    ],
)
def test_band_text_is_checked_with_a_clear_message(text: str, message: str) -> None:
    from webapp.services.errors import Invalid
    from webapp.services.marks import band_points, parse_bands

    with pytest.raises(Invalid, match=message):
        parse_bands(text, "en_bands")
    bands = parse_bands("1=6, 2=3, *=0", "en_bands")
    # the bound belongs to its band (|E_n| = 1 is satisfactory, ISO 13528)
    assert [band_points(bands, x) for x in (0.0, 1.0, 1.0001, 2.0, 7.0)] == [6, 6, 3, 3, 0]
