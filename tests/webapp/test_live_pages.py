"""Live run pages (issue 15): the page, its JSON poll and its event stream, the list, the room view, the
target-U forms and finishing from the page. Every update is read from the database (SQLite and PostgreSQL)."""

from __future__ import annotations

import json
import re
import time
from html import unescape as html_unescape
from typing import Any

import pytest

from tests.webapp.conftest import csrf_token, sign_in
from tests.webapp.live_helpers import batch, demo_rows, start_live
from webapp.models import Group, Person


@pytest.fixture
def app(app: Any) -> Any:
    app.config["LIVE_STREAM_SECONDS"] = 3.0  # short streams: a test reads one to its end
    return app


def _section(session: Any, lab: Any) -> int:
    from webapp.services.classes import create_section
    from webapp.services.people import create_course

    coord = session.get(Person, lab.ids["coord"])
    course = create_course(session, coord, name="Thermochemistry lab (invented)")
    section = create_section(session, coord, course_id=course.id, name="Tuesday")
    session.get(Group, lab.groups["A"]).section_id = section.id
    session.commit()
    return section.id


def _events(chunks: str) -> list[tuple[str, dict[str, Any], str | None]]:
    out = []
    for block in chunks.split("\n\n"):
        name = re.search(r"^event: (\w+)$", block, re.M)
        data = re.search(r"^data: (.*)$", block, re.M)
        ident = re.search(r"^id: (.*)$", block, re.M)
        if name and data:
            out.append((name.group(1), json.loads(data.group(1)), ident.group(1) if ident else None))
    return out


def test_the_page_shows_the_run_its_status_line_and_the_cautions(client: Any, lab: Any) -> None:
    live = start_live(client, lab.auth("a1")).get_json()["id"]
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 20)}, headers=lab.auth("a1"))
    sign_in(client, "a2@lab.example")  # the same group follows the run
    html = client.get(f"/live/{live}").get_data(as_text=True)
    assert 'id="live-curve"' in html and 'id="live-status"' in html and "live-run.js" in html
    data = json.loads(html_unescape(re.search(r"data-initial='([^']*)'", html).group(1)))
    assert [r[0] for r in data["readings"]] == list(range(20)) and data["advice"]["status"]
    assert "eye protection" in html.lower() and "safety data sheet" in html.lower()
    listing = client.get("/live/").get_data(as_text=True)
    assert f'href="/live/{live}"' in listing and "Enthalpy of solution of KCl" in listing
    client.post("/auth/logout", data={"csrf_token": csrf_token(listing)})
    sign_in(client, "b1@lab.example")  # another group: not found
    assert client.get(f"/live/{live}").status_code == 404
    assert client.get(f"/live/{live}/update.json").status_code == 404
    assert f'href="/live/{live}"' not in client.get("/live/").get_data(as_text=True)


def test_the_poll_gives_what_the_page_lacks(client: Any, lab: Any) -> None:
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 12)}, headers=h)
    sign_in(client, "a1@lab.example")
    first = client.get(f"/live/{live}/update.json?after=-1").get_json()
    assert len(first["readings"]) == 12 and "advice" in first and first["last_seq"] == 11
    later = client.get(f"/live/{live}/update.json?after=9&advice={first['advice_seq']}").get_json()
    assert [r[0] for r in later["readings"]] == [10, 11] and "advice" not in later  # advice unchanged: not sent


