"""cupcal mounted under a prefix of a host Flask app, and the optional reverse-proxy identity header."""

from __future__ import annotations

from typing import Any

import pytest
from flask import Flask

from tests.webapp.conftest import FAST_HASH, PASSWORD, csrf_token
from webapp import mount
from webapp.db import get_engine, new_session
from webapp.services.people import create_person

SETTINGS = {"TESTING": True, "SECRET_KEY": "test secret", "PASSWORD_METHOD": FAST_HASH, "MONTE_CARLO_TRIALS": 0}


@pytest.fixture
def host(database_url: str) -> Any:
    host = Flask("host")
    host.config["SECRET_KEY"] = "host secret"

    @host.get("/")
    def home() -> str:
        return "host home"

    cupcal = mount(host, "/cupcal", {**SETTINGS, "DATABASE_URL": database_url})
    s = new_session(cupcal)
    create_person(
        s, email="ida@lab.example", name="Ida", role="technician", password=PASSWORD, password_method=FAST_HASH
    )
    s.close()
    yield host, cupcal
    get_engine(cupcal).dispose()


def test_host_serves_cupcal_under_its_prefix(host: Any) -> None:
    app, _cupcal = host
    c = app.test_client()
    assert c.get("/").get_data(as_text=True) == "host home"
    r = c.get("/cupcal/")
    assert r.status_code == 302 and r.headers["Location"].startswith("/cupcal/auth/login")
    page = c.get("/cupcal/auth/login").get_data(as_text=True)
    assert 'href="/cupcal/static/' in page
    r = c.post(
        "/cupcal/auth/login", data={"email": "ida@lab.example", "password": PASSWORD, "csrf_token": csrf_token(page)}
    )
    assert r.status_code == 302 and r.headers["Location"] == "/cupcal/"
    cookie = c.get_cookie("cupcal_session", path="/cupcal")
    assert cookie is not None and c.get_cookie("session") is None  # the host's cookie is left alone
    me = c.get("/cupcal/api/me")
    assert me.status_code == 200 and me.get_json()["email"] == "ida@lab.example"
    assert c.get("/cupcal/api/runs").get_json()["items"] == []
    assert c.get("/api/me").status_code == 404  # nothing of cupcal outside the prefix


def test_prefix_must_be_a_path() -> None:
    with pytest.raises(ValueError):
        mount(Flask("h"), "cupcal/", SETTINGS)


def test_proxy_identity_header_is_off_by_default_then_trusted(host: Any) -> None:
    app, cupcal = host
    c = app.test_client()
    assert cupcal.config["TRUST_PROXY_USER_HEADER"] is None
    assert c.get("/cupcal/api/me", headers={"X-Remote-User": "ida@lab.example"}).status_code == 401
    cupcal.config["TRUST_PROXY_USER_HEADER"] = "X-Remote-User"
    r = c.get("/cupcal/api/me", headers={"X-Remote-User": "IDA@lab.example"})
    assert r.status_code == 200 and r.get_json()["email"] == "ida@lab.example"
    assert c.get("/cupcal/api/me", headers={"X-Remote-User": "nobody@lab.example"}).status_code == 401
    r = c.get("/cupcal/runs/", headers={"X-Remote-User": "ida@lab.example"})
    assert r.status_code == 200
