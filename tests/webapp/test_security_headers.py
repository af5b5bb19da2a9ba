"""Security headers on every response, the embed routes' own frame policy, no inline script, cookie flags.

Header meanings: W3C Content Security Policy Level 3 (script-src, frame-ancestors), the Fetch
standard (X-Content-Type-Options: nosniff), W3C Referrer Policy, RFC 7034 (X-Frame-Options),
RFC 6265bis (Secure, HttpOnly, SameSite cookie attributes), RFC 6797 (Strict-Transport-Security).
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.conftest import FAST_HASH, sign_in, upload
from webapp import create_app
from webapp.db import get_engine
from webapp.security import CSP

WEBAPP = Path(__file__).resolve().parents[2] / "webapp"
TEMPLATES = WEBAPP / "templates"


def _directives(csp: str) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for part in csp.split(";"):
        words = part.split()
        if words:
            out[words[0]] = words[1:]
    return out


def _assert_locked_down(r: Any) -> None:
    """The headers every non-embed response carries (W3C CSP 3, Fetch, RFC 7034)."""
    csp = _directives(r.headers["Content-Security-Policy"])
    script = csp.get("script-src", csp.get("default-src"))
    assert script is not None and "'unsafe-inline'" not in script and "'unsafe-eval'" not in script
    assert csp["frame-ancestors"] == ["'none'"]
    assert r.headers["X-Content-Type-Options"] == "nosniff"
    assert r.headers["Referrer-Policy"] in ("same-origin", "no-referrer", "strict-origin-when-cross-origin")
    assert r.headers["X-Frame-Options"] == "DENY"


def test_the_default_policy_is_the_agreed_one() -> None:
    d = _directives(CSP)
    assert d["default-src"] == ["'self'"] and d["script-src"] == ["'self'"]
    assert d["object-src"] == ["'none'"] and d["frame-ancestors"] == ["'none'"]


def test_pages_api_and_static_files_carry_the_headers(client: Any, lab: Any) -> None:
    login = client.get("/auth/login")
    assert login.status_code == 200 and login.headers["Content-Security-Policy"] == CSP
    _assert_locked_down(login)
    assert sign_in(client, "coord@lab.example").status_code == 302
    for path in ("/", "/runs/", "/calorimeters/"):
        r = client.get(path, follow_redirects=True)
        assert r.status_code == 200, path
        _assert_locked_down(r)
    api = client.get("/api/runs", headers=lab.auth("a1"))
    assert api.status_code == 200 and api.is_json
    _assert_locked_down(api)
    denied = client.get("/api/runs", headers={"Authorization": "Bearer wrong"})
    assert denied.status_code == 401
    _assert_locked_down(denied)  # error answers too
    missing = client.get("/no-such-page")
    assert missing.status_code == 404
    _assert_locked_down(missing)
    for name in ("style.css", "import-progress.js"):
        with client.get(f"/static/{name}") as r:  # a file response: closed here, not when collected
            assert r.status_code == 200, name
            _assert_locked_down(r)


def test_embed_routes_keep_their_own_frame_policy(client: Any, lab: Any, app: Any) -> None:
    app.config["EMBED_FRAME_ANCESTORS"] = "https://eln.example.org"
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()["id"]
    link = client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("a1")).get_json()["url"]
    card = client.get(link.split("localhost", 1)[1])
    assert card.status_code == 200
    assert _directives(card.headers["Content-Security-Policy"])["frame-ancestors"] == ["https://eln.example.org"]
    assert "X-Frame-Options" not in card.headers  # it would forbid the framing the CSP allows
    assert card.headers["X-Content-Type-Options"] == "nosniff"
    oembed = client.get("/oembed", query_string={"url": link, "format": "json"})
    assert oembed.status_code == 200
    assert _directives(oembed.headers["Content-Security-Policy"])["frame-ancestors"] == ["https://eln.example.org"]
    # the run's own page stays unframeable
    page = client.get(f"/runs/{run_id}", headers=lab.auth("a1"))
    assert page.headers["X-Frame-Options"] == "DENY"


_INLINE_SCRIPT = re.compile(r"<script\b(?![^>]*\bsrc\s*=)[^>]*>", re.IGNORECASE)
_HANDLER = re.compile(r"<[a-zA-Z][^>]*\son[a-z]+\s*=", re.IGNORECASE | re.DOTALL)
_SCRIPT_URL = re.compile(r"""(?:href|src|action)\s*=\s*["']?\s*javascript:""", re.IGNORECASE)