def test_the_event_stream_sends_new_readings_as_they_are_stored(app: Any, client: Any, lab: Any) -> None:
    h = lab.auth("a1")
    rows = demo_rows()
    live = start_live(client, h).get_json()["id"]
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(rows, 0, 5)}, headers=h)
    viewer = app.test_client()
    sign_in(viewer, "a1@lab.example")
    response = viewer.get(f"/live/{live}/events?after=-1", buffered=False)
    assert response.mimetype == "text/event-stream"
    stream = iter(response.response)
    assert next(stream).decode().startswith("retry: 1000")
    ((name, data, ident),) = _events(next(stream).decode())
    assert name == "update" and [r[0] for r in data["readings"]] == [0, 1, 2, 3, 4] and ident.startswith("4.")
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(rows, 5, 7)}, headers=h)
    t0 = time.monotonic()
    seen: list[int] = []
    while 6 not in seen:  # the stream wakes (NOTIFY on PostgreSQL, a poll on SQLite) and sends 5 and 6
        seen += [r[0] for n, d, _i in _events(next(stream).decode()) if n == "update" for r in d["readings"]]
    assert seen == [5, 6] and time.monotonic() - t0 < 2.5
    rest = b"".join(stream).decode()  # the stream ends by itself (LIVE_STREAM_SECONDS)
    assert all(n in ("update", "ping") for n, _d, _i in _events(rest))
    resumed = viewer.get(f"/live/{live}/events", headers={"Last-Event-ID": "5.-1"}, buffered=False)
    parts = iter(resumed.response)
    next(parts)
    ((_n, data, _i),) = _events(next(parts).decode())
    assert [r[0] for r in data["readings"]] == [6]  # a reconnect resumes after the last event's id
    resumed.close()
    response.close()


def test_the_room_view_shows_every_bench_of_the_section(app: Any, client: Any, lab: Any, session: Any) -> None:
    section = _section(session, lab)
    rows = demo_rows()
    ids = []
    for who, bench in (("a1", "Bench 4"), ("a2", "Bench 7")):
        run_file = re.sub(r"(?m)^bench = .*$", f'bench = "{bench}"', start_live.__globals__["live_run_file"]())
        r = client.post("/api/live-runs", json={"run_file": run_file, "client_key": f"k-{who}"}, headers=lab.auth(who))
        ids.append(r.get_json()["id"])
        client.post(f"/api/live-runs/{ids[-1]}/readings", json={"readings": batch(rows, 0, 8)}, headers=lab.auth(who))
    sign_in(client, "coord@lab.example")
    html = client.get(f"/classes/sections/{section}/live").get_data(as_text=True)
    tiles = json.loads(html_unescape(re.search(r"data-initial='([^']*)'", html).group(1)))
    assert sorted(t["bench"] for t in tiles) == ["Bench 4", "Bench 7"] and all(t["advice"]["status"] for t in tiles)
    assert all(t["group"] == "Group A" and len(t["readings"]) == 8 for t in tiles)
    cursor = re.search(r'data-cursor="([^"]*)"', html).group(1)
    client.post(f"/api/live-runs/{ids[0]}/readings", json={"readings": batch(rows, 8, 10)}, headers=lab.auth("a1"))
    poll = client.get(f"/classes/sections/{section}/live/update.json", query_string={"since": cursor}).get_json()
    assert [(t["id"], [r[0] for r in t["readings"]]) for t in poll["items"]] == [(ids[0], [8, 9])]
    stream = iter(
        client.get(
            f"/classes/sections/{section}/live/events", query_string={"since": poll["cursor"]}, buffered=False
        ).response
    )
    next(stream)
    client.post(f"/api/live-runs/{ids[1]}/readings", json={"readings": batch(rows, 8, 9)}, headers=lab.auth("a2"))
    got: list[Any] = []
    while not got:
        got = [t for n, d, _i in _events(next(stream).decode()) if n == "room" for t in d["items"]]
    assert [(t["id"], [r[0] for r in t["readings"]]) for t in got] == [(ids[1], [8])]
    assert f"/classes/sections/{section}/live" in client.get(f"/classes/sections/{section}").get_data(as_text=True)


def test_target_forms_and_finishing_from_the_page(client: Any, lab: Any, session: Any) -> None:
    section = _section(session, lab)
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    rows = demo_rows()
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(rows, 0, len(rows))}, headers=h)
    sign_in(client, "a1@lab.example")
    page = client.get(f"/live/{live}").get_data(as_text=True)
    r = client.post(f"/live/{live}/target", data={"target_u": "0.4", "csrf_token": csrf_token(page)})
    assert r.status_code == 302
    assert client.get(f"/api/live-runs/{live}", headers=h).get_json()["target_u"] == 0.4
    r = client.post(
        f"/live/{live}/target", data={"target_u": "-3", "csrf_token": csrf_token(page)}, follow_redirects=True
    )
    assert "expected a positive number" in r.get_data(as_text=True)
    assert (
        client.post(
            f"/classes/sections/{section}/live/target", data={"target_u": "0.5", "csrf_token": csrf_token(page)}
        ).status_code
        == 403
    )  # students: no
    r = client.post(f"/live/{live}/finish", data={"csrf_token": csrf_token(page)})
    assert r.status_code == 302 and re.search(r"/runs/\d+$", r.headers["Location"])
    assert client.get(f"/api/live-runs/{live}", headers=h).get_json()["state"] == "finished"


