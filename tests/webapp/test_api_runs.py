"""API for runs and results: create by upload, read, list with pagination, re-analyze; bad input → 4xx."""

from __future__ import annotations

import io
import math
from typing import Any

import pytest
import sqlalchemy as sa

from tests.webapp.conftest import demo_files, upload
from webapp.models import Result, Run, RunInput


def test_create_read_and_download_exactly_as_uploaded(client: Any, lab: Any) -> None:
    r = upload(client, lab.auth("a1"), "diss-kcl-01")
    assert r.status_code == 201, r.get_json()
    run = r.get_json()
    assert r.headers["Location"] == f"/api/runs/{run['id']}"
    assert run["kind"] == "dissolution" and run["group"]["name"] == "Group A"
    assert run["author"]["id"] == lab.ids["a1"] and run["operator"] == "Tomas Vesterby-Quail"
    assert run["calorimeter"]["id"] == lab.calorimeter_id  # matched by the file's [calorimeter] name
    assert run["points"] == 601 and len(run["results"]) == 1
    fields = {i["field"]: i for i in run["inputs"]}
    assert fields["solute.mass"]["value"] == 3.7276 and fields["solute.mass"]["standard_uncertainty"] == 0.0002
    assert fields["solute.mass"]["unit"] == "g"
    toml, csv = demo_files("diss-kcl-01")
    assert client.get(f"/api/runs/{run['id']}/files/run-file", headers=lab.auth("a1")).get_data(as_text=True) == toml
    assert client.get(f"/api/runs/{run['id']}/files/readings", headers=lab.auth("a1")).get_data() == csv
    series = client.get(f"/api/runs/{run['id']}/series", headers=lab.auth("a1")).get_json()
    assert len(series["time_s"]) == 601 and math.isclose(series["temperature_K"][0], 21.81 + 273.15)

    result_id = run["current_result"]["id"]
    res = client.get(f"/api/results/{result_id}", headers=lab.auth("a1")).get_json()
    assert res["main"] == "molar_enthalpy" and res["unit"] == "kJ/mol"
    assert set(res["outputs"]) == {"corrected_delta_t", "heat", "molar_enthalpy"}
    assert res["budget"] and res["budget"][0]["share"] >= res["budget"][-1]["share"]
    assert res["comparison"]["reference"]["source"]
    assert any(c["substance"].startswith("KCl") for c in res["cautions"])
    assert res["monte_carlo"]["trials"] == 2000 and res["monte_carlo"]["seed"] is not None
    assert res["software_version"] and res["record"]["kind"] == "dissolution"
    # the API's value is calc's JSON record for the same run
    assert math.isclose(res["value"], res["record"]["molar_enthalpy"]["value"], rel_tol=1e-15)
    assert res["expanded_uncertainty"] == res["record"]["expanded_uncertainty"]


def test_json_upload_and_listing_with_pagination(client: Any, lab: Any) -> None:
    toml, csv = demo_files("diss-nh4no3-01")
    for _ in range(3):
        r = client.post(
            "/api/runs",
            headers=lab.auth("tech"),
            json={
                "run_toml": toml,
                "readings_csv": csv.decode(),
                "run_file_name": "n.toml",
                "readings_name": "n.csv",
                "monte_carlo": 0,
            },
        )
        assert r.status_code == 201, r.get_json()
    first = client.get("/api/runs?per_page=2", headers=lab.auth("tech")).get_json()
    assert (first["total"], first["pages"], first["page"], len(first["items"])) == (3, 2, 1, 2)
    second = client.get("/api/runs?per_page=2&page=2", headers=lab.auth("tech")).get_json()
    ids = [i["id"] for i in first["items"] + second["items"]]
    assert ids == sorted(ids, reverse=True) and len(set(ids)) == 3
    assert first["items"][0]["current_result"]["main"] == "molar_enthalpy"
    assert client.get("/api/runs?kind=neutralization", headers=lab.auth("tech")).get_json()["total"] == 0


def test_reanalyze_keeps_the_old_result(client: Any, lab: Any) -> None:
    run = upload(client, lab.auth("a1"), "neut-hcl-naoh-01").get_json()
    r = client.post(
        f"/api/runs/{run['id']}/analyses",
        headers=lab.auth("a2"),
        json={"method": "equal-area", "after": [300, 600], "monte_carlo": 0},
    )
    assert r.status_code == 201, r.get_json()
    new = r.get_json()
    assert new["method"] == "equal-area" and new["periods"]["after"] == [300.0, 600.0] and new["periods"]["given"]
    results = client.get(f"/api/runs/{run['id']}/results", headers=lab.auth("a1")).get_json()["items"]
    assert [x["is_current"] for x in results] == [False, True]
    assert results[0]["id"] == run["current_result"]["id"]
    audit = client.get(f"/api/runs/{run['id']}/audit", headers=lab.auth("a1")).get_json()["items"]
    assert audit[-1]["field"] == "result" and audit[-1]["person"] == "a2@lab.example"


