"""The live-run API (issue 15): create and readings are idempotent, scopes hold, bad input names its field,
and a finished live run is stored like an upload with its raw log kept byte for byte. SQLite and PostgreSQL."""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import demo_files, upload
from tests.webapp.live_helpers import batch, demo_rows, live_run_file, start_live
from webapp.models import LiveReading, Person
from webapp.services.tokens import issue_scoped_token


def _live_token(session: Any, who: int) -> dict[str, str]:
    _t, secret = issue_scoped_token(session, session.get(Person, who), "bench recorder", "live")
    return {"Authorization": f"Bearer {secret}"}


def test_create_is_idempotent_on_the_owners_client_key(client: Any, lab: Any) -> None:
    r = start_live(client, lab.auth("a1"))
    assert r.status_code == 201, r.get_json()
    first = r.get_json()
    assert first["last_seq"] == -1 and first["page_url"] == f"/live/{first['id']}"
    client.post(
        f"/api/live-runs/{first['id']}/readings", json={"readings": batch(demo_rows(), 0, 4)}, headers=lab.auth("a1")
    )
    again = start_live(client, lab.auth("a1"))  # a restarted recorder: same id, resumes after seq 3
    assert again.status_code == 200 and again.get_json()["id"] == first["id"] and again.get_json()["last_seq"] == 3
    other = start_live(client, lab.auth("b1"))  # the key is unique per owner, not across the notebook
    assert other.status_code == 201 and other.get_json()["id"] != first["id"]


def test_readings_are_idempotent_by_sequence_number(client: Any, lab: Any, session: Any) -> None:
    rows = demo_rows()
    live = start_live(client, lab.auth("a1")).get_json()["id"]
    url = f"/api/live-runs/{live}/readings"
    r = client.post(url, json={"readings": batch(rows, 0, 10)}, headers=lab.auth("a1"))
    assert r.status_code == 200 and r.get_json() == {"stored": 10, "last_seq": 9}
    r = client.post(url, json={"readings": batch(rows, 5, 15)}, headers=lab.auth("a1"))  # a retry overlapping
    assert r.get_json() == {"stored": 5, "last_seq": 14}
    r = client.post(url, json={"readings": batch(rows, 0, 15)}, headers=lab.auth("a1"))  # all known: nothing new
    assert r.get_json() == {"stored": 0, "last_seq": 14}
    stored = session.execute(
        sa.select(LiveReading.seq, LiveReading.time_s, LiveReading.temperature_c)
        .where(LiveReading.live_run_id == live)
        .order_by(LiveReading.seq)
    ).all()
    assert [tuple(s) for s in stored] == [(i, rows[i][0], rows[i][1]) for i in range(15)]
    got = client.get(f"/api/live-runs/{live}", headers=lab.auth("a1")).get_json()
    assert got["state"] == "recording" and got["n_readings"] == 15 and got["last_seq"] == 14
    assert isinstance(got["advice"].get("status"), str) and got["advice"]["status"]


def test_bad_input_is_refused_with_the_field_named(client: Any, lab: Any) -> None:
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    url = f"/api/live-runs/{live}/readings"
    client.post(url, json={"readings": [[0, 0.0, 21.0], [1, 2.0, 21.0]]}, headers=h)
    cases = [
        ({"readings": [[3, 4.0, 21.0]]}, "readings[0][0]"),  # a gap: 2 expected
        ({"readings": [[2, 2.0, 21.0]]}, "readings[0][1]"),  # time not after the previous reading's
        ({"readings": [[2, "4", 21.0]]}, "readings[0][1]"),
        ({"readings": [[2, 4.0, None]]}, "readings[0][2]"),
        ({"readings": [[2, 4.0, 900.0]]}, "readings[0][2]"),  # no liquid in a foam cup is at 900 °C
        ({"readings": [[2.5, 4.0, 21.0]]}, "readings[0][0]"),
        ({"readings": [[2, 4.0]]}, "readings[0]"),
        ({"readings": "2,4,21"}, "readings"),
        ({}, "readings"),
        ({"readings": [[2 + i, 4.0 + i, 21.0] for i in range(1001)]}, "readings"),  # over the batch limit
    ]
    for body, field in cases:
        r = client.post(url, json=body, headers=h)
        assert r.status_code == 400 and r.get_json()["field"] == field, (
            body if len(str(body)) < 200 else field,
            r.get_json(),
        )
    assert client.get(f"/api/live-runs/{live}", headers=h).get_json()["last_seq"] == 1  # nothing half-saved
    for body, field in [
        ({"run_file": "kind = [", "client_key": "k1"}, "run_file"),
        ({"run_file": live_run_file(), "client_key": "no spaces allowed"}, "client_key"),
        ({"run_file": live_run_file(), "client_key": "k2", "target_u": -1}, "target_u"),
        ({"run_file": live_run_file(), "client_key": "k3", "colour": "red"}, "colour"),
        ({"run_file": live_run_file().replace('kind = "dissolution"', 'kind = "brewing"'), "client_key": "k4"}, "kind"),
    ]:
        r = client.post("/api/live-runs", json=body, headers=h)
        assert r.status_code == 400 and r.get_json()["field"] == field, r.get_json()


