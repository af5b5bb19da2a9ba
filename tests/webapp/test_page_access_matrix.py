"""Every HTML page route × every kind of caller, against a table of expected outcomes.

The JSON API has its own matrix (test_access_matrix.py); this one covers the rest of the
url_map (not ``/api/``, not ``static``), GET and POST. A route added without a row makes
``test_every_page_route_has_a_row`` fail. Rules (webapp/services/access.py, the README; common
practice of this project, no outside source): a caller without a session is sent to the sign-in
page (``L`` below: a 302 whose Location is /auth/login); an API token is NOT a sign-in for pages
(``read``/``write`` are a1's tokens sent as ``Authorization: Bearer``, and they get ``L`` too),
except on the embed card and oEmbed routes, which are made for tokens and signed links (401
without either); a role that forbids an operation gets 403; a thing the caller may not see gets
404 (its existence is not revealed). ``R`` is a 302 elsewhere (a saved form, or a flashed
message): where that could hide a refusal, EFFECTS counts what was stored. The embed routes
are also called with a valid and a tampered signed link (LINKED).
The run is a1's (group A, section S1); b1 is in group B (section S2). POSTs carry the CSRF
token of a page the caller can load (the home page, or the sign-in page when it is sent there)
and a minimal valid form; where a valid one is not cheap (``/runs/new/<kind>``) the form is
empty and a caller let through gets the form back with its errors (400).
SQLite only (access rules live in Python, not in the database).
"""

from __future__ import annotations

import io
import os
import re
import shutil
import tempfile
import zipfile
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, quote, urlsplit

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import PASSWORD, csrf_token, demo_files, sign_in, upload
from tests.webapp.live_helpers import live_run_file
from webapp.models import (
    ApiToken,
    AuditEntry,
    Bench,
    Calibration,
    Calorimeter,
    Comment,
    Course,
    Group,
    MarkingScheme,
    Person,
    Result,
    Run,
    RunInput,
    RunReview,
    Section,
    SignInLink,
)
from webapp.services.tokens import issue_scoped_token

ACTORS = ("anon", "b1", "a1", "tech", "coord", "read", "write")
SIGNED_IN = ("b1", "a1", "tech", "coord")
L = "login"  # 302 to the sign-in page
R = 302  # 302 anywhere else


def row(*outcomes: int | str) -> dict[str, int | str]:
    """Return the expected outcomes of one route, given in the order of ACTORS."""
    assert len(outcomes) == len(ACTORS)
    return dict(zip(ACTORS, outcomes))


ALL_SIGNED_IN = row(L, 200, 200, 200, 200, L, L)
COORDINATOR_FORM = row(L, 403, 403, 403, R, L, L)
STAFF_FORM = row(L, 403, 403, R, R, L, L)  # technicians and coordinators (calibrations)
STAFF_ONLY = row(L, 403, 403, 200, 200, L, L)
A1S_RUN = row(L, 404, 200, 200, 200, L, L)
COORDINATOR_FORM_404 = row(L, 404, 403, 403, R, L, L)  # a section b1 may not see, coordinators only