def test_the_advisor_runs_once_per_batch_and_never_for_a_page(client: Any, lab: Any, monkeypatch: Any) -> None:
    import calc.live.advisor as advisor

    calls: list[int] = []
    real = advisor.advise

    def counting(*args: Any, **kwargs: Any) -> Any:
        calls.append(len(args[1]))
        return real(*args, **kwargs)

    monkeypatch.setattr(advisor, "advise", counting)
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    assert calls == [0]  # the first advice: no readings yet
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 30)}, headers=h)
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 30)}, headers=h)  # a retry
    assert calls == [0, 30]  # the retry stored nothing new: no new advice
    sign_in(client, "a1@lab.example")
    for url in (f"/live/{live}", f"/live/{live}/update.json", "/live/"):
        assert client.get(url).status_code == 200
    assert client.get(f"/api/live-runs/{live}", headers=h).status_code == 200
    assert calls == [0, 30]


def test_the_stored_phase_goes_back_to_the_advisor(client: Any, lab: Any, session: Any, monkeypatch: Any) -> None:
    """The advisor keeps no state: its hysteresis (docs/methods.md §9.1) gets the phase stored on the row."""
    import json

    import calc.live.advisor as advisor
    from webapp.models import LiveRun

    given: list[Any] = []
    real = advisor.advise

    def recording(*args: Any, **kwargs: Any) -> Any:
        given.append(kwargs.get("previous_phase"))
        return real(*args, **kwargs)

    monkeypatch.setattr(advisor, "advise", recording)
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 5)}, headers=h)
    row = session.get(LiveRun, live)
    session.refresh(row)
    assert json.loads(row.advice_json)["phase"] == "waiting"
    row.advice_json = json.dumps({**json.loads(row.advice_json), "phase": "can_stop"})
    session.commit()
    client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 5, 15)}, headers=h)
    assert given == [None, "waiting", "can_stop"]


def test_a_failing_advisor_keeps_the_readings(client: Any, lab: Any, monkeypatch: Any) -> None:
    import calc.live.advisor as advisor

    def broken(*_args: Any, **_kwargs: Any) -> Any:
        raise RuntimeError("simulated fault")

    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    monkeypatch.setattr(advisor, "advise", broken)
    r = client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), 0, 5)}, headers=h)
    assert r.status_code == 200 and r.get_json()["last_seq"] == 4
    got = client.get(f"/api/live-runs/{live}", headers=h).get_json()
    assert (
        got["n_readings"] == 5 and got["advice"]["phase"] == "refused" and "advisor failed" in got["advice"]["status"]
    )


def test_advice_waits_for_enough_new_log_time(app: Any, client: Any, lab: Any, monkeypatch: Any) -> None:
    import calc.live.advisor as advisor

    calls: list[int] = []
    real = advisor.advise
    monkeypatch.setattr(advisor, "advise", lambda *a, **k: calls.append(len(a[1])) or real(*a, **k))
    app.config["LIVE_ADVICE_EVERY_S"] = 3.0
    h = lab.auth("a1")
    live = start_live(client, h).get_json()["id"]
    for i in range(5):  # the demo log reads every 2 s: t = 0, 2, 4, 6, 8
        client.post(f"/api/live-runs/{live}/readings", json={"readings": batch(demo_rows(), i, i + 1)}, headers=h)
    # created (no readings), then t = 0 (first readings), t = 4 (4 s after 0), t = 8 (4 s after 4)
    assert calls == [0, 1, 3, 5]
