"""Exports of runs (JSON, CSV, printable report, RO-Crate 1.1 zip, selections) and their round trips.

The RO-Crate metadata is read back with the ``rocrate`` library (PyPI, the RO-Crate
reference implementation in Python), which checks it against the RO-Crate 1.1 structure:
the metadata descriptor, the root data entity and the data entities.
"""

from __future__ import annotations

import csv
import io
import json
import zipfile
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from rocrate.rocrate import ROCrate

from calc import __version__
from tests.webapp.conftest import demo_files, upload, without_heat_capacity
from webapp.models import Result, Run

NUMBERS = ("value", "standard_uncertainty", "expanded_uncertainty", "coverage_factor")


def _record(client: Any, lab: Any, who: str = "a1", name: str = "diss-kcl-01", **kw: Any) -> int:
    r = upload(client, lab.auth(who), name, **kw)
    assert r.status_code == 201, r.get_json()
    return int(r.get_json()["id"])


def _export(client: Any, lab: Any, run_id: int, fmt: str, who: str = "a1") -> Any:
    r = client.get(f"/api/runs/{run_id}/export/{fmt}", headers=lab.auth(who))
    assert r.status_code == 200, r.get_data(as_text=True)[:300]
    return r


def _same_run(session: Any, a_id: int, b_id: int) -> None:
    """The imported run has the same files byte for byte and the same numbers (re-analyzed)."""
    session.expire_all()
    a, b = session.get(Run, a_id), session.get(Run, b_id)
    assert a_id != b_id
    assert b.run_toml == a.run_toml and bytes(b.readings_raw) == bytes(a.readings_raw)
    assert b.run_file_name == a.run_file_name and b.readings_name == a.readings_name
    ra, rb = a.current_result, b.current_result
    assert rb.method == ra.method and rb.main == ra.main
    numbers = [c.name for c in Result.__table__.columns if isinstance(c.type, sa.Float)]  # every number it stores
    assert {"molar_enthalpy_kj_mol", "expanded_uncertainty", "fore_end_s"} <= set(numbers)
    for col in numbers:
        assert getattr(rb, col) == getattr(ra, col), col  # the analysis is deterministic: exactly equal
    assert rb.budget == ra.budget and rb.warnings == ra.warnings and rb.monte_carlo == ra.monte_carlo
    assert b.calibration_id == a.calibration_id


def test_json_export_carries_files_result_and_provenance(client: Any, lab: Any) -> None:
    run_id = _record(client, lab)
    doc = json.loads(_export(client, lab, run_id, "json").data)
    toml, readings = demo_files("diss-kcl-01")
    assert doc["format"] == "cupcal-run-export" and doc["software"]["version"] == __version__
    assert doc["files"]["run_file"]["text"] == toml
    assert doc["files"]["readings"]["text"].encode("utf-8") == readings  # the CSV exactly as stored
    res = doc["result"]
    assert set(res["outputs"]) == {"corrected_delta_t", "heat", "molar_enthalpy"}
    assert res["outputs"]["molar_enthalpy"]["unit"] == "kJ/mol" and res["outputs"]["heat"]["unit"] == "J"
    assert all(isinstance(q["standard_uncertainty"], float) for q in res["outputs"].values())
    assert res["budget"] and "En" in res["comparison"] and isinstance(res["warnings"], list)
    prov = doc["provenance"]
    assert prov["recorded_by"]["email"] == "a1@lab.example" and prov["calibration"] is None
    assert doc["run"]["calorimeter"].startswith("Cup TH-07")
    # access as for viewing: another group's student gets 404
    assert client.get(f"/api/runs/{run_id}/export/json", headers=lab.auth("b1")).status_code == 404
    assert client.get(f"/api/runs/{run_id}/export/docx", headers=lab.auth("a1")).status_code == 400


def test_json_round_trip_reproduces_the_run(client: Any, lab: Any, session: Any) -> None:
    run_id = _record(client, lab, method="regnault-pfaundler", fore_start=0, fore_end=160)
    body = _export(client, lab, run_id, "json").data
    r = client.post("/api/packages", data=body, content_type="application/json", headers=lab.auth("a1"))
    assert r.status_code == 201, r.get_json()
    _same_run(session, run_id, r.get_json()["id"])


def test_round_trip_of_a_run_using_a_calibration(client: Any, lab: Any, session: Any) -> None:
    toml, _ = demo_files("diss-kcl-01")
    run_id = _record(client, lab, toml=without_heat_capacity(toml), calorimeter_id=lab.spare_calorimeter_id)
    doc = json.loads(_export(client, lab, run_id, "json").data)
    assert doc["provenance"]["calibration"]["heat_capacity"] == {
        "value": 21.0,
        "standard_uncertainty": 3.0,
        "unit": "J/K",
    }
    r = client.post("/api/packages", json=doc, headers=lab.auth("a1"))
    assert r.status_code == 201, r.get_json()
    _same_run(session, run_id, r.get_json()["id"])
    # once another heat capacity is in force, the numbers could not be reproduced: refused
    r = client.post(
        f"/api/calorimeters/{lab.spare_calorimeter_id}/calibrations",
        json={"heat_capacity": "25.0 ± 2.0 J/K", "measured_on": "2026-11-30", "restart": True},
        headers=lab.auth("coord"),
    )
    assert r.status_code == 201, r.get_json()
    r = client.post("/api/packages", json=doc, headers=lab.auth("a1"))
    assert r.status_code == 400 and r.get_json()["field"] == "provenance.calibration"