#: the outcome of each route for each caller (columns: anon, b1, a1, tech, coord, read, write)
EXPECTED: dict[tuple[str, str], dict[str, int | str]] = {
    ("GET", "/"): ALL_SIGNED_IN,
    ("GET", "/auth/login"): row(200, R, R, R, R, 200, 200),
    ("POST", "/auth/login"): row(R, R, R, R, R, R, R),  # a1's e-mail and password: signed in, or home already
    ("POST", "/auth/logout"): row(L, L, L, L, L, L, L),
    ("GET", "/auth/tokens"): ALL_SIGNED_IN,
    ("POST", "/auth/tokens"): ALL_SIGNED_IN,  # the page with the new secret
    ("POST", "/auth/tokens/<int:token_id>/revoke"): row(L, 404, R, 404, 404, L, L),  # a1's token: only a1 revokes it
    ("GET", "/calorimeters/"): ALL_SIGNED_IN,
    ("POST", "/calorimeters/"): COORDINATOR_FORM,
    ("GET", "/calorimeters/<int:calorimeter_id>"): ALL_SIGNED_IN,
    ("GET", "/calorimeters/<int:calorimeter_id>/control"): ALL_SIGNED_IN,  # see test_control_chart_hides_...
    ("POST", "/calorimeters/<int:calorimeter_id>/edit"): COORDINATOR_FORM,
    ("POST", "/calorimeters/<int:calorimeter_id>/heat-capacity"): STAFF_FORM,
    # the calibration actions flash their outcome (approved, withdrawn, or why not) and go back to the page
    ("POST", "/calorimeters/<int:calorimeter_id>/calibrations/<int:calibration_id>/approve"): STAFF_FORM,
    ("POST", "/calorimeters/<int:calorimeter_id>/calibrations/<int:calibration_id>/withdraw"): STAFF_FORM,
    ("POST", "/calorimeters/<int:calorimeter_id>/calibrations/<int:calibration_id>/reanalyze-runs"): STAFF_FORM,
    ("GET", "/calorimeters/<int:calorimeter_id>/history.svg"): ALL_SIGNED_IN,
    ("GET", "/classes/"): ALL_SIGNED_IN,
    ("POST", "/classes/courses"): COORDINATOR_FORM,
    ("GET", "/classes/courses/<int:course_id>/dashboard"): STAFF_ONLY,
    ("GET", "/classes/courses/<int:course_id>/export.<fmt>"): STAFF_ONLY,
    ("POST", "/classes/courses/<int:course_id>/sections"): COORDINATOR_FORM,
    ("POST", "/classes/roster"): row(L, 403, 403, 403, 200, L, L),  # the import report
    ("GET", "/classes/sections/<int:section_id>"): row(L, 404, 200, 200, 200, L, L),
    ("POST", "/classes/sections/<int:section_id>"): row(L, 404, 403, 403, R, L, L),  # a bench
    ("GET", "/classes/sections/<int:section_id>/dashboard"): row(L, 404, 200, 200, 200, L, L),
    # live runs: a1's live run (group A, section S1); its event streams end after 0.2 s here
    ("GET", "/live/"): ALL_SIGNED_IN,
    ("GET", "/live/<int:live_id>"): A1S_RUN,
    ("GET", "/live/<int:live_id>/update.json"): A1S_RUN,
    ("GET", "/live/<int:live_id>/events"): A1S_RUN,
    ("POST", "/live/<int:live_id>/target"): row(L, 404, R, R, R, L, L),
    ("POST", "/live/<int:live_id>/finish"): row(L, 404, R, R, R, L, L),  # no readings yet: refused, said on the page
    ("GET", "/classes/sections/<int:section_id>/live"): row(L, 404, 200, 200, 200, L, L),
    ("GET", "/classes/sections/<int:section_id>/live/update.json"): row(L, 404, 200, 200, 200, L, L),
    ("GET", "/classes/sections/<int:section_id>/live/events"): row(L, 404, 200, 200, 200, L, L),
    ("POST", "/classes/sections/<int:section_id>/live/target"): COORDINATOR_FORM_404,
    ("GET", "/classes/sections/<int:section_id>/export.<fmt>"): STAFF_ONLY,
    ("GET", "/embed/runs/<int:run_id>"): row(401, 404, 200, 200, 200, 200, 200),
    ("GET", "/imports/sections/<int:section_id>"): STAFF_ONLY,
    ("POST", "/imports/sections/<int:section_id>"): STAFF_ONLY,  # the report of a one-run zip
    ("GET", "/imports/eln"): STAFF_ONLY,
    ("POST", "/imports/eln"): STAFF_ONLY,  # the report of a one-run archive
    ("GET", "/oembed"): row(401, 404, 200, 200, 200, 200, 200),
    ("GET", "/plan"): ALL_SIGNED_IN,
    ("GET", "/runs/"): ALL_SIGNED_IN,
    ("GET", "/runs/<int:run_id>"): A1S_RUN,
    ("GET", "/runs/<int:run_id>/<string:which>"): A1S_RUN,
    ("GET", "/runs/<int:run_id>/lock"): row(L, 404, 200, 403, 200, L, L),  # the confirmation step
    ("POST", "/runs/<int:run_id>/lock"): row(L, 404, R, 403, R, L, L),  # a fresh run of a1's per caller
    ("GET", "/runs/samples"): ALL_SIGNED_IN,
    ("POST", "/runs/<int:run_id>/reanalyze"): row(L, 404, R, R, R, L, L),
    ("GET", "/runs/<int:run_id>/results/<int:result_id>/<string:which>.svg"): A1S_RUN,
    ("GET", "/runs/new"): ALL_SIGNED_IN,
    ("GET", "/runs/new/<string:kind>"): ALL_SIGNED_IN,
    ("POST", "/runs/new/<string:kind>"): row(L, 400, 400, 400, 400, L, L),  # empty form: shown with its errors
    ("GET", "/runs/upload"): ALL_SIGNED_IN,
    ("POST", "/runs/upload"): ALL_SIGNED_IN,  # a preview of the demo files (nothing stored)
    # review: the author (open run) or staff withdraw; staff comment and mark; coordinators set schemes
    ("POST", "/runs/<int:run_id>/review"): row(L, 404, R, R, R, L, L),  # a fresh run of a1's per caller
    ("POST", "/runs/<int:run_id>/comments"): row(L, 403, 403, R, R, L, L),
    ("POST", "/runs/<int:run_id>/mark"): row(L, 403, 403, R, R, L, L),
    ("POST", "/groups/<int:group_id>/comments"): row(L, 403, 403, R, R, L, L),
    ("GET", "/classes/sections/<int:section_id>/marking"): STAFF_ONLY,
    ("POST", "/classes/sections/<int:section_id>/marking"): row(L, 403, 403, 403, R, L, L),
    # accounts: a link that names nobody is not found; coordinators manage a section's accounts
    ("GET", "/auth/link/<string:secret>"): row(404, 404, 404, 404, 404, 404, 404),
    ("POST", "/auth/link/<string:secret>"): row(404, 404, 404, 404, 404, 404, 404),
    ("GET", "/auth/password"): ALL_SIGNED_IN,
    ("POST", "/auth/password"): row(L, 400, 400, 400, 400, L, L),  # a wrong current password
    ("GET", "/auth/sections/<int:section_id>/accounts"): row(L, 403, 403, 403, 200, L, L),
    ("POST", "/auth/sections/<int:section_id>/sign-in-links"): row(L, 403, 403, 403, 200, L, L),  # the printable page
    ("POST", "/auth/people/<int:person_id>/password"): COORDINATOR_FORM,
}

