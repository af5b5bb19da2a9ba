"""Every ``/api/`` operation × every kind of caller, against a table of expected status codes.

The table is keyed by the operations of the OpenAPI document; a route added without a row
makes ``test_every_documented_operation_has_a_row`` fail. Expected codes follow the rules of
webapp/services/access.py and the README (common practice of this project, no outside source):
no credentials → 401; a read token may only GET (403 otherwise); a student sees only their own
group's runs (404 for another group's, so their existence is not revealed); coordinators alone
manage calorimeters, courses, sections, groups, series and webhooks (403); technicians and
coordinators record, approve and withdraw calibrations; technicians see and
change every run. The run is a1's (group A); ``read``/``write`` are a1's scoped tokens.
Write requests carry a minimal valid body where one is cheap; where a cheap valid body is
not possible (packages, imports, rosters), an empty one is sent and a caller let through
gets 400 (the input check), a caller kept out 401/403.
SQLite only (access rules live in Python, not in the database).
"""

from __future__ import annotations

import io
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.conftest import demo_files, upload
from tests.webapp.live_helpers import live_run_file
from webapp.models import Person
from webapp.services.tokens import issue_scoped_token

ACTORS = ("anon", "b1", "a1", "tech", "coord", "read", "write")


def row(*codes: int) -> dict[str, int]:
    """Return the expected codes of one operation, given in the order of ACTORS."""
    assert len(codes) == len(ACTORS)
    return dict(zip(ACTORS, codes))