def test_damaged_or_foreign_packages_are_refused(client: Any, lab: Any) -> None:
    run_id = _record(client, lab)
    doc = json.loads(_export(client, lab, run_id, "json").data)
    doc["files"]["readings"]["text"] += "9999,99.9\n"
    r = client.post("/api/packages", json=doc, headers=lab.auth("a1"))
    assert r.status_code == 400 and r.get_json()["field"] == "files.readings"
    r = client.post("/api/packages", json={"format": "something else"}, headers=lab.auth("a1"))
    assert r.status_code == 400 and r.get_json()["field"] == "format"
    r = client.post(
        "/api/packages", data=b"PK\x03\x04 not a zip", content_type="application/zip", headers=lab.auth("a1")
    )
    assert r.status_code == 400 and r.get_json()["field"] == "package"


def test_ro_crate_is_valid_and_round_trips(client: Any, lab: Any, session: Any, tmp_path: Path) -> None:
    run_id = _record(client, lab)
    data = _export(client, lab, run_id, "ro-crate").data
    folder = tmp_path / "crate"
    zipfile.ZipFile(io.BytesIO(data)).extractall(folder)
    crate = ROCrate(folder)  # the rocrate library parses and checks the RO-Crate 1.1 metadata
    meta = json.loads((folder / "ro-crate-metadata.json").read_text(encoding="utf-8"))
    assert meta["@context"] == "https://w3id.org/ro/crate/1.1/context"
    assert crate.root_dataset["name"] == session.get(Run, run_id).title
    parts = {e.id for e in crate.root_dataset["hasPart"]}
    assert parts == {"diss-kcl-01.toml", "diss-kcl-01.csv", "cupcal-export.json"}
    for name in parts:
        entity = crate.get(name)
        assert entity is not None and entity.type == "File", name
        assert (folder / name).is_file()
    assert crate.get("diss-kcl-01.csv")["encodingFormat"] == "text/csv"
    action = crate.get("#analysis")
    assert action.type == "CreateAction" and action["instrument"].id == "#cupcal"
    assert {o.id for o in action["object"]} == {"diss-kcl-01.toml", "diss-kcl-01.csv"}
    assert crate.get("#cupcal")["version"] == __version__
    _toml, readings = demo_files("diss-kcl-01")
    assert (folder / "diss-kcl-01.csv").read_bytes() == readings
    r = client.post(
        "/api/packages",
        data={"package": (io.BytesIO(data), "run.crate.zip")},
        content_type="multipart/form-data",
        headers=lab.auth("a1"),
    )
    assert r.status_code == 201, r.get_json()
    _same_run(session, run_id, r.get_json()["id"])


def test_csv_report_and_selection(client: Any, lab: Any, session: Any) -> None:
    first = _record(client, lab)
    second = _record(client, lab, name="neut-hcl-naoh-01")
    run = session.get(Run, first)
    run.title = '=HYPERLINK("http://example.invalid")'
    session.commit()
    rows = list(csv.DictReader(io.StringIO(_export(client, lab, first, "csv").get_data(as_text=True))))
    assert len(rows) == 1 and rows[0]["title"] == "'" + run.title  # OWASP "CSV injection": apostrophe
    assert rows[0]["unit"] == "kJ/mol" and float(rows[0]["standard_uncertainty"]) > 0
    html = _export(client, lab, first, "html").get_data(as_text=True)
    assert "@media print" in html and "eye protection" in html and "data:image/svg+xml;base64," in html
    assert "Uncertainty budget" in html and run.run_file_name in html
    r = client.get(f"/api/exports?run_ids={first},{second}", headers=lab.auth("a1"))
    assert r.status_code == 200 and r.mimetype == "application/zip"
    z = zipfile.ZipFile(io.BytesIO(r.data))
    assert set(z.namelist()) == {
        "results.csv",
        f"run-{first}.json",
        f"run-{second}.json",
        f"run-{first}.crate.zip",
        f"run-{second}.crate.zip",
    }
    assert len(list(csv.DictReader(io.StringIO(z.read("results.csv").decode())))) == 2
    assert json.loads(z.read(f"run-{second}.json"))["run"]["kind"] == "neutralization"
    r = client.get(f"/api/exports?run_ids={first},{second}&format=csv", headers=lab.auth("a1"))
    assert r.status_code == 200 and r.get_data(as_text=True).count("\r\n") == 3
    assert client.get(f"/api/exports?run_ids={first}", headers=lab.auth("b1")).status_code == 404
    assert client.get("/api/exports?run_ids=x", headers=lab.auth("a1")).status_code == 400


@pytest.mark.parametrize("fmt", ["json", "ro-crate"])
def test_packages_need_a_write_token(client: Any, lab: Any, session: Any, fmt: str) -> None:
    from webapp.models import Person
    from webapp.services.tokens import issue_scoped_token

    run_id = _record(client, lab)
    data = _export(client, lab, run_id, fmt).data
    _t, secret = issue_scoped_token(session, session.get(Person, lab.ids["a1"]), "ro", "read")
    r = client.post(
        "/api/packages",
        data=data,
        headers={"Authorization": f"Bearer {secret}"},
        content_type="application/json" if fmt == "json" else "application/zip",
    )
    assert r.status_code == 403
