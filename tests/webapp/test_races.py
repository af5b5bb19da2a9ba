"""Races on one run, released together from two threads (fast versions of tests/benchmarks/test_races.py).

A signed run must not change after its lock, whatever request races it; two clients editing the
same field must never lose an update: every accepted change is in a consistent audit chain and
every write based on an older version gets 409. The check is the database itself, read directly
(the lock's content hash, its signed result, the audit entries), not the answers alone.
"""

from __future__ import annotations

from typing import Any

import pytest

from tests.webapp.conftest import demo_files, without_heat_capacity
from tests.webapp.race_trials import (
    Tally,
    in_process_caller,
    lock_vs_calibration,
    lock_vs_patch,
    lock_vs_reanalysis,
    lost_updates,
    upload_run,
)
from webapp.db import get_engine

TRIALS = 3


@pytest.fixture
def tokens(lab: Any) -> dict[str, str]:
    return {"author": lab.tokens["a1"], "other": lab.tokens["coord"], "tech": lab.tokens["tech"]}


def _assert_clean(tally: Tally) -> None:
    assert tally.trials == TRIALS
    assert tally.changes_after_lock == 0, tally.disagreements
    assert tally.disagreements == []


def test_lock_against_patch(app: Any, tokens: dict[str, str]) -> None:
    tally = Tally()
    lock_vs_patch(in_process_caller(app), get_engine(app), tokens, tally, TRIALS)
    _assert_clean(tally)


def test_lock_against_reanalysis(app: Any, tokens: dict[str, str]) -> None:
    tally = Tally()
    lock_vs_reanalysis(in_process_caller(app), get_engine(app), tokens, tally, TRIALS)
    _assert_clean(tally)


def test_lock_against_calibration_change(app: Any, lab: Any, tokens: dict[str, str]) -> None:
    tally = Tally()
    toml = without_heat_capacity(demo_files("diss-kcl-01")[0])
    lock_vs_calibration(in_process_caller(app), get_engine(app), tokens, tally, TRIALS, lab.calorimeter_id, toml)
    _assert_clean(tally)


def test_no_lost_update_between_two_clients(app: Any, lab: Any) -> None:
    call = in_process_caller(app)
    run_id = upload_run(call, lab.tokens["a1"])
    out = lost_updates(call, get_engine(app), [lab.tokens["a1"], lab.tokens["coord"]], run_id, per_client=8)
    assert out["requests"] == 16 and out["other"] == 0
    assert out["accepted_200"] + out["refused_409"] == 16 and out["accepted_200"] >= 1
    assert out["audit_entries"] == out["accepted_200"] and out["chain_breaks"] == 0
    assert out["accepted_on_distinct_versions"] and out["accepted_titles_in_chain"]
    assert out["final_title_is_last_accepted"] and out["db_check_problems"] == []


def test_a_stale_write_gets_409_with_the_current_state(client: Any, lab: Any) -> None:
    call = in_process_caller(client.application)
    run_id = upload_run(call, lab.tokens["a1"])
    r = client.get(f"/api/runs/{run_id}", headers=lab.auth("a1"))
    etag = r.headers["ETag"]
    assert etag == f'"{r.get_json()["version"]}"'
    r = client.patch(f"/api/runs/{run_id}", headers={**lab.auth("a1"), "If-Match": etag}, json={"title": "first"})
    assert r.status_code == 200 and r.headers["ETag"] != etag
    r = client.patch(f"/api/runs/{run_id}", headers={**lab.auth("coord"), "If-Match": etag}, json={"title": "second"})
    assert r.status_code == 409
    body = r.get_json()
    assert "changed by someone else" in body["error"] and body["current"]["run"]["title"] == "first"
    r = client.patch(f"/api/runs/{run_id}", headers=lab.auth("coord"), json={"title": "third"})
    assert r.status_code == 428 and "If-Match" in r.get_json()["error"]  # a write must say what it changes
    r = client.patch(
        f"/api/runs/{run_id}",
        headers=lab.auth("coord"),
        json={"title": "fourth", "version": body["current"]["run"]["version"]},
    )
    assert r.status_code == 200 and r.get_json()["title"] == "fourth"


def test_page_forms_carry_the_version_and_say_changed_by_someone_else(client: Any, lab: Any) -> None:
    from tests.webapp.conftest import csrf_token, sign_in

    call = in_process_caller(client.application)
    run_id = upload_run(call, lab.tokens["a1"])
    sign_in(client, "a1@lab.example")
    page = client.get(f"/runs/{run_id}").get_data(as_text=True)
    version = int(__import__("re").search(r'name="version" value="(\d+)"', page).group(1))
    token = csrf_token(page)
    # someone else changes the run after the page was read
    r = client.patch(
        f"/api/runs/{run_id}",
        headers={**lab.auth("coord"), "If-Match": f'"{version}"'},
        json={"notes": "checked by the coordinator"},
    )
    assert r.status_code == 200
    r = client.post(f"/runs/{run_id}/lock", data={"csrf_token": token, "version": str(version)})
    html = r.get_data(as_text=True)
    assert r.status_code == 409 and "Changed by someone else" in html and "Reload it" in html
    r = client.get(f"/api/runs/{run_id}", headers=lab.auth("a1")).get_json()
    assert r["locked"] is False  # nothing signed that the author had not seen
    r = client.post(f"/runs/{run_id}/lock", data={"csrf_token": token, "version": str(r["version"])})
    assert r.status_code == 302


def test_the_webhook_queued_at_the_lock_carries_the_signed_result(client: Any, lab: Any, session: Any) -> None:
    import json

    import sqlalchemy as sa

    from webapp.models import Webhook, WebhookDelivery

    session.add(Webhook(url="https://receiver.example.org/hook", secret="s" * 64, active=True))
    session.commit()
    call = in_process_caller(client.application)
    run_id = upload_run(call, lab.tokens["a1"])
    # a re-analysis just before the lock: the lock must sign (and announce) the new result, not the first
    r = client.post(f"/api/runs/{run_id}/analyses", headers=lab.auth("a1"), json={"method": "naive", "monte_carlo": 0})
    newest = r.get_json()["id"]
    locked = client.post(f"/api/runs/{run_id}/lock", headers=lab.auth("a1")).get_json()
    assert locked["locked_result_id"] == newest and len(locked["locked_hash"]) == 64
    body = json.loads(session.scalar(sa.select(WebhookDelivery.body).where(WebhookDelivery.run_id == run_id)))
    assert body["result"]["id"] == newest and body["result"]["method"] == "naive"
    assert body["signed"] == {"result_id": newest, "content_hash": locked["locked_hash"]}


def test_a_stale_calorimeter_write_gets_409_with_its_current_state(client: Any, lab: Any) -> None:
    url = f"/api/calorimeters/{lab.calorimeter_id}"
    h = lab.auth("coord")
    etag = client.get(url, headers=h).headers["ETag"]
    r = client.patch(url, headers={**h, "If-Match": etag}, json={"location": "Room 3B"})
    assert r.status_code == 200 and r.headers["ETag"] != etag
    r = client.patch(url, headers={**h, "If-Match": etag}, json={"location": "Room 4C"})
    assert r.status_code == 409 and r.get_json()["current"]["calorimeter"]["location"] == "Room 3B"
    assert client.patch(url, headers=h, json={"location": "Room 4C"}).status_code == 428
    assert client.get(url, headers=h).get_json()["location"] == "Room 3B"