#                                                        anon   b1   a1 tech coord read write
EXPECTED: dict[tuple[str, str], dict[str, int]] = {
    ("delete", "/api/webhooks/{webhook_id}"): row(401, 403, 403, 403, 204, 403, 403),
    ("get", "/api/calorimeters"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/calorimeters/{calorimeter_id}"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/calorimeters/{calorimeter_id}/calibrations"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/calorimeters/{calorimeter_id}/control"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/courses"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/courses/{course_id}/dashboard"): row(401, 403, 403, 200, 200, 403, 403),
    ("get", "/api/exports"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/calorimeters/{calorimeter_id}/export.eln"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/notebook/export.eln"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/sections/{section_id}/export.eln"): row(401, 404, 404, 200, 200, 404, 404),
    ("post", "/api/eln-imports"): row(401, 403, 403, 400, 400, 403, 403),
    ("get", "/api/groups"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/me"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/methods"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/openapi.json"): row(200, 200, 200, 200, 200, 200, 200),
    ("get", "/api/results/{result_id}"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}/audit"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}/export/{fmt}"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}/files/{which}"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}/results"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/runs/{run_id}/series"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/sections"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/sections/{section_id}/dashboard"): row(401, 404, 404, 200, 200, 404, 404),
    ("get", "/api/series/{series_id}"): row(401, 404, 200, 200, 200, 200, 200),
    ("get", "/api/tokens"): row(401, 200, 200, 200, 200, 200, 200),
    ("get", "/api/webhooks"): row(401, 403, 403, 403, 200, 403, 403),
    ("get", "/api/webhooks/{webhook_id}/deliveries"): row(401, 403, 403, 403, 200, 403, 403),
    ("patch", "/api/calorimeters/{calorimeter_id}"): row(401, 403, 403, 403, 200, 403, 403),
    ("patch", "/api/runs/{run_id}"): row(401, 404, 200, 200, 200, 403, 200),
    ("post", "/api/calorimeters"): row(401, 403, 403, 403, 201, 403, 403),
    ("post", "/api/calorimeters/{calorimeter_id}/calibrations"): row(401, 403, 403, 201, 201, 403, 403),
    ("post", "/api/calibrations/{calibration_id}/approve"): row(401, 403, 403, 200, 200, 403, 403),
    ("post", "/api/calibrations/{calibration_id}/withdraw"): row(401, 403, 403, 200, 200, 403, 403),
    ("get", "/api/calibrations/{calibration_id}/runs"): row(401, 200, 200, 200, 200, 200, 200),
    # the spare cup's only calibration is its value in force: staff are told to withdraw it first
    ("post", "/api/calibrations/{calibration_id}/reanalyze-runs"): row(401, 403, 403, 400, 400, 403, 403),
    ("post", "/api/courses"): row(401, 403, 403, 403, 201, 403, 403),
    ("post", "/api/groups"): row(401, 403, 403, 403, 201, 403, 403),
    ("post", "/api/packages"): row(401, 400, 400, 400, 400, 403, 400),
    ("post", "/api/plan"): row(401, 400, 400, 400, 400, 403, 400),
    ("post", "/api/rosters"): row(401, 403, 403, 403, 400, 403, 403),
    ("post", "/api/runs"): row(401, 201, 201, 201, 201, 403, 201),
    ("post", "/api/runs/{run_id}/analyses"): row(401, 404, 201, 201, 201, 403, 201),
    ("post", "/api/runs/{run_id}/embed-link"): row(401, 404, 200, 200, 200, 403, 200),
    ("post", "/api/runs/{run_id}/lock"): row(401, 404, 200, 403, 200, 403, 200),
    ("post", "/api/sections"): row(401, 403, 403, 403, 201, 403, 403),
    # live runs: a1's live run; a finish with no readings yet is refused (400) for those let through
    ("post", "/api/live-runs"): row(401, 201, 201, 201, 201, 403, 201),
    ("get", "/api/live-runs/{live_id}"): row(401, 404, 200, 200, 200, 200, 200),
    ("post", "/api/live-runs/{live_id}/readings"): row(401, 404, 200, 200, 200, 403, 200),
    ("post", "/api/live-runs/{live_id}/finish"): row(401, 404, 400, 400, 400, 403, 400),
    ("put", "/api/live-runs/{live_id}/target"): row(401, 404, 200, 200, 200, 403, 200),
    ("put", "/api/sections/{section_id}/live-target"): row(401, 403, 403, 403, 200, 403, 403),
    ("post", "/api/sections/{section_id}/benches"): row(401, 403, 403, 403, 201, 403, 403),
    ("post", "/api/sections/{section_id}/imports"): row(401, 403, 403, 400, 400, 403, 403),
    ("post", "/api/series"): row(401, 403, 403, 403, 201, 403, 403),
    ("post", "/api/webhooks"): row(401, 403, 403, 403, 201, 403, 403),
    # review: the author or staff withdraw (a fresh run of a1's each); staff comment and mark
    ("post", "/api/runs/{run_id}/review"): row(401, 404, 200, 200, 200, 403, 200),
    ("get", "/api/runs/{run_id}/comments"): row(401, 404, 200, 200, 200, 200, 200),
    ("post", "/api/runs/{run_id}/comments"): row(401, 403, 403, 201, 201, 403, 403),
    ("post", "/api/groups/{group_id}/comments"): row(401, 403, 403, 201, 201, 403, 403),
    ("put", "/api/runs/{run_id}/mark"): row(401, 403, 403, 200, 200, 403, 403),
    ("get", "/api/sections/{section_id}/marking-scheme"): row(401, 404, 404, 200, 200, 404, 404),
    ("put", "/api/sections/{section_id}/marking-scheme"): row(401, 403, 403, 403, 200, 403, 403),
}


@pytest.fixture
def database_url(sqlite_template: Path, tmp_path: Path) -> Iterator[str]:
    """Use SQLite only here."""
    import shutil

    path = tmp_path / "cupcal.sqlite3"
    shutil.copyfile(sqlite_template, path)
    yield f"sqlite:///{path}"


def _created(r: Any) -> int:
    assert r.status_code == 201, r.get_data(as_text=True)
    return int(r.get_json()["id"])


@pytest.fixture
def world(client: Any, lab: Any, session: Any) -> dict[str, Any]:
    """Make a1's run (with a result), a course, section, series and webhook; return ids and headers."""
    coord = lab.auth("coord")
    run_id = _created(upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0))
    run2 = _created(upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0))
    result_id = client.get(f"/api/runs/{run_id}", headers=coord).get_json()["current_result"]["id"]
    course_id = _created(client.post("/api/courses", headers=coord, json={"name": "Course M"}))
    section_id = _created(client.post("/api/sections", headers=coord, json={"course_id": course_id, "name": "S1"}))
    series_id = _created(client.post("/api/series", headers=coord, json={"name": "M", "run_ids": [run_id, run2]}))
    r = client.post("/api/webhooks", headers=coord, json={"url": "https://hooks.example.org/cupcal"})
    assert r.status_code == 201, r.get_data(as_text=True)
    a1 = session.get(Person, lab.ids["a1"])
    headers = {who: lab.auth(who) for who in ("b1", "a1", "tech", "coord")}
    headers["anon"] = {}
    headers["read"] = {"Authorization": f"Bearer {issue_scoped_token(session, a1, 'm-read', 'read')[1]}"}
    headers["write"] = {"Authorization": f"Bearer {issue_scoped_token(session, a1, 'm-write', 'write')[1]}"}
    return {
        "run_id": run_id,
        "result_id": result_id,
        "course_id": course_id,
        "section_id": section_id,
        "run2": run2,
        "series_id": series_id,
        "webhook_id": r.get_json()["id"],
        "calorimeter_id": lab.calorimeter_id,
        "group_id": lab.groups["A"],
        "live_id": _created(
            client.post(
                "/api/live-runs", headers=lab.auth("a1"), json={"run_file": live_run_file(), "client_key": "matrix"}
            )
        ),
        "calibration_id": client.get(f"/api/calorimeters/{lab.spare_calorimeter_id}", headers=coord).get_json()[
            "current_calibration"
        ]["id"],
        "headers": headers,
    }


