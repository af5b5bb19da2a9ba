"""A double submit of "Save" makes one run: the page forms carry a one-time token, unique on the run."""

from __future__ import annotations

import threading
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import demo_files, sign_in
from tests.webapp.page_helpers import form_from_demo, hidden, post_form
from webapp.models import Run


def _preview(client: Any, lab: Any) -> tuple[dict[str, str], dict[str, str], bytes]:
    _toml, csv = demo_files("diss-kcl-01")
    fields = form_from_demo("diss-kcl-01", lab.calorimeter_id)
    html = post_form(client, "dissolution", fields, csv=csv).get_data(as_text=True)
    return fields, {"previewed": hidden(html, "previewed"), "submit_token": hidden(html, "submit_token")}, csv


def test_pressing_save_three_times_makes_one_run(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    fields, extra, csv = _preview(client, lab)
    places = set()
    for _ in range(3):
        r = post_form(client, "dissolution", fields, csv=csv, action="save", extra=extra)
        assert r.status_code == 302
        places.add(r.headers["Location"])
    assert len(places) == 1  # each press leads to the one run
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 1
    page = client.get(places.pop()).get_data(as_text=True)
    assert "saved already by this form" in page
    # a new preview gives a new token: a second, deliberate run is possible
    fields, extra2, csv = _preview(client, lab)
    assert extra2["submit_token"] != extra["submit_token"]
    assert post_form(client, "dissolution", fields, csv=csv, action="save", extra=extra2).status_code == 302
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 2


def test_a_save_without_the_token_saves_nothing(client: Any, lab: Any, session: Any) -> None:
    sign_in(client, "a1@lab.example")
    fields, extra, csv = _preview(client, lab)
    r = post_form(client, "dissolution", fields, csv=csv, action="save", extra={"previewed": extra["previewed"]})
    assert r.status_code == 400 and "one-time token" in r.get_data(as_text=True)
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 0


def test_two_saves_at_the_same_moment_make_one_run(
    app: Any, lab: Any, session: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    from webapp.runs import create_views

    clients = [app.test_client(), app.test_client()]
    for c in clients:
        sign_in(c, "a1@lab.example")
    fields, extra, csv = _preview(clients[0], lab)
    barrier = threading.Barrier(2, timeout=30)
    real = create_views.record_run

    def both_past_the_token_check(*args: Any, **kwargs: Any) -> Any:
        barrier.wait()  # both requests have looked for the token and found no run
        return real(*args, **kwargs)

    monkeypatch.setattr(create_views, "record_run", both_past_the_token_check)
    answers: list[Any] = []

    def press(c: Any) -> None:
        answers.append(post_form(c, "dissolution", fields, csv=csv, action="save", extra=extra))

    threads = [threading.Thread(target=press, args=(c,)) for c in clients]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert [r.status_code for r in answers] == [302, 302]
    assert len({r.headers["Location"] for r in answers}) == 1
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 1
