"""Webhooks: a signed POST when a run is locked, retried with back-off, logged; tried on a local receiver."""

from __future__ import annotations

import datetime as dt
import hashlib
import hmac
import json
import threading
from collections.abc import Iterator
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

import pytest
from click.testing import CliRunner

from tests.webapp.conftest import upload
from webapp.models import WebhookDelivery
from webapp.services.webhook_guard import Guard
from webapp.services.webhooks import backoff, deliver_due

#: these tests use a receiver on 127.0.0.1, which the notebook refuses unless told it is a test
LOCAL = Guard(allow_private=True)


@pytest.fixture(autouse=True)
def _local_receivers_allowed(app: Any) -> None:
    app.config["WEBHOOK_ALLOW_PRIVATE"] = True


class Receiver:
    """A local HTTP server that answers 500 to its first ``fail`` requests, then 204; it keeps every request."""

    def __init__(self, fail: int = 1) -> None:
        self.fail = fail
        self.requests: list[tuple[dict[str, str], bytes]] = []
        owner = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:  # noqa: N802 - http.server's name
                body = self.rfile.read(int(self.headers["Content-Length"]))
                owner.requests.append(({k: v for k, v in self.headers.items()}, body))
                self.send_response(500 if len(owner.requests) <= owner.fail else 204)
                self.send_header("Content-Length", "0")
                self.end_headers()

            def log_message(self, *args: Any) -> None:
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/hook"
        self.thread = threading.Thread(target=self.server.serve_forever, daemon=True)


@pytest.fixture
def receiver() -> Iterator[Receiver]:
    rec = Receiver(fail=1)
    rec.thread.start()
    try:
        yield rec
    finally:
        rec.server.shutdown()
        rec.server.server_close()


def test_locking_a_run_posts_a_signed_event_retried_with_backoff(
    client: Any, lab: Any, session: Any, receiver: Receiver
) -> None:
    r = client.post("/api/webhooks", json={"url": receiver.url}, headers=lab.auth("coord"))
    assert r.status_code == 201
    hook = r.get_json()
    secret = hook["secret"]
    assert "secret" not in client.get("/api/webhooks", headers=lab.auth("coord")).get_json()["items"][0]
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    assert session.query(WebhookDelivery).count() == 0  # recording is not final; locking is
    assert client.post(f"/api/runs/{run_id}/lock", headers=lab.auth("a1")).status_code == 200

    t0 = dt.datetime(2030, 1, 1, 12, 0, 0)
    first = deliver_due(session, now=t0, guard=LOCAL)
    assert len(first) == 1 and first[0].status == "pending" and first[0].attempts == 1
    assert first[0].last_status_code == 500 and first[0].next_attempt_at == t0 + dt.timedelta(seconds=30)
    assert deliver_due(session, now=t0 + dt.timedelta(seconds=29), guard=LOCAL) == []  # not yet due
    second = deliver_due(session, now=t0 + dt.timedelta(seconds=30), guard=LOCAL)
    assert len(second) == 1 and second[0].status == "delivered" and second[0].attempts == 2
    assert deliver_due(session, now=t0 + dt.timedelta(days=1), guard=LOCAL) == []

    assert len(receiver.requests) == 2
    headers, body = receiver.requests[1]
    assert receiver.requests[0][1] == body  # the retry sends the same bytes
    # HMAC-SHA256 (RFC 2104, FIPS 180-4) of the exact body, computed here with the standard library
    expected = "sha256=" + hmac.new(secret.encode(), body, hashlib.sha256).hexdigest()
    assert headers["X-Cupcal-Signature"] == expected and headers["X-Cupcal-Event"] == "run.locked"
    event = json.loads(body)
    assert event["run"]["id"] == run_id and event["locked_by"] == "a1@lab.example"
    assert event["result"]["outputs"]["molar_enthalpy"]["unit"] == "kJ/mol"

    log = client.get(f"/api/webhooks/{hook['id']}/deliveries", headers=lab.auth("coord")).get_json()["items"]
    assert [(d["status"], d["attempts"], d["last_status_code"]) for d in log] == [("delivered", 2, 204)]


def test_backoff_doubles_and_gives_up(client: Any, lab: Any, session: Any) -> None:
    assert [backoff(n).total_seconds() for n in (1, 2, 3, 4)] == [30, 60, 120, 240]
    r = client.post("/api/webhooks", json={"url": "http://127.0.0.1:9/closed"}, headers=lab.auth("coord"))
    hook_id = r.get_json()["id"]
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    client.post(f"/api/runs/{run_id}/lock", headers=lab.auth("coord"))
    now = dt.datetime(2030, 1, 1)
    for _ in range(6):
        (d,) = deliver_due(session, now=now, timeout=1.0, guard=LOCAL)
        if d.next_attempt_at is not None:
            now = d.next_attempt_at
    assert d.status == "failed" and d.attempts == 6 and d.last_status_code is None and d.last_error
    assert client.delete(f"/api/webhooks/{hook_id}", headers=lab.auth("coord")).status_code == 204
    assert client.get("/api/webhooks", headers=lab.auth("coord")).get_json()["items"] == []


def test_only_coordinators_manage_webhooks(client: Any, lab: Any) -> None:
    for who in ("tech", "a1"):
        assert (
            client.post("/api/webhooks", json={"url": "http://127.0.0.1/x"}, headers=lab.auth(who)).status_code == 403
        )
        assert client.get("/api/webhooks", headers=lab.auth(who)).status_code == 403
    r = client.post("/api/webhooks", json={"url": "ftp://example.org/x"}, headers=lab.auth("coord"))
    assert r.status_code == 400 and r.get_json()["field"] == "url"


def test_deliver_command(
    client: Any, lab: Any, receiver: Receiver, database_url: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    from webapp.webhook_commands import webhooks

    client.post("/api/webhooks", json={"url": receiver.url}, headers=lab.auth("coord"))
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    client.post(f"/api/runs/{run_id}/lock", headers=lab.auth("a1"))
    monkeypatch.setenv("DATABASE_URL", database_url)
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "test secret")
    monkeypatch.setattr("webapp.services.webhook_guard.guard_from_config", lambda _config: LOCAL)
    out = CliRunner().invoke(webhooks, ["deliver"])
    assert out.exit_code == 0, out.output
    assert "attempt 1, 500; retry at" in out.output and len(receiver.requests) == 1
