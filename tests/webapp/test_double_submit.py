"""A double submit of "Save" makes one run: the page forms carry a one-time token, unique on the run."""

from __future__ import annotations

from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import demo_files, sign_in
from tests.webapp.page_helpers import carried, form_from_demo, post_form
from tests.webapp.race_trials import all_past_the_check
from webapp.models import Run


def _preview(client: Any, lab: Any) -> tuple[dict[str, str], dict[str, str], bytes]:
    _toml, csv = demo_files("diss-kcl-01")
    fields = form_from_demo("diss-kcl-01", lab.calorimeter_id)
    html = post_form(client, "dissolution", fields, csv=csv).get_data(as_text=True)
    return fields, carried(html), csv


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

    def press(c: Any) -> Any:
        return post_form(c, "dissolution", fields, csv=csv, action="save", extra=extra)

    # both requests have looked for the token and found no run before either records one
    answers = all_past_the_check(monkeypatch, create_views, "record_run", [lambda c=c: press(c) for c in clients])
    assert [r.status_code for r in answers] == [302, 302]
    assert len({r.headers["Location"] for r in answers}) == 1
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 1