def test_patch_details_is_audited(client: Any, lab: Any) -> None:
    run = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()
    r = client.patch(
        f"/api/runs/{run['id']}",
        headers={**lab.auth("a1"), "If-Match": "*"},
        json={"bench": "Bench 9", "title": "KCl again"},
    )
    assert r.status_code == 200 and r.get_json()["bench"] == "Bench 9"
    audit = client.get(f"/api/runs/{run['id']}/audit", headers=lab.auth("a1")).get_json()["items"]
    assert {(a["field"], a["old"], a["new"]) for a in audit} == {
        ("bench", "Bench Heron-5", "Bench 9"),
        ("title", "Enthalpy of solution of KCl", "KCl again"),
    }
    assert all(a["person"] == "a1@lab.example" and a["at"].endswith("Z") for a in audit)


def _count(app: Any) -> tuple[int, int, int]:
    from webapp.db import new_session

    s = new_session(app)
    try:
        return tuple(s.scalar(sa.select(sa.func.count()).select_from(m)) for m in (Run, Result, RunInput))  # type: ignore[return-value]
    finally:
        s.close()


KCL_TOML, KCL_CSV = demo_files("diss-kcl-01")

BAD_UPLOADS = [
    ({"toml": KCL_TOML.replace('mass = "3.72760 ± 0.00020 g"', 'mass = "3.72760 ± 0.00020 mL"')}, {}, "solute.mass"),
    ({"toml": KCL_TOML.replace("[solute]", "[solvent]")}, {}, "solvent"),
    ({"toml": "kind = 'dissolution'\nreadings = \n"}, {}, "run_file"),
    ({"toml": "   "}, {}, "run_file"),
    ({"csv": b"time_s,temperature_C\n0.0,21.81\n2.0,abc\n"}, {}, "readings"),
    ({"csv": b""}, {}, "readings"),
    ({"csv": "\u00e9".encode("latin-1") * 10}, {}, "readings"),
    ({}, {"method": "guesswork"}, "method"),
    ({}, {"monte_carlo": "-3"}, "monte_carlo"),
    ({}, {"monte_carlo": "many"}, "monte_carlo"),
    ({}, {"fore_start": "100", "fore_end": "50"}, "fore"),
    ({}, {"fore_start": "100"}, "fore"),
    ({}, {"after_start": "nan", "after_end": "600"}, "after_start"),
    ({}, {"calorimeter_id": "999"}, "calorimeter_id"),
    ({}, {"calorimeter_id": "one"}, "calorimeter_id"),
    ({}, {"group_id": "999"}, "group_id"),
    ({}, {"seed": "-1"}, "seed"),
]


@pytest.mark.parametrize(("files", "fields", "field"), BAD_UPLOADS)
def test_bad_uploads_get_a_4xx_naming_the_field_and_save_nothing(
    app: Any, client: Any, lab: Any, files: dict[str, Any], fields: dict[str, str], field: str
) -> None:
    before = _count(app)
    r = upload(client, lab.auth("tech"), "diss-kcl-01", toml=files.get("toml"), csv=files.get("csv"), **fields)
    body = r.get_json()
    assert 400 <= r.status_code < 500, body
    assert body["error"] and body["field"] == field, body
    assert _count(app) == before


