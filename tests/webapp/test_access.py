"""Roles × ownership, enforced on the server (API and pages).

Rules (webapp/services/access.py): coordinators see and change everything and alone manage
courses, groups and calorimeters; technicians see and change every run; a student sees and
changes only their own group's runs; a run is locked by its author or a coordinator.
"""

from __future__ import annotations

from typing import Any

import pytest

from tests.webapp.conftest import sign_in, upload

# run recorded by a1 (group A)
VIEW = {"coord": 200, "tech": 200, "a1": 200, "a2": 200, "b1": 404}
LOCK = {"coord": 200, "tech": 403, "a1": 200, "a2": 403, "b1": 404}


@pytest.fixture
def run_id(client: Any, lab: Any) -> int:
    r = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0)
    assert r.status_code == 201
    return int(r.get_json()["id"])


@pytest.mark.parametrize("who", list(VIEW))
def test_who_sees_a_group_a_run(client: Any, lab: Any, run_id: int, who: str) -> None:
    h = lab.auth(who)
    assert client.get(f"/api/runs/{run_id}", headers=h).status_code == VIEW[who]
    for sub in ("results", "audit", "series", "files/readings"):
        assert client.get(f"/api/runs/{run_id}/{sub}", headers=h).status_code == VIEW[who]
    result_id = client.get(f"/api/runs/{run_id}", headers=lab.auth("a1")).get_json()["current_result"]["id"]
    assert client.get(f"/api/results/{result_id}", headers=h).status_code == VIEW[who]
    listed = [r["id"] for r in client.get("/api/runs", headers=h).get_json()["items"]]
    assert (run_id in listed) == (VIEW[who] == 200)


@pytest.mark.parametrize("who", list(VIEW))
def test_who_changes_a_group_a_run(client: Any, lab: Any, run_id: int, who: str) -> None:
    h = lab.auth(who)
    r = client.patch(f"/api/runs/{run_id}", headers={**h, "If-Match": "*"}, json={"notes": f"checked by {who}"})
    assert r.status_code == VIEW[who], r.get_json()
    r = client.post(f"/api/runs/{run_id}/analyses", headers=h, json={"monte_carlo": 0})
    assert r.status_code == (201 if VIEW[who] == 200 else 404)


@pytest.mark.parametrize("who", list(LOCK))
def test_who_locks_a_run(client: Any, lab: Any, run_id: int, who: str) -> None:
    r = client.post(f"/api/runs/{run_id}/lock", headers=lab.auth(who))
    assert r.status_code == LOCK[who], r.get_json()
    if r.status_code == 200:
        assert r.get_json()["locked_by"]["id"] == lab.ids[who]


def test_students_record_runs_only_for_their_own_group(client: Any, lab: Any) -> None:
    r = upload(client, lab.auth("b1"), "diss-kcl-01", group_id=lab.groups["A"], monte_carlo=0)
    assert r.status_code == 403 and r.get_json()["field"] == "group_id"
    r = upload(client, lab.auth("b1"), "diss-kcl-01", monte_carlo=0)
    assert r.get_json()["group"]["id"] == lab.groups["B"]
    r = upload(client, lab.auth("tech"), "diss-kcl-01", group_id=lab.groups["A"], monte_carlo=0)
    assert r.get_json()["group"]["id"] == lab.groups["A"]
    run_id = r.get_json()["id"]
    r = client.patch(
        f"/api/runs/{run_id}", headers={**lab.auth("a1"), "If-Match": "*"}, json={"group_id": lab.groups["B"]}
    )
    assert r.status_code == 403


@pytest.mark.parametrize("who", ["tech", "a1"])
def test_only_coordinators_manage_calorimeters_groups_and_courses(client: Any, lab: Any, who: str) -> None:
    h = lab.auth(who)
    assert client.post("/api/calorimeters", headers=h, json={"name": "Cup X"}).status_code == 403
    assert client.patch(f"/api/calorimeters/{lab.calorimeter_id}", headers=h, json={"parts": "x"}).status_code == 403
    # technicians record heat capacities too (this one lacks its date: 400); students may not
    assert client.post(
        f"/api/calorimeters/{lab.calorimeter_id}/calibrations", headers=h, json={"heat_capacity": "20 ± 2 J/K"}
    ).status_code == (400 if who == "tech" else 403)
    assert client.post("/api/groups", headers=h, json={"name": "Group Z"}).status_code == 403
    assert client.post("/api/courses", headers=h, json={"name": "Course Z"}).status_code == 403
    assert client.get("/api/calorimeters", headers=h).status_code == 200


def test_pages_follow_the_same_rules(client: Any, lab: Any, run_id: int) -> None:
    sign_in(client, "b1@lab.example")
    assert client.get(f"/runs/{run_id}").status_code == 404
    assert client.get(f"/runs/{run_id}/readings").status_code == 404
    assert f"/runs/{run_id}" not in client.get("/runs/").get_data(as_text=True)
    assert f"/runs/{run_id}" not in client.get("/").get_data(as_text=True)
    client = client.application.test_client()  # a new browser
    sign_in(client, "a2@lab.example")
    page = client.get(f"/runs/{run_id}").get_data(as_text=True)
    assert "Analyze again" in page and "Lock (sign)" not in page  # a2 may edit but not sign a1's run