def _fresh_run(client: Any, lab: Any, w: dict[str, Any]) -> int:
    return _created(upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0))


def _fresh_webhook(client: Any, lab: Any, w: dict[str, Any]) -> int:
    r = client.post("/api/webhooks", headers=lab.auth("coord"), json={"url": "https://hooks.example.org/x"})
    return int(r.get_json()["id"])


#: path parameters that must be made anew for each caller (the request changes or removes them)
def _fresh_proposal(client: Any, lab: Any, w: dict[str, Any]) -> int:
    """A student's calibration run on the cup: a proposal to approve."""
    run = _created(upload(client, lab.auth("a1"), "cal-electrical-01", monte_carlo=0))
    items = client.get(f"/api/calorimeters/{lab.calorimeter_id}/calibrations", headers=lab.auth("a1")).get_json()
    return next(c["id"] for c in items["items"] if c["run_id"] == run)


def _fresh_calibration(client: Any, lab: Any, w: dict[str, Any]) -> int:
    r = client.post(
        f"/api/calorimeters/{lab.spare_calorimeter_id}/calibrations",
        headers=lab.auth("coord"),
        json={"heat_capacity": "21.0 ± 3.0 J/K", "measured_on": "2026-11-30"},
    )
    return _created(r)


FRESH: dict[tuple[str, str], tuple[str, Callable[..., int]]] = {
    ("post", "/api/runs/{run_id}/lock"): ("run_id", _fresh_run),
    ("post", "/api/calibrations/{calibration_id}/approve"): ("calibration_id", _fresh_proposal),
    ("post", "/api/calibrations/{calibration_id}/withdraw"): ("calibration_id", _fresh_calibration),
    ("delete", "/api/webhooks/{webhook_id}"): ("webhook_id", _fresh_webhook),
    ("post", "/api/runs/{run_id}/review"): ("run_id", _fresh_run),
}

#: request bodies (``who`` keeps names unique between callers); the rest send none
BODIES: dict[tuple[str, str], Callable[[str, dict[str, Any]], dict[str, Any]]] = {
    ("patch", "/api/runs/{run_id}"): lambda who, w: {"json": {"notes": f"seen by {who}"}, "headers": {"If-Match": "*"}},
    ("post", "/api/runs/{run_id}/analyses"): lambda who, w: {"json": {"monte_carlo": 0}},
    ("post", "/api/calorimeters"): lambda who, w: {"json": {"name": f"Cup {who}"}},
    ("patch", "/api/calorimeters/{calorimeter_id}"): lambda who, w: {
        "json": {"location": f"bench {who}"},
        "headers": {"If-Match": "*"},
    },
    ("post", "/api/calorimeters/{calorimeter_id}/calibrations"): lambda who, w: {
        "json": {"heat_capacity": "20.0 ± 2.0 J/K", "measured_on": "2026-11-30"}
    },
    ("post", "/api/calibrations/{calibration_id}/withdraw"): lambda who, w: {"json": {"reason": f"by {who}"}},
    ("post", "/api/groups"): lambda who, w: {"json": {"name": f"Group {who}"}},
    ("post", "/api/courses"): lambda who, w: {"json": {"name": f"Course {who}"}},
    ("post", "/api/sections"): lambda who, w: {"json": {"course_id": w["course_id"], "name": f"S {who}"}},
    ("post", "/api/live-runs"): lambda who, w: {"json": {"run_file": live_run_file(), "client_key": f"m-{who}"}},
    ("post", "/api/live-runs/{live_id}/readings"): lambda who, w: {"json": {"readings": []}},
    ("post", "/api/live-runs/{live_id}/finish"): lambda who, w: {"json": {}},
    ("put", "/api/live-runs/{live_id}/target"): lambda who, w: {"json": {"target_u": None}},
    ("put", "/api/sections/{section_id}/live-target"): lambda who, w: {"json": {"target_u": 0.5}},
    ("post", "/api/sections/{section_id}/benches"): lambda who, w: {"json": {"name": f"Bench {who}"}},
    ("post", "/api/series"): lambda who, w: {"json": {"name": f"Series {who}", "run_ids": [w["run_id"], w["run2"]]}},
    ("post", "/api/webhooks"): lambda who, w: {"json": {"url": f"https://hooks.example.org/{who}"}},
    ("post", "/api/runs"): lambda who, w: _run_upload(),
    ("post", "/api/packages"): lambda who, w: {"json": {}},
    ("post", "/api/rosters"): lambda who, w: {"json": {}},
    ("post", "/api/plan"): lambda who, w: {"json": {}},
    ("post", "/api/runs/{run_id}/review"): lambda who, w: {"json": {"action": "withdraw", "reason": f"by {who}"}},
    ("post", "/api/runs/{run_id}/comments"): lambda who, w: {"json": {"body": f"seen by {who}"}},
    ("post", "/api/groups/{group_id}/comments"): lambda who, w: {"json": {"body": f"seen by {who}"}},
    ("put", "/api/runs/{run_id}/mark"): lambda who, w: {"json": {"points": 5, "reason": f"by {who}"}},
    ("put", "/api/sections/{section_id}/marking-scheme"): lambda who, w: {
        "json": {"en": "1=6, *=0", "relative": "5%=2, *=0"}
    },
    ("post", "/api/sections/{section_id}/imports"): lambda who, w: {
        "data": {"archive": (io.BytesIO(b""), "empty.zip")},
        "content_type": "multipart/form-data",
    },
    ("post", "/api/eln-imports"): lambda who, w: {
        "data": {"archive": (io.BytesIO(b""), "empty.eln")},
        "content_type": "multipart/form-data",
    },
}


