"""Live runs in headless Chromium (issue 15): the live page grows as readings are POSTed, with no reload;
the stop advice and the warnings (spike, probe out of the liquid, readings stopped) appear; the room
view shows the bench. The notebook is served on 127.0.0.1 (tests/webapp/browser_support.py)."""

from __future__ import annotations

import time
from typing import Any

import requests

from tests.webapp.browser_support import STUDENT, WAIT_S, _shot, _sign_in, browser, server  # noqa: F401 (fixtures)
from tests.webapp.live_helpers import batch, demo_rows, live_run_file

COORDINATOR = "odile.brackwater@ternhollow.example"  # invented demo people
TOKENS: dict[str, str] = {}


def PREPARE_DEMO(session: Any) -> None:  # noqa: N802 - looked up by browser_support.server
    """Give the demo student a recorder's token (scope "live") and put the demo groups in one section."""
    import sqlalchemy as sa

    from webapp.models import Course, Group, Person
    from webapp.services.classes import create_section
    from webapp.services.tokens import issue_scoped_token

    student = session.scalar(sa.select(Person).where(Person.email == STUDENT))
    TOKENS["student"] = issue_scoped_token(session, student, "bench recorder", "live")[1]
    coordinator = session.scalar(sa.select(Person).where(Person.email == COORDINATOR))
    section = create_section(
        session, coordinator, course_id=session.scalars(sa.select(Course)).first().id, name="Heron (live check)"
    )
    for group in session.scalars(sa.select(Group)):
        group.section_id = section.id
    session.commit()


def _api(server: str, path: str, body: dict[str, Any]) -> dict[str, Any]:
    r = requests.post(server + path, json=body, headers={"Authorization": f"Bearer {TOKENS['student']}"}, timeout=60)
    assert r.status_code in (200, 201), r.text
    return r.json()


def _until(d: Any, script: str, *args: Any, timeout: float = WAIT_S) -> Any:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = d.execute_script(script, *args)
        if value:
            return value
        time.sleep(0.2)
    raise AssertionError(f"not within {timeout} s: {script}")


def _alert(d: Any, code: str, timeout: float = WAIT_S) -> str:
    return _until(
        d,
        "const e = document.querySelector('.live-alert-' + arguments[0]); return e && e.textContent;",
        code,
        timeout=timeout,
    )


def _open_new_live_run(d: Any, server: str, client_key: str, query: str = "") -> int:
    """Start a live run through the API and open its page as the demo student (signed in afresh); return its id."""
    live = int(_api(server, "/api/live-runs", {"run_file": live_run_file(), "client_key": client_key})["id"])
    d.delete_all_cookies()
    _sign_in(d, server, STUDENT)
    d.get(f"{server}/live/{live}{query}")
    return live


def test_the_live_page_grows_advises_stop_and_warns_of_a_stop(browser: Any, server: str) -> None:
    d = browser
    rows = demo_rows()
    live = _open_new_live_run(d, server, "browser-growing")
    d.execute_script("window.__sameDocument = true;")  # gone if the page reloads
    assert d.find_element("id", "live-status").text  # one plain status line from the start
    assert "eye protection" in d.find_element("css selector", "aside.cautions").text.lower()
    _until(d, "return ['stream', 'poll'].includes(document.getElementById('live-run').dataset.mode);")
    for start in range(0, len(rows), 60):
        _api(server, f"/api/live-runs/{live}/readings", {"readings": batch(rows, start, start + 60)})
        last = min(start + 60, len(rows)) - 1
        _until(d, "return document.getElementById('live-run').dataset.seq == arguments[0];", str(last))
    points = d.execute_script(
        "return document.querySelector('#live-curve polyline').getAttribute('points').trim().split(' ').length;"
    )
    assert points == len(rows) and d.execute_script("return window.__sameDocument === true;")
    status = _until(
        d,
        "const r = document.getElementById('live-run');"
        "return r.dataset.phase === 'can_stop' && document.getElementById('live-status').textContent;",
    )
    assert "stop" in status.lower()
    assert d.find_element("id", "est-value").text != "—"  # a running estimate is shown
    _shot(d, "live-page")
    # no reading for more than 5 s: the page itself says so (the recorder is still "recording")
    stale = _alert(d, "page_stale", timeout=9)
    assert "nothing new" in stale.lower()


def test_spike_and_probe_out_warnings_appear_at_once(browser: Any, server: str) -> None:
    d = browser
    rows = demo_rows()[:60]  # the fore period
    spiky = [list(r) for r in batch(rows, 0, 60)]
    spiky[40][2] += 3.0  # one reading 3 K off: a spike
    live = _api(server, "/api/live-runs", {"run_file": live_run_file(), "client_key": "browser-spike"})["id"]
    d.delete_all_cookies()
    _sign_in(d, server, STUDENT)
    d.get(f"{server}/live/{live}")
    _api(server, f"/api/live-runs/{live}/readings", {"readings": spiky})
    assert _alert(d, "spike", timeout=5)
    whole = demo_rows()[:230]  # through the addition (at 240 s) into the after period
    out = [list(r) for r in batch(whole, 0, 230)]
    room = whole[0][1]
    for i in range(200, 230):  # from 400 s the probe is out: the reading moves most of the way to the room's
        out[i][2] += 0.6 * (room - out[i][2])
    probe = _api(server, "/api/live-runs", {"run_file": live_run_file(), "client_key": "browser-probe"})["id"]
    d.get(f"{server}/live/{probe}")
    _api(server, f"/api/live-runs/{probe}/readings", {"readings": out})
    assert _alert(d, "probe_out", timeout=5)
    _shot(d, "live-probe-out")


def test_the_page_falls_back_to_polling_and_the_room_view_shows_the_bench(browser: Any, server: str) -> None:
    d = browser
    rows = demo_rows()
    live = _open_new_live_run(d, server, "browser-poll", "?poll=1")
    _until(d, "return document.getElementById('live-run').dataset.mode === 'poll';")
    _api(server, f"/api/live-runs/{live}/readings", {"readings": batch(rows, 0, 30)})
    _until(d, "return document.getElementById('live-run').dataset.seq === '29';", timeout=5)
    d.delete_all_cookies()
    _sign_in(d, server, COORDINATOR)
    section = (
        d.execute_script(
            "return [...document.querySelectorAll('a')].map(a => a.getAttribute('href'))"
            ".find(h => /^\\/classes\\/sections\\/\\d+$/.test(h || '')) || null;"
        )
        if d.get(server + "/classes/") is None
        else None
    )
    assert section, "the demo section is listed on /classes/"
    d.get(f"{server}{section}/live")
    tile = _until(d, "const t = document.getElementById('tile-' + arguments[0]); return t && t.textContent;", str(live))
    assert "Bench Heron-5" in tile and "30 readings" in tile
    # the earlier runs of this module stopped reading long ago: their tiles say so from the first paint
    assert _until(
        d,
        "return document.querySelectorAll('.tile-warnings li').length && "
        "[...document.querySelectorAll('.tile-warnings li')].some(li => li.textContent.includes("
        "'No new reading'));",
    )
    _api(server, f"/api/live-runs/{live}/readings", {"readings": batch(rows, 30, 40)})
    _until(
        d,
        "return document.getElementById('tile-' + arguments[0]).textContent.includes('40 readings');",
        str(live),
        timeout=5,
    )
    _shot(d, "live-room")
