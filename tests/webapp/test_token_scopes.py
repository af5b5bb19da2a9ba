"""API token scopes: read tokens read, write tokens write; shown once, stored hashed, listed, revocable."""

from __future__ import annotations

import hashlib
import re
from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import csrf_token, sign_in, upload
from webapp.models import ApiToken, Person
from webapp.services.tokens import issue_scoped_token


def test_read_tokens_read_and_write_tokens_write(client: Any, lab: Any, session: Any) -> None:
    a1 = session.get(Person, lab.ids["a1"])
    _t, read = issue_scoped_token(session, a1, "reader", "read")
    _t, write = issue_scoped_token(session, a1, "writer", "write")
    ro, rw = {"Authorization": f"Bearer {read}"}, {"Authorization": f"Bearer {write}"}
    assert upload(client, ro, "diss-kcl-01").status_code == 403
    r = upload(client, rw, "diss-kcl-01")
    assert r.status_code == 201
    run_id = r.get_json()["id"]
    assert client.get(f"/api/runs/{run_id}", headers=ro).status_code == 200
    r = client.patch(f"/api/runs/{run_id}", json={"title": "x"}, headers=ro)
    assert r.status_code == 403 and "read-only" in r.get_json()["error"]
    assert client.post(f"/api/runs/{run_id}/lock", headers=ro).status_code == 403
    assert client.patch(f"/api/runs/{run_id}", json={"title": "x"}, headers={**rw, "If-Match": "*"}).status_code == 200
    listed = {t["label"]: t for t in client.get("/api/tokens", headers=ro).get_json()["items"]}
    assert listed["reader"]["scope"] == "read" and listed["writer"]["scope"] == "write"
    assert listed["reader"]["last_used_at"] is not None and listed["tests"]["last_used_at"] is None
    assert all("secret" not in t and "token_hash" not in t for t in listed.values())


def test_secrets_are_stored_hashed_and_tokens_revocable(client: Any, lab: Any, session: Any) -> None:
    a1 = session.get(Person, lab.ids["a1"])
    token, secret = issue_scoped_token(session, a1, "once", "read")
    stored = session.scalar(sa.select(ApiToken).where(ApiToken.id == token.id))
    assert stored.token_hash == hashlib.sha256(secret.encode()).hexdigest() and secret not in stored.token_hash
    from webapp.services.people import revoke_token

    revoke_token(session, a1, token.id)
    assert client.get("/api/me", headers={"Authorization": f"Bearer {secret}"}).status_code == 401


def test_token_page_makes_a_scoped_token_and_shows_it_once(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a2@lab.example")
    page = client.get("/auth/tokens").get_data(as_text=True)
    r = client.post("/auth/tokens", data={"label": "notebook", "scope": "read", "csrf_token": csrf_token(page)})
    html = r.get_data(as_text=True)
    secret = re.search(r'<code class="secret">([^<]+)</code>', html).group(1)
    assert client.get("/api/me", headers={"Authorization": f"Bearer {secret}"}).status_code == 200
    assert upload(client, {"Authorization": f"Bearer {secret}"}, "diss-kcl-01").status_code == 403
    again = client.get("/auth/tokens").get_data(as_text=True)
    assert secret not in again and "<td>read</td>" in again