def test_no_template_has_inline_script_or_event_handlers() -> None:
    templates = sorted(TEMPLATES.rglob("*.html"))
    assert len(templates) > 20
    for path in templates:
        text = path.read_text(encoding="utf-8")
        assert not _INLINE_SCRIPT.search(text), f"{path.relative_to(WEBAPP)} has an inline <script>"
        assert not _HANDLER.search(text), f"{path.relative_to(WEBAPP)} has an on…= event handler"
        assert not _SCRIPT_URL.search(text), f"{path.relative_to(WEBAPP)} has a javascript: URL"
        for name in re.findall(r"filename=['\"]([^'\"]+\.js)['\"]", text):
            assert (WEBAPP / "static" / name).is_file(), f"{path.name} loads a missing script {name}"


def test_the_check_itself_catches_inline_code() -> None:
    assert _INLINE_SCRIPT.search("<script>alert(1)</script>")
    assert not _INLINE_SCRIPT.search('<script src="/static/a.js" defer></script>')
    assert _HANDLER.search('<button class="x" onclick="go()">')
    assert _HANDLER.search('<img\n  src="a.png" onerror=go()>')
    assert not _HANDLER.search("<p>turn the stirrer on=high</p>")
    assert _SCRIPT_URL.search('<a href="javascript:go()">')


def test_the_import_page_loads_its_script_from_static(client: Any, lab: Any, session: Any) -> None:
    from webapp.models import Person
    from webapp.services.classes import create_section
    from webapp.services.people import create_course

    coord = session.get(Person, lab.ids["coord"])
    course = create_course(session, coord, name="Thermochemistry 1")
    section = create_section(session, coord, course_id=course.id, name="Tuesday")
    assert sign_in(client, "coord@lab.example").status_code == 302
    r = client.get(f"/imports/sections/{section.id}")
    assert r.status_code == 200
    _assert_locked_down(r)
    assert '/static/import-progress.js"' in r.get_data(as_text=True)
    with client.get("/static/import-progress.js") as js:
        assert js.mimetype in ("text/javascript", "application/javascript")
        assert b"import-progress" in js.data


# ---------------------------------------------------------------- cookies


def _production_app(database_url: str, tmp_path: Path, **config: Any) -> Any:
    app = create_app(
        {
            "DATABASE_URL": database_url,
            "SECRET_KEY": "production-like",
            "PASSWORD_METHOD": FAST_HASH,
            "MONTE_CARLO_TRIALS": 0,
            **config,
        }
    )  # no TESTING, no DEBUG: CSRF on, as served
    app.instance_path = str(tmp_path / "instance")
    assert not app.testing and not app.debug
    return app


def _session_cookie(response: Any, name: str = "session") -> list[str]:
    for header in response.headers.getlist("Set-Cookie"):
        if header.startswith(name + "="):
            return [p.strip().lower() for p in header.split(";")]
    raise AssertionError(f"no {name} cookie set")


def test_production_cookie_is_secure_httponly_lax_under_https(lab: Any, database_url: str, tmp_path: Path) -> None:
    app = _production_app(database_url, tmp_path, CUPCAL_HTTPS=True)
    try:
        client = app.test_client()
        client.environ_base["wsgi.url_scheme"] = "https"
        client.environ_base["HTTP_REFERER"] = "https://localhost/auth/login"  # Flask-WTF's strict check under HTTPS
        r = sign_in(client, "coord@lab.example")
        assert r.status_code == 302
        flags = _session_cookie(r)
        assert "secure" in flags and "httponly" in flags and "samesite=lax" in flags
        assert r.headers["Strict-Transport-Security"].startswith("max-age=")
    finally:
        get_engine(app).dispose()


def test_plain_http_serving_keeps_a_usable_cookie(lab: Any, database_url: str, tmp_path: Path) -> None:
    """`cupcal serve` on http://127.0.0.1: HttpOnly and Lax, not Secure (a browser would drop it)."""
    app = _production_app(database_url, tmp_path)
    try:
        client = app.test_client()
        r = sign_in(client, "coord@lab.example")
        assert r.status_code == 302
        flags = _session_cookie(r)
        assert "httponly" in flags and "samesite=lax" in flags and "secure" not in flags
        assert "Strict-Transport-Security" not in r.headers
        assert client.get("/", follow_redirects=True).status_code == 200  # still signed in over http
    finally:
        get_engine(app).dispose()


@pytest.mark.parametrize(("value", "secure"), [("1", True), ("true", True), ("0", False), ("no", False)])
def test_the_https_flag_comes_from_the_environment(
    value: str, secure: bool, monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    monkeypatch.setenv("CUPCAL_HTTPS", value)
    app = create_app({"DATABASE_URL": f"sqlite:///{tmp_path / 'x.sqlite3'}", "SECRET_KEY": "k"})
    try:
        assert bool(app.config.get("SESSION_COOKIE_SECURE")) is secure
        assert app.config["SESSION_COOKIE_HTTPONLY"] is True and app.config["SESSION_COOKIE_SAMESITE"] == "Lax"
    finally:
        get_engine(app).dispose()
