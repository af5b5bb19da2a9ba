"""Accounts that work: sign-in links, passwords set by a coordinator, one's own password, `cupcal users`.

The rules checked are common practice for one-time links and passwords (no source): a link works
once, a newer link replaces an older one, an expired link fails, a preview (GET) does not spend
it, and only a hash of the secret is stored.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import re
from typing import Any

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from tests.webapp.conftest import FAST_HASH, csrf_token, sign_in
from webapp.models import AuditEntry, Person, SignInLink


def _section_with_students(session: Any, coordinator_id: int) -> int:
    from webapp.services.classes import import_roster

    roster = (
        "course,section,group,name,email,role\n"
        "Term lab,Wed,W1,Nell Quarrington,nell@lab.example,student\n"
        "Term lab,Wed,W1,Oren Maplethorpe,oren@lab.example,student\n"
    )
    import_roster(session, session.get(Person, coordinator_id), roster, password_method=FAST_HASH)
    from webapp.models import Section

    return session.scalar(sa.select(Section.id).where(Section.name == "Wed"))


def _links_csv(client: Any, section_id: int, ids: list[int]) -> list[dict[str, str]]:
    page = client.get(f"/auth/sections/{section_id}/accounts").get_data(as_text=True)
    r = client.post(
        f"/auth/sections/{section_id}/sign-in-links",
        data={"csrf_token": csrf_token(page), "person_id": [str(i) for i in ids], "format": "csv"},
    )
    assert r.status_code == 200 and r.mimetype == "text/csv" and r.headers["Cache-Control"] == "no-store"
    return list(csv.DictReader(io.StringIO(r.get_data(as_text=True))))


def test_sign_in_link_then_own_password(app: Any, client: Any, session: Any, lab: Any) -> None:
    section_id = _section_with_students(session, lab.ids["coord"])
    nell = session.scalar(sa.select(Person).where(Person.email == "nell@lab.example"))
    sign_in(client, "coord@lab.example")
    rows = _links_csv(client, section_id, [nell.id])
    assert [r["email"] for r in rows] == ["nell@lab.example"] and rows[0]["group"] == "W1"
    path = "/" + rows[0]["link"].split("/", 3)[3]
    secret = path.rsplit("/", 1)[1]
    # only the hash is stored
    stored = session.scalars(sa.select(SignInLink.token_hash)).all()
    assert hashlib.sha256(secret.encode()).hexdigest() in stored and secret not in stored
    student = app.test_client()
    page = student.get(path)  # a preview does not spend the link
    assert page.status_code == 200 and "Nell Quarrington" in page.get_data(as_text=True)
    assert student.get(path).status_code == 200
    r = student.post(path, data={"csrf_token": csrf_token(page.get_data(as_text=True))})
    assert r.status_code == 302 and r.headers["Location"].endswith("/auth/password")
    # every page leads to the password page until one is chosen
    assert student.get("/runs/").headers["Location"].endswith("/auth/password")
    form = student.get("/auth/password").get_data(as_text=True)
    assert "Current password" not in form
    bad = student.post("/auth/password", data={"csrf_token": csrf_token(form), "password": "short", "confirm": "short"})
    assert bad.status_code == 400 and "at least 10 characters" in bad.get_data(as_text=True)
    bad = student.post(
        "/auth/password",
        data={"csrf_token": csrf_token(form), "password": "a fine long one", "confirm": "another long one"},
    )
    assert bad.status_code == 400 and "differ" in bad.get_data(as_text=True)
    ok = student.post(
        "/auth/password",
        data={"csrf_token": csrf_token(form), "password": "nell's own password", "confirm": "nell's own password"},
    )
    assert ok.status_code == 302 and student.get("/runs/").status_code == 200
    # the link is spent
    fresh = app.test_client()
    assert fresh.get(path).status_code == 404
    assert (
        fresh.post(path, data={"csrf_token": csrf_token(fresh.get("/auth/login").get_data(as_text=True))}).status_code
        == 404
    )
    # and the chosen password signs in
    assert sign_in(fresh, "nell@lab.example", "nell's own password").status_code == 302
    fields = [
        a.field
        for a in session.scalars(
            sa.select(AuditEntry).where(AuditEntry.entity == "person", AuditEntry.entity_id == nell.id)
        )
    ]
    assert fields == ["sign_in_link", "sign_in_link", "password"]


def test_a_newer_link_replaces_the_older_and_links_expire(app: Any, session: Any, lab: Any) -> None:
    from webapp.services.accounts import issue_links, use_link

    _section_with_students(session, lab.ids["coord"])
    oren = session.scalar(sa.select(Person).where(Person.email == "oren@lab.example"))
    coord = session.get(Person, lab.ids["coord"])
    first = issue_links(session, coord, [oren])[0].secret
    second = issue_links(session, coord, [oren])[0].secret
    assert use_link(session, first) is None
    third = issue_links(session, coord, [oren])[0].secret
    link = session.scalar(
        sa.select(SignInLink).where(SignInLink.token_hash == hashlib.sha256(third.encode()).hexdigest())
    )
    link.expires_at = dt.datetime(2000, 1, 1)
    session.commit()
    assert use_link(session, third) is None and use_link(session, second) is None  # second was replaced by third
    fourth = issue_links(session, coord, [oren])[0].secret
    assert use_link(session, fourth).id == oren.id and use_link(session, fourth) is None
    with pytest.raises(Exception, match="coordinator"):
        issue_links(session, session.get(Person, lab.ids["tech"]), [oren])


def test_coordinator_sets_a_password_students_may_not(app: Any, client: Any, session: Any, lab: Any) -> None:
    sign_in(client, "a1@lab.example")
    token = csrf_token(client.get("/auth/password").get_data(as_text=True))
    assert (
        client.post(
            f"/auth/people/{lab.ids['a2']}/password", data={"csrf_token": token, "password": "0123456789ab"}
        ).status_code
        == 403
    )
    # changing one's own password needs the current one
    r = client.post(
        "/auth/password",
        data={"csrf_token": token, "current": "wrong", "password": "0123456789ab", "confirm": "0123456789ab"},
    )
    assert r.status_code == 400 and "current password is wrong" in r.get_data(as_text=True)
    coord = app.test_client()
    sign_in(coord, "coord@lab.example")
    token = csrf_token(coord.get("/auth/password").get_data(as_text=True))
    r = coord.post(
        f"/auth/people/{lab.ids['a2']}/password",
        data={"csrf_token": token, "password": "temporary-pass-1", "must_change": "yes"},
    )
    assert r.status_code == 302
    a2 = app.test_client()
    assert sign_in(a2, "a2@lab.example", "temporary-pass-1").status_code == 302
    assert a2.get("/").headers["Location"].endswith("/auth/password")
    form = a2.get("/auth/password").get_data(as_text=True)
    same = a2.post(
        "/auth/password",
        data={"csrf_token": csrf_token(form), "password": "temporary-pass-1", "confirm": "temporary-pass-1"},
    )
    assert same.status_code == 400 and "other than the one you were given" in same.get_data(as_text=True)


def test_cupcal_users_sets_passwords_and_makes_links(
    app: Any, session: Any, lab: Any, database_url: str, monkeypatch: pytest.MonkeyPatch, tmp_path: Any
) -> None:
    from calc.cli.commands import cli

    monkeypatch.setenv("DATABASE_URL", database_url)
    monkeypatch.setenv("CUPCAL_SECRET_KEY", "cmd")
    monkeypatch.setattr("webapp.DEFAULTS", {**__import__("webapp").DEFAULTS, "PASSWORD_METHOD": FAST_HASH})
    section_id = _section_with_students(session, lab.ids["coord"])
    runner = CliRunner()
    r = runner.invoke(cli, ["users", "list", "--section", str(section_id)])
    assert r.exit_code == 0 and "nell@lab.example" in r.output and "oren@lab.example" in r.output
    r = runner.invoke(
        cli, ["users", "set-password", "nell@lab.example", "--password-stdin"], input="from-the-shell-1\n"
    )
    assert r.exit_code == 0, r.output
    assert sign_in(app.test_client(), "nell@lab.example", "from-the-shell-1").status_code == 302
    r = runner.invoke(cli, ["users", "set-password", "nobody@lab.example", "--password-stdin"], input="x" * 12 + "\n")
    assert r.exit_code == 2 and "no person" in r.output
    r = runner.invoke(cli, ["users", "set-password", "nell@lab.example", "--password-stdin"], input="short\n")
    assert r.exit_code == 2 and "at least 10" in r.output
    out = tmp_path / "links.csv"
    r = runner.invoke(
        cli,
        ["users", "links", "--section", str(section_id), "--csv", str(out), "--base-url", "https://lab.example/cupcal"],
    )
    assert r.exit_code == 0, r.output
    with out.open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert sorted(x["email"] for x in rows) == ["nell@lab.example", "oren@lab.example"]
    assert all(re.fullmatch(r"https://lab\.example/cupcal/auth/link/[\w-]+", x["link"]) for x in rows)
    secret = rows[0]["link"].rsplit("/", 1)[1]
    assert app.test_client().get(f"/auth/link/{secret}").status_code == 200
    assert runner.invoke(cli, ["users", "links"]).exit_code == 2
