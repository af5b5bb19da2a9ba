"""Sign-in, password hashing, CSRF on every form, and API token authentication."""

from __future__ import annotations

import re
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import PASSWORD, csrf_token, sign_in, upload
from webapp.models import ApiToken, Person
from webapp.services.people import create_person, hash_password


def test_default_password_hash_is_werkzeug_scrypt() -> None:
    # werkzeug.security documents the "scrypt:N:r:p$salt$hash" format; the default cost is N = 2**15
    h = hash_password("a long enough password")
    assert h.startswith("scrypt:32768:8:1$")
    assert "a long enough password" not in h


def test_passwords_are_stored_hashed_and_checked(client: Any, session: Any, lab: Any) -> None:
    p = session.get(Person, lab.ids["a1"])
    assert p.password_hash.startswith("scrypt:") and PASSWORD not in p.password_hash
    r = sign_in(client, "a1@lab.example", "wrong password!")
    assert r.status_code == 400 and "wrong" in r.get_data(as_text=True)
    r = sign_in(client, "A1@LAB.example")
    assert r.status_code == 302 and r.headers["Location"] == "/"
    assert "Student A1" in client.get("/").get_data(as_text=True)


def test_short_passwords_and_bad_addresses_are_refused(session: Any, lab: Any) -> None:
    from webapp.services.errors import Conflict, Invalid

    with pytest.raises(Invalid, match="at least"):
        create_person(session, email="x@lab.example", name="X", role="student", password="short")
    with pytest.raises(Invalid, match="e-mail"):
        create_person(session, email="not-an-address", name="X", role="student", password=PASSWORD)
    with pytest.raises(Invalid, match="role"):
        create_person(session, email="x@lab.example", name="X", role="dean", password=PASSWORD)
    with pytest.raises(Conflict):
        create_person(
            session,
            email="a1@lab.example",
            name="X",
            role="student",
            password=PASSWORD,
            password_method="scrypt:1024:8:1",
        )


def test_pages_need_a_sign_in(client: Any, lab: Any) -> None:
    for path in ("/", "/runs/", "/runs/1", "/calorimeters/", f"/calorimeters/{lab.calorimeter_id}", "/auth/tokens"):
        r = client.get(path)
        assert r.status_code == 302 and r.headers["Location"].startswith("/auth/login?next="), path


def test_next_goes_only_to_this_site(client: Any, lab: Any) -> None:
    page = client.get("/auth/login?next=https://elsewhere.example/")
    r = client.post(
        "/auth/login?next=https://elsewhere.example/",
        data={"email": "a1@lab.example", "password": PASSWORD, "csrf_token": csrf_token(page.get_data(as_text=True))},
    )
    assert r.headers["Location"] == "/"


def test_every_form_carries_a_csrf_token_and_posts_without_it_fail(client: Any, lab: Any) -> None:
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"]
    assert client.post("/auth/login", data={"email": "a1@lab.example", "password": PASSWORD}).status_code == 400
    sign_in(client, "a1@lab.example")
    pages = ["/", "/runs/", f"/runs/{run_id}", "/calorimeters/", f"/calorimeters/{lab.calorimeter_id}", "/auth/tokens"]
    for path in pages:
        html = client.get(path).get_data(as_text=True)
        forms = re.findall(r"<form\b.*?</form>", html, flags=re.S)
        assert forms, path  # at least the sign-out form
        for form in forms:
            if re.search(r'method="post"', form, flags=re.I):
                assert 'name="csrf_token"' in form, (path, form[:120])
    for action in (
        f"/runs/{run_id}/lock",
        f"/runs/{run_id}/reanalyze",
        "/auth/tokens",
        "/auth/logout",
        "/auth/tokens/1/revoke",
    ):
        r = client.post(action, data={"method": "naive"})
        assert r.status_code == 400, action
        assert "form has expired" in r.get_data(as_text=True)
    # still signed in, and the run was not changed
    assert "Student A1" in client.get("/").get_data(as_text=True)
    assert client.get(f"/api/runs/{run_id}", headers=lab.auth("a1")).get_json()["locked"] is False


def test_sign_out(client: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    token = csrf_token(client.get("/").get_data(as_text=True))
    assert client.post("/auth/logout", data={"csrf_token": token}).status_code == 302
    assert client.get("/").status_code == 302


def test_token_page_shows_the_secret_once_and_stores_a_hash(client: Any, session: Any, lab: Any) -> None:
    sign_in(client, "b1@lab.example")
    page = client.get("/auth/tokens").get_data(as_text=True)
    r = client.post("/auth/tokens", data={"csrf_token": csrf_token(page), "label": "bench laptop"})
    html = r.get_data(as_text=True)
    secret = re.search(r'<code class="secret">([^<]+)</code>', html).group(1)
    assert client.get("/api/me", headers={"Authorization": f"Bearer {secret}"}).get_json()["email"] == "b1@lab.example"
    assert secret not in client.get("/auth/tokens").get_data(as_text=True)
    stored = session.scalars(sa.select(ApiToken.token_hash)).all()
    assert secret not in stored and all(len(h) == 64 for h in stored)
    token_id = session.scalar(sa.select(ApiToken.id).where(ApiToken.label == "bench laptop"))
    page = client.get("/auth/tokens").get_data(as_text=True)
    client.post(f"/auth/tokens/{token_id}/revoke", data={"csrf_token": csrf_token(page)})
    assert client.get("/api/me", headers={"Authorization": f"Bearer {secret}"}).status_code == 401


@pytest.mark.parametrize("header", ["", "Bearer", "Bearer nonsense", "Basic YTpi", "bearer cupcal_x"])
def test_api_without_a_valid_token_is_401(client: Any, lab: Any, header: str) -> None:
    headers = {"Authorization": header} if header else {}
    for method, path in (
        ("get", "/api/runs"),
        ("post", "/api/runs"),
        ("get", "/api/me"),
        ("post", "/api/calorimeters"),
    ):
        r = getattr(client, method)(path, headers=headers)
        assert r.status_code == 401 and r.get_json()["error"], (header, path)
        assert r.headers["WWW-Authenticate"] == "Bearer"


def test_a_browser_session_may_read_the_api_but_not_write(client: Any, lab: Any) -> None:
    sign_in(client, "coord@lab.example")
    assert client.get("/api/me").get_json()["role"] == "coordinator"
    r = client.post("/api/calorimeters", json={"name": "Cup via cookie"})
    assert r.status_code == 401


def test_inactive_people_cannot_sign_in_or_use_tokens(client: Any, session: Any, lab: Any) -> None:
    p = session.get(Person, lab.ids["a2"])
    p.active = False
    session.commit()
    assert sign_in(client, "a2@lab.example").status_code == 400
    assert client.get("/api/me", headers=lab.auth("a2")).status_code == 401
