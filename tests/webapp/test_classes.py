"""Courses, sections, benches and rosters: all-or-nothing roster import with line-numbered errors, access."""

from __future__ import annotations

from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.class_fixtures import ROSTER, make_class
from tests.webapp.conftest import FAST_HASH
from webapp.models import Bench, Group, Person, Section
from webapp.services.classes import RosterInvalid, create_bench, import_roster
from webapp.services.errors import Forbidden


def _count(session: Any, model: Any) -> int:
    return session.scalar(sa.select(sa.func.count()).select_from(model))


def test_roster_creates_course_sections_groups_and_people(session: Any, lab: Any) -> None:
    cl = make_class(session, lab.ids["coord"])
    sec = session.get(Section, cl.section_id)
    assert [g.name for g in sec.groups] == ["M01", "M02", "M03", "M04"]
    ada = session.scalar(sa.select(Person).where(Person.email == "ada@lab.example"))
    assert ada.group.section_id == cl.section_id and ada.role == "student"
    # importing the same roster again creates nothing
    before = (_count(session, Person), _count(session, Group), _count(session, Section))
    report = import_roster(session, session.get(Person, lab.ids["coord"]), ROSTER, password_method=FAST_HASH)
    assert report.people_created == [] and report.groups_created == []
    assert (_count(session, Person), _count(session, Group), _count(session, Section)) == before


def test_roster_with_errors_stores_nothing_and_names_each_line(session: Any, lab: Any) -> None:
    coord = session.get(Person, lab.ids["coord"])
    bad = (
        "course,section,group,name,email,role\n"
        "C,S,G1,Ok Person,ok@lab.example,student\n"
        "C,S,G1,No Mail,not-an-address,student\n"
        "C,S,,No Group,ng@lab.example,student\n"
        "C,S,G2,Bad Role,br@lab.example,professor\n"
        "C,S,G3,Twice,ok@lab.example,student\n"
    )
    before = _count(session, Person)
    with pytest.raises(RosterInvalid) as err:
        import_roster(session, coord, bad, source="r.csv", password_method=FAST_HASH)
    errors = err.value.errors
    assert any(e.startswith("r.csv, line 3, column email") for e in errors)
    assert any(e.startswith("r.csv, line 4, column group") for e in errors)
    assert any(e.startswith("r.csv, line 5, column role") for e in errors)
    assert any(e.startswith("r.csv, line 6, column email") and "line 2" in e for e in errors)
    session.rollback()
    assert _count(session, Person) == before
    assert session.scalar(sa.select(Group).where(Group.name == "G1")) is None


def test_only_coordinators_manage_classes(session: Any, lab: Any) -> None:
    cl = make_class(session, lab.ids["coord"])
    for who in ("tech", "a1"):
        with pytest.raises(Forbidden):
            import_roster(session, session.get(Person, lab.ids[who]), ROSTER, password_method=FAST_HASH)
        with pytest.raises(Forbidden):
            create_bench(session, session.get(Person, lab.ids[who]), section_id=cl.section_id, name="B1")
    bench = create_bench(
        session,
        session.get(Person, lab.ids["coord"]),
        section_id=cl.section_id,
        name="B1",
        calorimeter_id=lab.spare_calorimeter_id,
        thermometer="probe 7",
        thermometer_resolution="0.01 K",
    )
    assert session.get(Bench, bench.id).thermometer_resolution_k == pytest.approx(0.01)


def test_roster_and_bench_api(client: Any, lab: Any) -> None:
    r = client.post("/api/rosters", data=ROSTER, headers={**lab.auth("coord"), "Content-Type": "text/csv"})
    assert r.status_code == 201, r.get_json()
    r = client.post(
        "/api/rosters",
        data="name,email,role\nX,bad,student\n",
        headers={**lab.auth("coord"), "Content-Type": "text/csv"},
    )
    assert r.status_code == 400 and r.get_json()["errors"][0].startswith("roster.csv, line 2")
    assert (
        client.post("/api/rosters", data=ROSTER, headers={**lab.auth("a1"), "Content-Type": "text/csv"}).status_code
        == 403
    )
    sections = client.get("/api/sections", headers=lab.auth("coord")).get_json()["items"]
    sid = next(s["id"] for s in sections if s["name"] == "Mon AM")
    r = client.post(
        f"/api/sections/{sid}/benches", json={"name": "B2", "thermometer_resolution": "lots"}, headers=lab.auth("coord")
    )
    assert r.status_code == 400 and r.get_json()["field"] == "thermometer_resolution"
    r = client.post(
        f"/api/sections/{sid}/benches", json={"name": "B2", "thermometer_resolution": 0.001}, headers=lab.auth("coord")
    )
    assert r.status_code == 201