#: the embed routes with a signed link (issued by a1 for a1's run): the link alone decides
LINKED: dict[tuple[str, str, str], dict[str, int | str]] = {
    ("GET", "/embed/runs/<int:run_id>", "valid link"): row(200, 200, 200, 200, 200, 200, 200),
    ("GET", "/embed/runs/<int:run_id>", "bad link"): row(403, 403, 403, 403, 403, 403, 403),
    ("GET", "/oembed", "valid link"): row(200, 200, 200, 200, 200, 200, 200),
    ("GET", "/oembed", "bad link"): row(403, 403, 403, 403, 403, 403, 403),
}


@pytest.fixture
def database_url(sqlite_template: Path, tmp_path: Path) -> Iterator[str]:
    """Use SQLite only here, in memory-backed /dev/shm where there is one (each commit's fsync then
    costs nothing: the tables are set up anew for every route)."""
    shm = Path("/dev/shm")
    with tempfile.TemporaryDirectory(dir=shm if shm.is_dir() and os.access(shm, os.W_OK) else tmp_path) as folder:
        path = Path(folder) / "cupcal.sqlite3"
        shutil.copyfile(sqlite_template, path)
        yield f"sqlite:///{path}"


@pytest.fixture
def world(client: Any, lab: Any, session: Any) -> dict[str, Any]:
    """Make a1's run (section S1 through group A; b1's group B is in S2), a course, tokens and a card link.

    Analyses skip the Monte Carlo check (access is the question here, not the numbers).
    """
    client.application.config["MONTE_CARLO_TRIALS"] = 0
    r = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0)
    assert r.status_code == 201, r.get_data(as_text=True)
    run_id = int(r.get_json()["id"])
    result_id = session.get(Run, run_id).current_result.id
    coord = lab.auth("coord")
    course_id = client.post("/api/courses", headers=coord, json={"name": "Course P"}).get_json()["id"]
    sections = [
        client.post("/api/sections", headers=coord, json={"course_id": course_id, "name": name}).get_json()["id"]
        for name in ("S1", "S2")
    ]
    session.get(Group, lab.groups["A"]).section_id = sections[0]
    session.get(Group, lab.groups["B"]).section_id = sections[1]
    session.commit()
    a1 = session.get(Person, lab.ids["a1"])
    headers = {
        "read": issue_scoped_token(session, a1, "p-read", "read")[1],
        "write": issue_scoped_token(session, a1, "p-write", "write")[1],
    }
    link = client.post(f"/api/runs/{run_id}/embed-link", headers=lab.auth("a1")).get_json()["url"]
    client.application.config["LIVE_STREAM_SECONDS"] = 0.2
    live_id = client.post(
        "/api/live-runs", headers=lab.auth("a1"), json={"run_file": live_run_file(), "client_key": "matrix"}
    ).get_json()["id"]
    return {
        "run_id": run_id,
        "result_id": result_id,
        "course_id": course_id,
        "section_id": sections[0],
        "group_id": lab.groups["A"],
        "person_id": lab.ids["a2"],
        "live_id": live_id,
        "a2_id": lab.ids["a2"],
        "calorimeter_id": lab.calorimeter_id,
        "calibration_id": _spare_calibration(session, lab),
        "link": parse_qs(urlsplit(link).query)["link"][0],
        "bearer": {k: {"Authorization": f"Bearer {v}"} for k, v in headers.items()},
    }