def test_missing_parts_and_bad_json(client: Any, lab: Any) -> None:
    h = lab.auth("tech")
    r = client.post(
        "/api/runs", headers=h, data={"readings": (io.BytesIO(KCL_CSV), "r.csv")}, content_type="multipart/form-data"
    )
    assert r.status_code == 400 and r.get_json()["field"] == "run_file"
    r = client.post(
        "/api/runs",
        headers=h,
        data={"run_file": (io.BytesIO(KCL_TOML.encode()), "r.toml")},
        content_type="multipart/form-data",
    )
    assert r.status_code == 400 and r.get_json()["field"] == "readings"
    r = client.post("/api/runs", headers=h, data="{not json", content_type="application/json")
    assert r.status_code == 400 and r.get_json()["field"] == "body"
    r = client.post("/api/runs", headers=h, json={"run_toml": 5, "readings_csv": "x"})
    assert r.status_code == 400 and r.get_json()["field"] == "run_toml"
    r = client.post("/api/runs", headers=h, data=b"\xff\xfe", content_type="multipart/form-data; boundary=x")
    assert 400 <= r.status_code < 500
    run = upload(client, h, "diss-kcl-01").get_json()
    for body in ({"method": 3}, {"fore": [1]}, {"fore": "0-100"}, {"after": [0, "x"]}, {"monte_carlo": True}):
        r = client.post(f"/api/runs/{run['id']}/analyses", headers=h, json=body)
        assert r.status_code == 400 and r.get_json()["error"], body
    r = client.post(f"/api/runs/{run['id']}/analyses", headers=h, data="[1, 2]", content_type="application/json")
    assert r.status_code == 400 and r.get_json()["field"] == "body"
    for body in ({"kind": "x"}, {"title": 5}, {"title": "x" * 301}, {"group_id": "A"}):
        r = client.patch(f"/api/runs/{run['id']}", headers={**h, "If-Match": "*"}, json=body)
        assert r.status_code == 400 and r.get_json()["field"] in body, body
    for query in ("page=0", "page=x", "per_page=100000", "calorimeter_id=x"):
        r = client.get(f"/api/runs?{query}", headers=h)
        assert r.status_code == 400 and r.get_json()["field"] in query, query
    assert client.get("/api/runs/999999", headers=h).status_code == 404
    assert client.get("/api/results/999999", headers=h).status_code == 404
    assert client.get(f"/api/runs/{run['id']}/files/other", headers=h).status_code == 400
    assert client.get("/api/nowhere", headers=h).get_json()["error"]
    assert client.delete(f"/api/runs/{run['id']}", headers=h).status_code == 405


def test_upload_size_limit(app: Any, client: Any, lab: Any) -> None:
    before = _count(app)
    big = KCL_CSV + b"".join(b"%d.0,21.80\n" % (2000 + 2 * i) for i in range(30_000))
    assert len(big) > app.config["MAX_CONTENT_LENGTH"]
    r = upload(client, lab.auth("tech"), "diss-kcl-01", csv=big)
    assert r.status_code == 413
    assert "larger than the limit" in r.get_json()["error"]
    assert _count(app) == before


def test_no_route_answers_junk_with_a_5xx(app: Any, client: Any, lab: Any) -> None:
    run_id = upload(client, lab.auth("a1"), "diss-kcl-01", monte_carlo=0).get_json()["id"]
    bodies = [
        None,
        "null",
        "[]",
        '"text"',
        "{",
        '{"name": null}',
        '{"name": 5}',
        '{"heat_capacity": "x"}',
        '{"heat_capacity": "-3 J/K"}',
        '{"heat_capacity": "3 g"}',
        '{"course_id": "x"}',
        '{"fore": [5, 1]}',
        '{"name": ""}',
        '{"seed": 1e40}',
        '{"group_id": true}',
    ]
    for rule in app.url_map.iter_rules():
        if not rule.rule.startswith("/api/"):
            continue
        path = (
            rule.rule.replace("<int:run_id>", str(run_id))
            .replace("<int:calorimeter_id>", str(lab.calorimeter_id))
            .replace("<int:result_id>", "1")
            .replace("<string:which>", "readings")
        )
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            for who in ("coord", "b1"):
                for data in bodies if method != "GET" else [None]:
                    r = client.open(
                        path, method=method, headers=lab.auth(who), data=data, content_type="application/json"
                    )
                    assert r.status_code < 500, (method, path, who, data, r.get_data(as_text=True))
                    if r.status_code >= 400:
                        assert r.get_json()["error"], (method, path, data)


def test_reanalyze_with_a_mixing_time(client: Any, lab: Any) -> None:
    run = upload(client, lab.auth("a1"), "diss-kcl-01").get_json()
    r = client.post(
        f"/api/runs/{run['id']}/analyses", headers=lab.auth("a1"), json={"mixing_time": [241.0, 2.0], "monte_carlo": 0}
    )
    assert r.status_code == 201, r.get_json()
    mix = r.get_json()["periods"]["mixing_time"]
    assert mix["value"] == 241.0 and mix["standard_uncertainty"] == 2.0 and not mix["detected"]
    r = client.post(f"/api/runs/{run['id']}/analyses", headers=lab.auth("a1"), json={"mixing_time": "soon"})
    assert r.status_code == 400 and r.get_json()["field"] == "mixing_time"
    r = client.post(f"/api/runs/{run['id']}/analyses", headers=lab.auth("a1"), json={"mixing_time": 99999})
    assert r.status_code == 400 and "outside the log" in r.get_json()["error"]