def _run_upload() -> dict[str, Any]:
    toml, csv = demo_files("diss-kcl-01")
    return {
        "data": {
            "run_file": (io.BytesIO(toml.encode()), "r.toml"),
            "readings": (io.BytesIO(csv), "r.csv"),
            "monte_carlo": "0",
        },
        "content_type": "multipart/form-data",
    }


PATH_VALUES = {"fmt": "json", "which": "readings"}


def _operations(client: Any) -> set[tuple[str, str]]:
    doc = client.get("/api/openapi.json").get_json()
    return {(method, path) for path, ops in doc["paths"].items() for method in ops}


def _call(client: Any, lab: Any, w: dict[str, Any], method: str, path: str, who: str) -> int:
    ids = {k: v for k, v in w.items() if k.endswith("_id")}  # the ids, by the names the routes give them
    values = ids | PATH_VALUES
    if (method, path) in FRESH:
        name, make = FRESH[(method, path)]
        values[name] = make(client, lab, w)
    url = path.format(**values)
    if method == "get" and path == "/api/exports":
        url += f"?run_ids={w['run_id']}&format=csv"
    kwargs = BODIES.get((method, path), lambda who, w: {})(who, w)
    headers = {**w["headers"][who], **kwargs.pop("headers", {})}
    r = client.open(url, method=method.upper(), headers=headers, **kwargs)
    return r.status_code


def test_every_documented_operation_has_a_row(client: Any) -> None:
    assert _operations(client) == set(EXPECTED), "add a row to EXPECTED for each new /api/ route"


@pytest.mark.parametrize("operation", sorted(EXPECTED), ids=lambda op: f"{op[0]} {op[1]}")
def test_who_gets_what(client: Any, lab: Any, world: dict[str, Any], operation: tuple[str, str]) -> None:
    method, path = operation
    got = {who: _call(client, lab, world, method, path, who) for who in ACTORS}
    assert got == EXPECTED[operation]


#: the coordinator-only writes: a caller kept out is refused before the body is read
COORDINATOR_WRITES = sorted(
    op
    for op, codes in EXPECTED.items()
    if op[0] != "get" and codes["coord"] in (200, 201, 204, 400) and all(codes[w] == 403 for w in ("b1", "a1", "tech"))
)


@pytest.mark.parametrize("operation", COORDINATOR_WRITES, ids=lambda op: f"{op[0]} {op[1]}")
def test_the_role_is_refused_whatever_the_body(
    client: Any, lab: Any, world: dict[str, Any], operation: tuple[str, str]
) -> None:
    method, path = operation
    values = {k: world[k] for k in ("course_id", "section_id", "webhook_id", "calorimeter_id")}
    got = {
        who: client.open(
            path.format(**values), method=method.upper(), headers=world["headers"][who], json={}
        ).status_code
        for who in ("b1", "a1", "tech")
    }
    assert got == {"b1": 403, "a1": 403, "tech": 403}