class Caller:
    """One kind of caller: a client of its own, signed in through the form or sending a token."""

    def __init__(self, app: Any, who: str, w: dict[str, Any]) -> None:
        self.client = app.test_client()
        self.headers = w["bearer"].get(who, {})
        if who in SIGNED_IN:
            assert sign_in(self.client, f"{who}@lab.example").status_code == 302

    def open(self, method: str, url: str, **kwargs: Any) -> Any:
        return self.client.open(url, method=method, headers=self.headers, **kwargs)

    def csrf(self) -> str:
        """Return the CSRF token of the home page, or of the sign-in page when sent there."""
        page = self.open("GET", "/")
        if page.status_code != 200:
            page = self.open("GET", "/auth/login")
        return csrf_token(page.get_data(as_text=True))


def outcome(r: Any) -> int | str:
    """Return ``L`` for a redirect to the sign-in page, else the status code."""
    if r.status_code == 302 and urlsplit(r.headers["Location"]).path == "/auth/login":
        return L
    return r.status_code


# ---------------------------------------------------------------- requests of each route


def _fresh_run(app: Any, lab: Any, w: dict[str, Any]) -> int:
    return int(upload(app.test_client(), lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"])


def _fresh_token(app: Any, lab: Any, w: dict[str, Any]) -> int:
    from webapp.db import new_session

    s = new_session(app)
    try:
        return issue_scoped_token(s, s.get(Person, lab.ids["a1"]), "to revoke", "read")[0].id
    finally:
        s.close()


def _spare_calibration(session: Any, lab: Any) -> int:
    return int(session.scalar(sa.select(Calibration.id).where(Calibration.calorimeter_id == lab.spare_calorimeter_id)))


#: path parameters made anew for each caller (the request changes them)
FRESH: dict[tuple[str, str], tuple[str, Callable[..., int]]] = {
    ("POST", "/runs/<int:run_id>/lock"): ("run_id", _fresh_run),
    ("POST", "/auth/tokens/<int:token_id>/revoke"): ("token_id", _fresh_token),
    ("POST", "/runs/<int:run_id>/review"): ("run_id", _fresh_run),
}

#: values of the path parameters that are not ids of the world
PATH_VALUES: dict[str, dict[str, str]] = {
    "/runs/<int:run_id>/<string:which>": {"which": "readings"},
    "/runs/<int:run_id>/results/<int:result_id>/<string:which>.svg": {"which": "plot"},
    "/runs/new/<string:kind>": {"kind": "dissolution"},
    "/classes/courses/<int:course_id>/export.<fmt>": {"fmt": "csv"},
    "/classes/sections/<int:section_id>/export.<fmt>": {"fmt": "csv"},
    "/auth/link/<string:secret>": {"secret": "no-such-link"},
}


def _file(data: bytes, name: str) -> tuple[io.BytesIO, str]:
    return io.BytesIO(data), name


def _import_form(who: str, w: dict[str, Any]) -> dict[str, Any]:
    """A zip of the demo run (its title made unique, so it is not "already stored") and a mapping to group A."""
    toml, csv = demo_files("diss-kcl-01")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("diss-kcl-01.toml", toml.replace('title = "', f'title = "{who}: ', 1))
        z.writestr("diss-kcl-01.csv", csv)
    return {
        "archive": _file(buf.getvalue(), "runs.zip"),
        "mapping": _file(b"file,group\ndiss-kcl-01.toml,Group A\n", "mapping.csv"),
    }


def _eln_form(who: str, w: dict[str, Any]) -> dict[str, Any]:
    """An .eln archive of another notebook: one folder with the demo run (its title made unique) and its log."""
    toml, csv = demo_files("diss-kcl-01")
    meta = (
        '{"@context": "https://w3id.org/ro/crate/1.1/context", "@graph": ['
        '{"@id": "ro-crate-metadata.json", "@type": "CreativeWork", "about": {"@id": "./"}},'
        '{"@id": "./", "@type": "Dataset", "hasPart": [{"@id": "e/"}]}]}'
    )
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("x/ro-crate-metadata.json", meta)
        z.writestr("x/e/diss-kcl-01.toml", toml.replace('title = "', f'title = "{who}: ', 1))
        z.writestr("x/e/diss-kcl-01.csv", csv)
    return {"archive": _file(buf.getvalue(), "x.eln")}


def _upload_form(who: str, w: dict[str, Any]) -> dict[str, Any]:
    toml, csv = demo_files("diss-kcl-01")
    return {"run_file": _file(toml.encode(), "r.toml"), "readings": _file(csv, "r.csv"), "action": "preview"}


#: form fields of each POST (``who`` keeps names unique between callers); the rest send only the CSRF token
FORMS: dict[tuple[str, str], Callable[[str, dict[str, Any]], dict[str, Any]]] = {
    ("POST", "/auth/login"): lambda who, w: {"email": "a1@lab.example", "password": PASSWORD},
    ("POST", "/auth/tokens"): lambda who, w: {"label": f"made by {who}", "scope": "read"},
    ("POST", "/calorimeters/"): lambda who, w: {"new-name": f"Cup {who}", "new-parts": "one cup"},
    ("POST", "/calorimeters/<int:calorimeter_id>/edit"): lambda who, w: {
        "edit-name": "Cup TH-07 (two nested foam cups, lid)",
        "edit-parts": "two cups",
        "edit-location": f"by {who}",
    },
    ("POST", "/calorimeters/<int:calorimeter_id>/heat-capacity"): lambda who, w: {
        "hc-heat_capacity": "19.0 ± 1.5 J/K",
        "hc-note": f"entered by {who}",
        "hc-measured_on": "2026-11-30",
    },
    ("POST", "/classes/courses"): lambda who, w: {"name": f"Course {who}"},
    ("POST", "/classes/courses/<int:course_id>/sections"): lambda who, w: {"name": f"Section {who}"},
    ("POST", "/classes/roster"): lambda who, w: {
        "roster": _file(f"name,email,role\nTech {who},t-{who}@lab.example,technician\n".encode(), "roster.csv")
    },
    ("POST", "/classes/sections/<int:section_id>"): lambda who, w: {"name": f"Bench {who}", "calorimeter_id": "0"},
    ("POST", "/imports/sections/<int:section_id>"): _import_form,
    ("POST", "/imports/eln"): _eln_form,
    ("POST", "/runs/<int:run_id>/reanalyze"): lambda who, w: {"method": "naive"},
    ("POST", "/runs/upload"): _upload_form,
    ("POST", "/runs/<int:run_id>/review"): lambda who, w: {"action": "withdraw", "reason": f"by {who}"},
    ("POST", "/runs/<int:run_id>/comments"): lambda who, w: {"body": f"seen by {who}"},
    ("POST", "/runs/<int:run_id>/mark"): lambda who, w: {"points": "5", "reason": f"by {who}"},
    ("POST", "/groups/<int:group_id>/comments"): lambda who, w: {"body": f"seen by {who}"},
    ("POST", "/classes/sections/<int:section_id>/marking"): lambda who, w: {"en": "1=6, *=0", "relative": "5%=2, *=0"},
    ("POST", "/auth/password"): lambda who, w: {
        "current": "wrong",
        "password": "a long new one",
        "confirm": "a long new one",
    },
    ("POST", "/auth/sections/<int:section_id>/sign-in-links"): lambda who, w: {"person_id": str(w["a2_id"])},
    ("POST", "/auth/people/<int:person_id>/password"): lambda who, w: {"password": f"new password {who}"},
}


def _count(model: Any, *where: Any) -> Callable[[Any], int]:
    def probe(session: Any) -> int:
        return int(session.scalar(sa.select(sa.func.count()).select_from(model).where(*where)))

    return probe


#: what a route stores: a probe and how much it must grow once every caller has sent the request
EFFECTS: dict[tuple[str, str], tuple[Callable[[Any], int], int]] = {
    ("POST", "/auth/tokens"): (_count(ApiToken), 4),
    ("POST", "/auth/tokens/<int:token_id>/revoke"): (_count(ApiToken, ApiToken.revoked_at.is_not(None)), 1),
    ("POST", "/calorimeters/"): (_count(Calorimeter), 1),
    ("POST", "/calorimeters/<int:calorimeter_id>/edit"): (_count(AuditEntry, AuditEntry.entity == "calorimeter"), 1),
    ("POST", "/calorimeters/<int:calorimeter_id>/heat-capacity"): (_count(Calibration, Calibration.pool.is_(None)), 2),
    ("POST", "/classes/courses"): (_count(Course), 1),
    ("POST", "/classes/courses/<int:course_id>/sections"): (_count(Section), 1),
    ("POST", "/classes/roster"): (_count(Person), 1),
    ("POST", "/classes/sections/<int:section_id>"): (_count(Bench), 1),
    ("POST", "/imports/sections/<int:section_id>"): (_count(Run), 2),
    ("POST", "/imports/eln"): (_count(Run), 2),
    ("POST", "/runs/<int:run_id>/lock"): (_count(Run, Run.locked.is_(True)), 2),
    ("POST", "/runs/<int:run_id>/reanalyze"): (_count(Result), 3),
    ("POST", "/runs/upload"): (_count(Run), 0),
    ("POST", "/runs/new/<string:kind>"): (_count(Run), 0),
    ("POST", "/runs/<int:run_id>/review"): (_count(RunReview, RunReview.withdrawn.is_(True)), 3),
    ("POST", "/runs/<int:run_id>/comments"): (_count(Comment, Comment.run_id.is_not(None)), 2),
    ("POST", "/runs/<int:run_id>/mark"): (_count(AuditEntry, AuditEntry.field == "mark_points"), 2),
    ("POST", "/groups/<int:group_id>/comments"): (_count(Comment, Comment.group_id.is_not(None)), 2),
    ("POST", "/classes/sections/<int:section_id>/marking"): (_count(MarkingScheme), 1),
    ("POST", "/auth/password"): (_count(AuditEntry, AuditEntry.field == "password"), 0),
    ("POST", "/auth/sections/<int:section_id>/sign-in-links"): (_count(SignInLink), 1),
    ("POST", "/auth/people/<int:person_id>/password"): (_count(AuditEntry, AuditEntry.field == "password"), 1),
}


def _url(rule: str, values: dict[str, Any]) -> str:
    return re.sub(r"<(?:[a-z]+:)?([a-z_]+)>", lambda m: str(values[m.group(1)]), rule)


def _query(rule: str, w: dict[str, Any], link: str | None) -> str:
    if rule == "/oembed":
        card = f"http://localhost/embed/runs/{w['run_id']}" + (f"?link={link}" if link else "")
        return "?url=" + quote(card, safe="")
    return f"?link={link}" if link else ""


def call(app: Any, lab: Any, w: dict[str, Any], method: str, rule: str, who: str, link: str | None = None) -> Any:
    """Send one route's request as ``who`` (with a signed ``link`` on the embed routes) and return the response."""
    values = {k: v for k, v in w.items() if k.endswith("_id")}  # the ids, by the names the routes give them
    values |= PATH_VALUES.get(rule, {})
    if (method, rule) in FRESH:
        name, make = FRESH[(method, rule)]
        values[name] = make(app, lab, w)
    caller = Caller(app, who, w)
    url = _url(rule, values) + _query(rule, w, link)
    if method == "GET":
        return caller.open("GET", url)
    form = {"csrf_token": caller.csrf(), **FORMS.get((method, rule), lambda who, w: {})(who, w)}
    return caller.open("POST", url, data=form, content_type="multipart/form-data")


def page_routes(app: Any) -> set[tuple[str, str]]:
    """Return (method, rule) of every route outside ``/api/`` and ``static``, GET and POST."""
    return {
        (m, r.rule)
        for r in app.url_map.iter_rules()
        if not r.rule.startswith("/api/") and r.endpoint != "static"
        for m in sorted((r.methods or set()) - {"HEAD", "OPTIONS"})
    }


def test_every_page_route_has_a_row(app: Any) -> None:
    assert page_routes(app) == set(EXPECTED), "add a row to EXPECTED for each new page route"
    embed = {rt for rt in EXPECTED if rt[1].startswith(("/embed/", "/oembed"))}
    assert set(LINKED) == {(*rt, variant) for rt in embed for variant in ("valid link", "bad link")}


@pytest.mark.parametrize("route", sorted(EXPECTED), ids=lambda rt: f"{rt[0]} {rt[1]}")
def test_who_gets_what(app: Any, lab: Any, session: Any, world: dict[str, Any], route: tuple[str, str]) -> None:
    probe, growth = EFFECTS.get(route, (lambda s: 0, 0))
    before = probe(session)
    got = {who: outcome(call(app, lab, world, *route, who)) for who in ACTORS}
    assert got == EXPECTED[route]
    session.expire_all()
    assert probe(session) - before == growth, "stored by the wrong callers (or not by the right ones)"


@pytest.mark.parametrize("route", sorted(LINKED), ids=lambda rt: f"{rt[0]} {rt[1]} {rt[2]}")
def test_signed_links(app: Any, lab: Any, world: dict[str, Any], route: tuple[str, str, str]) -> None:
    method, rule, variant = route
    link = world["link"]
    if variant == "bad link":  # one character of the signature changed (not the last: its low bits are padding)
        link = link[:-10] + ("Q" if link[-10] == "A" else "A") + link[-9:]
    got = {who: outcome(call(app, lab, world, method, rule, who, link)) for who in ACTORS}
    assert got == LINKED[route]


# ---------------------------------------------------------------- the role decides before the form


KEPT_OUT = (403, 404, L)


@pytest.mark.parametrize(
    "route",
    [rt for rt in sorted(FORMS) if rt[0] == "POST" and any(v in (403, 404) for v in EXPECTED[rt].values())],
    ids=lambda rt: f"{rt[0]} {rt[1]}",
)
def test_a_kept_out_caller_is_kept_out_whatever_the_form(
    app: Any, lab: Any, world: dict[str, Any], monkeypatch: pytest.MonkeyPatch, route: tuple[str, str]
) -> None:
    """With an empty form, callers the table keeps out get the same 403/404/sign-in as with a valid one."""
    monkeypatch.delitem(FORMS, route)
    kept_out = [who for who in ACTORS if EXPECTED[route][who] in KEPT_OUT]
    got = {who: outcome(call(app, lab, world, *route, who)) for who in kept_out}
    assert got == {who: EXPECTED[route][who] for who in kept_out}


# ---------------------------------------------------------------- what lists show


def _links_to(caller: Caller, url: str, run_id: int) -> bool:
    page = caller.open("GET", url)
    assert page.status_code == 200, url
    return f'href="/runs/{run_id}"' in page.get_data(as_text=True)


def test_pages_that_list_runs_show_b1_none_of_a1s(app: Any, world: dict[str, Any]) -> None:
    run_id, cup = world["run_id"], world["calorimeter_id"]
    a1, b1 = Caller(app, "a1", world), Caller(app, "b1", world)
    for url in ("/", "/runs/", f"/calorimeters/{cup}", f"/calorimeters/{cup}/control"):
        assert _links_to(a1, url, run_id), url
    for url in ("/", "/runs/", f"/calorimeters/{cup}"):
        assert not _links_to(b1, url, run_id), url


def test_control_chart_hides_other_groups_runs(app: Any, world: dict[str, Any]) -> None:
    b1 = Caller(app, "b1", world)
    page = b1.open("GET", f"/calorimeters/{world['calorimeter_id']}/control").get_data(as_text=True)
    assert f'href="/runs/{world["run_id"]}"' not in page and "Enthalpy of solution of KCl" not in page


# ---------------------------------------------------------------- locked runs


def _stored(session: Any, run_id: int) -> tuple[Any, ...]:
    """Return everything stored about a run: fields, files, results, inputs and its audit trail."""
    session.expire_all()
    run = session.get(Run, run_id)
    results = session.execute(
        sa.select(Result.id, Result.is_current, Result.method).where(Result.run_id == run_id).order_by(Result.id)
    ).all()
    inputs = session.scalar(sa.select(sa.func.count()).select_from(RunInput).where(RunInput.run_id == run_id))
    audit = session.scalar(
        sa.select(sa.func.count())
        .select_from(AuditEntry)
        .where(AuditEntry.entity == "run", AuditEntry.entity_id == run_id)
    )
    return (
        run.title,
        run.notes,
        run.bench,
        run.group_id,
        run.locked,
        run.locked_by_id,
        run.locked_at,
        run.run_toml,
        run.readings_raw,
        tuple(results),
        inputs,
        audit,
    )


#: every page path that would change a run, sent to a1's run once it is locked (test_locking sends
#: the first and third as the coordinator only)
LOCKED: dict[tuple[str, str], dict[str, int | str]] = {
    ("reanalyze", "naive"): row(L, 404, 409, 409, 409, L, L),
    ("reanalyze", "no-such-method"): row(L, 404, 409, 409, 409, L, L),  # the lock decides before the form
    ("lock", ""): row(L, 404, 409, 403, 409, L, L),  # a technician may not sign at all
}


def test_a_locked_run_is_refused_by_every_page_path(app: Any, session: Any, world: dict[str, Any]) -> None:
    run_id = world["run_id"]
    a1 = Caller(app, "a1", world)
    assert a1.open("POST", f"/runs/{run_id}/lock", data={"csrf_token": a1.csrf()}).status_code == 302
    before = _stored(session, run_id)
    assert before[4] is True and before[-1] == 1  # locked, and the lock is in the audit trail
    for (path, method), expected in LOCKED.items():
        got = {}
        for who in ACTORS:
            caller = Caller(app, who, world)
            form = {"csrf_token": caller.csrf()} | ({"method": method} if method else {})
            got[who] = outcome(caller.open("POST", f"/runs/{run_id}/{path}", data=form))
        assert got == expected, (path, method)
        assert _stored(session, run_id) == before, (path, method)
    for who in ("a1", "tech", "coord"):  # the run page offers neither form
        page = Caller(app, who, world).open("GET", f"/runs/{run_id}").get_data(as_text=True)
        assert f'action="/runs/{run_id}/reanalyze"' not in page and f'action="/runs/{run_id}/lock"' not in page
