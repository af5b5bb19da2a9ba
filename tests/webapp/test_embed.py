"""Result cards for an iframe: signed expiring links, tokens, the frame policy and oEmbed 1.0."""

from __future__ import annotations

import html as html_lib
import re
from typing import Any
from urllib.parse import urlsplit

import pytest

from tests.webapp.conftest import upload
from webapp.embed import links


@pytest.fixture
def run_id(client: Any, lab: Any) -> int:
    r = upload(client, lab.auth("a1"), "diss-kcl-01")
    assert r.status_code == 201
    return int(r.get_json()["id"])


def _path(url: str) -> str:
    parts = urlsplit(url)
    return parts.path + ("?" + parts.query if parts.query else "")


def test_signed_link_shows_the_card_and_expires(
    client: Any, lab: Any, run_id: int, app: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    now = [1_900_000_000.0]
    monkeypatch.setattr(links, "clock", lambda: now[0])
    app.config["EMBED_LINK_MAX_AGE"] = 3600
    issued = client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("a1")).get_json()
    assert issued["max_age"] == 3600 and issued["expires_at"].startswith("2030-03-17T")  # 1.9e9 s + 1 h, UTC
    r = client.get(_path(issued["url"]))  # no session, no token: the link alone
    assert r.status_code == 200
    page = r.get_data(as_text=True)
    assert "ΔH = " in page and "kJ/mol" in page and "data:image/svg+xml;base64," in page
    assert "not signed" in page and "eye protection" in page
    assert "frame-ancestors 'self'" in r.headers["Content-Security-Policy"]
    now[0] += 3599
    assert client.get(_path(issued["url"])).status_code == 200
    now[0] += 2  # past max_age
    r = client.get(_path(issued["url"]))
    assert r.status_code == 403 and "expired" in r.get_data(as_text=True)


def test_links_are_bound_to_their_run_and_tampering_fails(client: Any, lab: Any, run_id: int) -> None:
    url = _path(client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("a1")).get_json()["url"])
    other = upload(client, lab.auth("a1"), "neut-hcl-naoh-01").get_json()["id"]
    assert client.get(url.replace(f"/runs/{run_id}?", f"/runs/{other}?")).status_code == 403
    assert client.get(url[:-3] + "abc").status_code == 403
    assert client.get(f"/embed/runs/{run_id}").status_code == 401
    # a token works too; another group's student is not shown the run
    assert client.get(f"/embed/runs/{run_id}", headers=lab.auth("tech")).status_code == 200
    assert client.get(f"/embed/runs/{run_id}", headers=lab.auth("b1")).status_code == 404
    assert client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("b1")).status_code == 404


def test_frame_ancestors_is_configurable_and_only_on_embed_routes(client: Any, lab: Any, run_id: int, app: Any) -> None:
    app.config["EMBED_FRAME_ANCESTORS"] = "https://eln.example.org"
    r = client.get(f"/embed/runs/{run_id}", headers=lab.auth("a1"))
    assert r.headers["Content-Security-Policy"].endswith("frame-ancestors https://eln.example.org")
    other = client.get("/auth/login")
    assert "frame-ancestors https://eln.example.org" not in other.headers.get("Content-Security-Policy", "")


def test_oembed_returns_a_rich_iframe(client: Any, lab: Any, run_id: int) -> None:
    issued = client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("a1")).get_json()
    r = client.get(_path(issued["oembed"]))
    assert r.status_code == 200 and r.mimetype == "application/json"
    doc = r.get_json()
    # oEmbed 1.0 (oembed.com), section 2.3.4: version, type; rich needs html, width and height
    assert doc["version"] == "1.0" and doc["type"] == "rich" and doc["width"] > 0 and doc["height"] > 0
    src = html_lib.unescape(re.search(r'<iframe src="([^"]+)"', doc["html"]).group(1))
    assert src == issued["url"]
    assert client.get(_path(src)).status_code == 200
    r = client.get("/oembed", query_string={"url": issued["url"], "format": "json", "maxwidth": "300"})
    assert r.get_json()["width"] == 300
    assert client.get("/oembed", query_string={"url": issued["url"], "format": "xml"}).status_code == 501
    assert client.get("/oembed", query_string={"url": "http://x/elsewhere"}).status_code == 404
    assert client.get("/oembed", query_string={"url": f"http://localhost/embed/runs/{run_id}"}).status_code == 401


def test_an_api_token_in_the_url_is_not_taken(client: Any, lab: Any) -> None:
    # a URL is written to server and proxy logs; a token there would leak every run its owner sees
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"]
    r = client.get(f"/embed/runs/{run_id}?token={lab.tokens['a1']}")
    assert r.status_code == 401
    assert client.get(f"/embed/runs/{run_id}", headers=lab.auth("a1")).status_code == 200
