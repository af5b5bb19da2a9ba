"""A locked (signed) run is immutable through every path; changes before are audited."""

from __future__ import annotations

from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import csrf_token, locked_after, sign_in
from webapp.models import AuditEntry, Person, Result, Run, RunInput
from webapp.services.analysis import AnalysisOptions
from webapp.services.errors import RunLocked
from webapp.services.runs import reanalyze_run, update_run


@pytest.fixture
def locked_run(client: Any, lab: Any) -> int:
    return locked_after(client, lab, {"bench": "B-2"})


def _snapshot(session: Any, run_id: int) -> tuple[Any, ...]:
    session.expire_all()
    run = session.get(Run, run_id)
    results = session.scalars(sa.select(Result.id, Result.is_current).where(Result.run_id == run_id)).all()
    inputs = session.scalar(sa.select(sa.func.count()).select_from(RunInput).where(RunInput.run_id == run_id))
    return (run.title, run.bench, run.notes, run.group_id, run.locked, tuple(results), inputs)


def test_every_api_path_refuses(client: Any, lab: Any, session: Any, locked_run: int) -> None:
    before = _snapshot(session, locked_run)
    for who in ("a1", "coord", "tech"):
        h = lab.auth(who)
        r = client.patch(f"/api/runs/{locked_run}", headers={**h, "If-Match": "*"}, json={"title": "changed"})
        assert r.status_code == 409 and "locked" in r.get_json()["error"]
        r = client.post(f"/api/runs/{locked_run}/analyses", headers=h, json={"method": "naive", "monte_carlo": 0})
        assert r.status_code == 409
    assert client.post(f"/api/runs/{locked_run}/lock", headers=lab.auth("coord")).status_code == 409
    assert _snapshot(session, locked_run) == before


def test_page_forms_refuse(client: Any, lab: Any, session: Any, locked_run: int) -> None:
    before = _snapshot(session, locked_run)
    sign_in(client, "coord@lab.example")
    page = client.get(f"/runs/{locked_run}").get_data(as_text=True)
    assert "signed by Student A1" in page and "Analyze again" not in page
    token = csrf_token(page)
    r = client.post(f"/runs/{locked_run}/reanalyze", data={"csrf_token": token, "method": "naive"})
    assert r.status_code == 409
    r = client.post(f"/runs/{locked_run}/lock", data={"csrf_token": token})
    assert r.status_code == 409
    assert _snapshot(session, locked_run) == before


def test_services_and_direct_writes_refuse(session: Any, lab: Any, locked_run: int) -> None:
    coord = session.get(Person, lab.ids["coord"])
    run = session.get(Run, locked_run)
    with pytest.raises(RunLocked):
        update_run(session, coord, run, {"title": "x"})
    with pytest.raises(RunLocked):
        reanalyze_run(session, coord, run, AnalysisOptions())
    session.rollback()
    # a write that skips the services is stopped at flush time
    run = session.get(Run, locked_run)
    run.title = "sneaky"
    with pytest.raises(RunLocked):
        session.commit()
    session.rollback()
    run = session.get(Run, locked_run)
    run.current_result.is_current = False
    with pytest.raises(RunLocked):
        session.flush()
    session.rollback()
    run = session.get(Run, locked_run)
    session.add(RunInput(run=run, field="water.volume", value=1.0, std_uncertainty=0.1, unit="mL", text="1 mL"))
    with pytest.raises(RunLocked):
        session.flush()
    session.rollback()
    run = session.get(Run, locked_run)
    run.locked = False
    with pytest.raises(RunLocked):
        session.flush()
    session.rollback()
    session.delete(session.get(Run, locked_run).inputs[0])
    with pytest.raises(RunLocked):
        session.flush()
    session.rollback()


def test_changes_before_the_lock_are_in_the_audit_trail(session: Any, lab: Any, locked_run: int) -> None:
    entries = session.scalars(
        sa.select(AuditEntry)
        .where(AuditEntry.entity == "run", AuditEntry.entity_id == locked_run)
        .order_by(AuditEntry.id)
    ).all()
    assert [(e.field, e.old, e.new, e.person_id) for e in entries] == [
        ("bench", "Bench Heron-5", "B-2", lab.ids["a1"]),
        ("locked", "no", "yes", lab.ids["a1"]),
    ]
    assert all(e.at is not None for e in entries)


def test_calorimeter_changes_are_audited(client: Any, lab: Any) -> None:
    h = lab.auth("coord")
    r = client.patch(
        f"/api/calorimeters/{lab.calorimeter_id}", headers={**h, "If-Match": "*"}, json={"location": "Room 3B"}
    )
    assert r.status_code == 200
    r = client.post(
        f"/api/calorimeters/{lab.calorimeter_id}/calibrations",
        headers=h,
        json={"heat_capacity": "19.0 ± 1.5 J/K", "note": "from the supplier"},
    )
    assert r.status_code == 400 and r.get_json()["field"] == "measured_on"  # a typed value needs its date
    r = client.post(
        f"/api/calorimeters/{lab.calorimeter_id}/calibrations",
        headers=h,
        json={"heat_capacity": "19.0 ± 1.5 J/K", "note": "from the supplier", "measured_on": "2026-11-30"},
    )
    assert r.status_code == 201 and r.get_json()["measured_on"] == "2026-11-30"
    from webapp.db import new_session

    s = new_session(client.application)
    try:
        entries = s.scalars(
            sa.select(AuditEntry).where(AuditEntry.entity == "calorimeter").order_by(AuditEntry.id)
        ).all()
        assert [(e.field, e.old, e.new) for e in entries] == [
            ("location", "", "Room 3B"),
            ("heat_capacity", None, f"19 ± 1.5 J/K (#{r.get_json()['id']})"),
        ]
    finally:
        s.close()