def test_a_live_token_records_live_runs_and_nothing_else(client: Any, lab: Any, session: Any) -> None:
    live_h = _live_token(session, lab.ids["a1"])
    live = start_live(client, live_h).get_json()["id"]
    assert (
        client.post(
            f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 3)}, headers=live_h
        ).status_code
        == 200
    )
    assert client.get(f"/api/live-runs/{live}", headers=live_h).status_code == 200
    for method, url in [("get", "/api/runs"), ("get", "/api/me"), ("get", "/api/calorimeters")]:
        r = getattr(client, method)(url, headers=live_h)
        assert r.status_code == 403 and r.get_json()["field"] == "scope", url
    assert upload(client, live_h, "diss-kcl-01").status_code == 403
    _t, read = issue_scoped_token(session, session.get(Person, lab.ids["a1"]), "reader", "read")
    r = start_live(client, {"Authorization": f"Bearer {read}"}, key="read-token-key")
    assert r.status_code == 403
    # another group's student neither sees nor feeds it; a member of the same group and staff see it
    assert client.get(f"/api/live-runs/{live}", headers=lab.auth("b1")).status_code == 404
    assert (
        client.post(f"/api/live-runs/{live}/readings", json={"readings": []}, headers=lab.auth("b1")).status_code == 404
    )
    assert client.get(f"/api/live-runs/{live}", headers=lab.auth("a2")).status_code == 200
    assert client.get(f"/api/live-runs/{live}", headers=lab.auth("tech")).status_code == 200


def test_finish_stores_the_run_like_an_upload_with_the_raw_log_exact(client: Any, lab: Any, session: Any) -> None:
    h = _live_token(session, lab.ids["a1"])
    rows = demo_rows()
    live = start_live(client, h).get_json()["id"]
    for start in range(0, len(rows), 400):
        r = client.post(
            f"/api/live-runs/{live}/readings", json={"readings": batch(rows, start, start + 400)}, headers=h
        )
        assert r.status_code == 200
    _toml, raw_csv = demo_files("diss-kcl-01")
    r = client.post(f"/api/live-runs/{live}/finish", json={"readings_csv": raw_csv.decode("utf-8")}, headers=h)
    assert r.status_code == 200, r.get_json()
    run_id = r.get_json()["run_id"]
    assert r.get_json()["run_url"] == f"/runs/{run_id}"
    stored = client.get(f"/api/runs/{run_id}/files/readings", headers=lab.auth("a1"))
    assert stored.data == raw_csv  # byte for byte
    again = client.post(f"/api/live-runs/{live}/finish", json={}, headers=h)  # a retry: the same run
    assert again.status_code == 200 and again.get_json()["run_id"] == run_id
    got = client.get(f"/api/live-runs/{live}", headers=h).get_json()
    assert got["state"] == "finished" and got["run_id"] == run_id
    r = client.post(f"/api/live-runs/{live}/readings", json={"readings": [[len(rows), 1e5, 21.0]]}, headers=h)
    assert r.status_code == 409
    # the same files uploaded directly give the same result (one analysis, whichever way the log came)
    direct = upload(client, lab.auth("a2"), "diss-kcl-01").get_json()
    live_run = client.get(f"/api/runs/{run_id}", headers=lab.auth("a1")).get_json()
    mine, theirs = live_run["results"][-1], direct["results"][-1]
    assert (mine["main"], mine["value"], mine["standard_uncertainty"]) == (
        theirs["main"],
        theirs["value"],
        theirs["standard_uncertainty"],
    )
    # KCl dissolves endothermically: ΔsolH° = +17.2 kJ/mol at infinite dilution (CRC Handbook, from memory),
    # about +18 kJ/mol at this run's 0.5 mol/kg and 22 °C
    assert 16.5 < mine["value"] < 19.0 and mine["unit"] == "kJ/mol"
    assert live_run["group"]["name"] == "Group A"


def test_finish_without_a_csv_writes_one_from_the_stored_readings(client: Any, lab: Any) -> None:
    h = lab.auth("a1")
    rows = demo_rows()
    live = start_live(client, h).get_json()["id"]
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(rows, 0, len(rows))}, headers=h)
    run_id = client.post(f"/api/live-runs/{live}/finish", json={}, headers=h).get_json()["run_id"]
    text = client.get(f"/api/runs/{run_id}/files/readings", headers=h).get_data(as_text=True)
    lines = text.splitlines()
    assert lines[0] == "time_s,temperature_c" and len(lines) == len(rows) + 1
    assert [tuple(float(v) for v in line.split(",")) for line in lines[1:]] == rows  # repr reads back exactly
    empty = start_live(client, h, key="empty-run").get_json()["id"]
    r = client.post(f"/api/live-runs/{empty}/finish", json={}, headers=h)
    assert r.status_code == 400 and r.get_json()["field"] == "readings"


def test_targets_of_a_run_and_of_a_section(client: Any, lab: Any, session: Any) -> None:
    from webapp.services.classes import create_section
    from webapp.services.people import create_course

    coord = session.get(Person, lab.ids["coord"])
    course = create_course(session, coord, name="Thermochemistry lab (invented)")
    section = create_section(session, coord, course_id=course.id, name="Tuesday")
    h = lab.auth("a1")
    live = start_live(client, h, target_u=0.8).get_json()["id"]
    got = client.get(f"/api/live-runs/{live}", headers=h).get_json()
    assert got["target_u"] == 0.8 and got["target_from"] == "run"
    r = client.put(f"/api/live-runs/{live}/target", json={"target_u": None}, headers=h)
    assert r.status_code == 200 and r.get_json()["target_from"] == "default"
    r = client.put(f"/api/live-runs/{live}/target", json={"target_u": "small"}, headers=h)
    assert r.status_code == 400 and r.get_json()["field"] == "target_u"
    url = f"/api/sections/{section.id}/live-target"
    assert client.put(url, json={"target_u": 0.5}, headers=lab.auth("tech")).status_code == 403
    r = client.put(url, json={"target_u": 0.5}, headers=lab.auth("coord"))
    assert r.status_code == 200 and r.get_json()["target_u"] == 0.5
