"""The .eln archive: export, the rocrate library's reader, exact round trip, other notebooks, hostile archives.

The format (one root folder named like the archive, ro-crate-metadata.json with RO-Crate 1.1, a
Dataset per experiment, File entities with contentSize and sha256) is the published .eln profile
of RO-Crate 1.1 (from memory of the open specification). The archives are read back with the
``rocrate`` library from the package registry, which we did not write.
"""

from __future__ import annotations

import hashlib
import io
import json
import zipfile
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
from rocrate.rocrate import ROCrate

from tests.webapp.conftest import DEMO
from tests.webapp.eln_helpers import (
    FAST_HASH,
    HOSTILE,
    counts,
    crate,
    demo_source,
    dispose,
    file_entity,
    snapshot,
    zip_of,
)
from webapp.db import new_session
from webapp.models import Calibration, Calorimeter, Person, Run
from webapp.services import eln
from webapp.services.eln_check import read_archive
from webapp.services.eln_import import import_eln
from webapp.services.errors import Invalid
from webapp.services.integrity import check_database
from webapp.services.people import create_person


@pytest.fixture(scope="module")
def source(tmp_path_factory: pytest.TempPathFactory) -> Any:
    """The demo lab (one run edited, re-analyzed and another signed) and its whole-notebook archive."""
    app, data = demo_source(tmp_path_factory.mktemp("eln-source"))
    s = new_session(app)
    try:
        snap = snapshot(s)
    finally:
        s.close()
    yield {"app": app, "archive": data, "snapshot": snap}
    dispose(app)


def _coordinator(session: Any) -> Person:
    return create_person(
        session,
        email="new.coordinator@elsewhere.example",
        name="New Coordinator",
        role="coordinator",
        password="a long pass phrase",
        password_method=FAST_HASH,
    )


# ----------------------------------------------------------------- written archives


def test_written_archive_passes_the_rocrate_reader_and_our_checks(source: Any, tmp_path: Path) -> None:
    data = source["archive"]
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        names = z.namelist()
        z.extractall(tmp_path)
    assert {n.split("/", 1)[0] for n in names} == {"cupcal-notebook"}
    checked = read_archive(data, "cupcal-notebook.eln")  # our checks: root folder, hasPart, sha256
    crate_ = ROCrate(tmp_path / "cupcal-notebook")
    assert crate_.metadata.as_jsonld()["conformsTo"]["@id"] == "https://w3id.org/ro/crate/1.1"
    assert crate_.root_dataset["name"] == "cupcal-notebook"
    ids = {e.id.rstrip("/").split("/")[-1] + ("/" if e.id.endswith("/") else "") for e in crate_.data_entities}
    experiments = [e for e in checked.entities.values() if e["@id"].startswith("run-") and e["@id"].endswith("/")]
    assert len(experiments) == len(source["snapshot"]["runs"]) == 14  # the demo lab's runs
    for e in experiments:
        assert e["@type"] == "Dataset" and e["name"] and e["dateCreated"] and e["dateModified"]
        author = checked.entities[e["author"]["@id"]]
        assert author["@type"] == "Person" and "@" in author["email"]
        assert "expanded uncertainty" in e["description"] and "k = " in e["description"]
        assert "eye protection" in e["description"] and "safety data sheet" in e["description"]
        names_in = {p["@id"].split("/")[-1] for p in e["hasPart"]}
        assert {"result.json", "report.html", "plot-temperature.svg", "cupcal-export.json"} <= names_in
        assert e["@id"] in ids
    for pid, e in checked.entities.items():
        if e.get("@type") == "File":
            body = checked.files[pid]
            assert e["sha256"] == hashlib.sha256(body).hexdigest() and int(e["contentSize"]) == len(body)
            assert e["encodingFormat"] and e["contentType"] == e["encodingFormat"]
    root_parts = {p["@id"] for p in checked.root_dataset["hasPart"]}
    folders = {p.split("/")[0] + "/" for p in checked.files if "/" in p}
    assert root_parts == folders | (set(checked.files) - {"ro-crate-metadata.json"})  # every folder and file


def test_run_files_are_stored_exactly_as_uploaded(source: Any) -> None:
    archive = read_archive(source["archive"], "cupcal-notebook.eln")
    kcl = next(p for p in archive.files if p.endswith("diss-kcl-01.csv"))
    assert archive.files[kcl] == (DEMO / "diss-kcl-01.csv").read_bytes()
    assert archive.files[kcl.replace(".csv", ".toml")] == (DEMO / "diss-kcl-01.toml").read_bytes()


# ----------------------------------------------------------------- round trip


def test_round_trip_of_the_demo_lab_into_an_empty_notebook_is_exact(source: Any, session: Any) -> None:
    me = _coordinator(session)
    report = import_eln(session, me, source["archive"], source="cupcal-notebook.eln", password_method=FAST_HASH)
    assert report.count("error") == 0, [i for i in report.items if i.outcome == "error"]
    assert report.count("stored") >= 6
    session.expire_all()
    mine = snapshot(session)
    assert mine == source["snapshot"]
    # the snapshot holds what defines the calibrations and runs, so a difference there would show
    cals = [c for cal in mine["calorimeters"] for c in cal[5]]
    assert {c[7] for c in cals} == {"approved", "withdrawn"} and any(c[12] for c in cals)  # a reason
    assert sum(1 for c in cals if c[15]) == 2 and sum(1 for c in cals if c[5]) == 2  # pools; runs' own
    assert {cal[4] for cal in mine["calorimeters"]} == {"foam-cups"}
    assert all(cal[6] is not None and cal[7] for cal in mine["calorimeters"])  # each has a value in force
    assert sum(len(cal[8]) for cal in mine["calorimeters"]) >= 8  # calibrations' and cups' audit entries
    assert any(r["review"] and r["review"][2] for r in mine["runs"])  # the excluded class run
    assert [r["lock"] for r in mine["runs"]].count((True, True, True)) == 1
    integrity = check_database(session.get_bind())  # `cupcal db check`: the signed run verifies here too
    assert integrity.ok and "1 signed with a content hash" in integrity.summary(), integrity.summary()
    withdrawn = session.scalar(
        sa.select(Calibration).where(Calibration.status == "withdrawn", Calibration.pool.is_(None))
    )
    withdrawn.withdrawn_reason += "."
    assert snapshot(session) != source["snapshot"]
    session.rollback()
    n = len(source["snapshot"]["runs"])
    # every file of the archive is reported once
    assert len({i.file for i in report.items if i.outcome != "stored" or i.run_id}) >= n * 6
    # importing again stores nothing new
    before = counts(session)
    again = import_eln(session, me, source["archive"], source="cupcal-notebook.eln", password_method=FAST_HASH)
    assert again.count("unchanged") == n and counts(session) == before
    # people who were not here cannot sign in
    newcomers = session.scalars(sa.select(Person).where(Person.id != me.id)).all()
    assert newcomers and not any(p.active for p in newcomers)


def test_a_technician_cannot_add_calorimeters_and_the_runs_that_need_them_wait(source: Any, session: Any) -> None:
    tech = create_person(
        session,
        email="tech@elsewhere.example",
        name="Tech",
        role="technician",
        password="a long pass phrase",
        password_method=FAST_HASH,
    )
    report = import_eln(session, tech, source["archive"], source="x.eln", password_method=FAST_HASH)
    errors = [i.message for i in report.items if i.outcome == "error"]
    assert any("only a coordinator" in m for m in errors)
    assert any("does not have" in m for m in errors)
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == 0
    # a coordinator brings the calorimeters; the technician then imports the runs, except the signed one
    coord = create_person(
        session,
        email="coord@elsewhere.example",
        name="Coord",
        role="coordinator",
        password="a long pass phrase",
        password_method=FAST_HASH,
    )
    src = new_session(source["app"])
    try:
        cals = eln.build(src, [], src.scalars(sa.select(Calorimeter)).all(), "cals", "the calorimeters")
    finally:
        src.close()
    assert import_eln(session, coord, cals, source="cals.eln", password_method=FAST_HASH).count("error") == 0
    report = import_eln(session, tech, source["archive"], source="x.eln", password_method=FAST_HASH)
    errors = [i.message for i in report.items if i.outcome == "error"]
    assert len(errors) == 1 and "only a coordinator may import signed runs" in errors[0]
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == len(source["snapshot"]["runs"]) - 1
    assert not any(r.locked for r in session.scalars(sa.select(Run)))


# ----------------------------------------------------------------- other notebooks


def _foreign() -> bytes:
    toml = (DEMO / "diss-kcl-01.toml").read_bytes()
    csv = (DEMO / "diss-kcl-01.csv").read_bytes()
    notes = b"%PDF-1.4 not really a pdf\n"
    orphan = toml.replace(b'readings = "diss-kcl-01.csv"', b'readings = "missing.csv"')
    files = {
        "exp-1/run.toml": toml,
        "exp-1/diss-kcl-01.csv": csv,
        "exp-1/photo.pdf": notes,
        "exp-2/other.toml": orphan,
        "exp-3/notes.txt": b"just notes",
    }
    graph = [file_entity(p, d) for p, d in files.items()]
    graph += [
        {
            "@id": f"exp-{i}/",
            "@type": "Dataset",
            "name": f"Experiment {i}",
            "hasPart": [{"@id": p} for p in files if p.startswith(f"exp-{i}/")],
        }
        for i in (1, 2, 3)
    ]
    meta = crate(graph, ["exp-1/", "exp-2/", "exp-3/"])
    return zip_of(
        [("their-export/ro-crate-metadata.json", meta)] + [(f"their-export/{p}", d) for p, d in files.items()]
    )


def test_other_notebooks_run_folders_become_runs_and_every_other_file_is_reported(session: Any) -> None:
    me = _coordinator(session)
    report = import_eln(session, me, _foreign(), source="their-export.eln", password_method=FAST_HASH)
    by_file = {i.file.split("/", 1)[1]: i for i in report.items}
    assert by_file["exp-1/run.toml"].outcome == "stored"
    assert by_file["exp-1/diss-kcl-01.csv"].outcome == "used"
    assert by_file["exp-1/photo.pdf"].outcome == "ignored"
    assert by_file["exp-3/notes.txt"].outcome == "ignored"
    assert by_file["exp-2/other.toml"].outcome == "error" and "missing.csv" in by_file["exp-2/other.toml"].message
    run = session.get(Run, by_file["exp-1/run.toml"].run_id)
    assert bytes(run.readings_raw) == (DEMO / "diss-kcl-01.csv").read_bytes()
    # a dissolution of KCl: ΔsolH° = 17.22 kJ/mol at infinite dilution (NBS 1982 tables); the demo's
    # invented run lands within a few kJ/mol of it
    assert run.current_result.molar_enthalpy_kj_mol == pytest.approx(17.2, abs=3.0)


# ----------------------------------------------------------------- hostile archives


@pytest.mark.parametrize("case", sorted(HOSTILE))
def test_hostile_archives_are_refused_with_their_own_message_and_nothing_stored(case: str, session: Any) -> None:
    me = _coordinator(session)
    make, expected = HOSTILE[case]
    before = counts(session)
    with pytest.raises(Invalid) as err:
        import_eln(session, me, make(), source="a.eln", password_method=FAST_HASH)
    assert expected in err.value.message and "nothing was imported" in err.value.message
    assert counts(session) == before


def test_each_hostile_archive_has_a_message_of_its_own() -> None:
    messages = set()
    for make, _expected in HOSTILE.values():
        with pytest.raises(Invalid) as err:
            read_archive(make(), "a.eln")
        messages.add(err.value.message)
    assert len(HOSTILE) >= 10 and len(messages) == len(HOSTILE)


def test_uploaded_files_named_like_the_archives_own_files_come_back(app: Any, session: Any, tmp_path: Path) -> None:
    from tests.webapp.conftest import demo_files
    from webapp import create_app
    from webapp.db import get_engine
    from webapp.migrate import upgrade
    from webapp.services.analysis import AnalysisOptions
    from webapp.services.runs import RunUpload, record_run

    me = _coordinator(session)
    toml, csv = demo_files("diss-kcl-01")
    run = record_run(
        session,
        me,
        RunUpload(
            run_toml=toml,
            run_file_name="cupcal-export.json",
            readings=csv,
            readings_name="result.json",
            options=AnalysisOptions(),
        ),
    )
    with app.app_context():
        _name, data = eln.export_runs(session, me, [run.id])
    files = read_archive(data, "x.eln").files
    assert files[f"run-{run.id}/uploaded-cupcal-export.json"] == toml.encode()
    assert files[f"run-{run.id}/readings-result.json"] == csv
    url = f"sqlite:///{tmp_path / 'other.sqlite3'}"
    upgrade(url)
    other = create_app({"DATABASE_URL": url, "SECRET_KEY": "o", "PASSWORD_METHOD": FAST_HASH})
    s2 = new_session(other)
    try:
        report = import_eln(s2, _coordinator(s2), data, source="x.eln", password_method=FAST_HASH)
        assert report.count("error") == 0 and report.count("stored") >= 1
        back = s2.scalars(sa.select(Run)).one()
        assert (back.run_file_name, back.readings_name) == ("cupcal-export.json", "result.json")
        assert bytes(back.readings_raw) == csv
    finally:
        s2.close()
        get_engine(other).dispose()


def _retouched(data: bytes, change: Any, name: str = "cupcal-export.json") -> bytes:
    """Return the archive with one run's cupcal-export.json (or the last ``name``) changed, sha256 and size fitted."""
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        entries = {n: z.read(n) for n in z.namelist()}
    root = next(iter(entries)).split("/")[0]
    target = sorted(n for n in entries if n.endswith(f"/{name}"))[-1]
    doc = json.loads(entries[target])
    change(doc)
    entries[target] = json.dumps(doc).encode()
    meta = json.loads(entries[f"{root}/ro-crate-metadata.json"])
    for e in meta["@graph"]:
        if f"{root}/{e['@id']}" == target:
            e["sha256"] = hashlib.sha256(entries[target]).hexdigest()
            e["contentSize"] = str(len(entries[target]))
    entries[f"{root}/ro-crate-metadata.json"] = json.dumps(meta).encode()
    return zip_of(list(entries.items()))


def test_a_result_changed_in_the_archive_is_not_stored(source: Any, session: Any) -> None:
    def nudge(doc: dict[str, Any]) -> None:
        doc["result"]["outputs"][doc["result"]["main"]]["value"] *= 1.0000001

    me = _coordinator(session)
    report = import_eln(session, me, _retouched(source["archive"], nudge), source="x.eln", password_method=FAST_HASH)
    errors = [i for i in report.items if i.outcome == "error"]
    assert len(errors) == 1 and "does not reproduce the archive's result" in errors[0].message
    assert session.scalar(sa.select(sa.func.count()).select_from(Run)) == len(source["snapshot"]["runs"]) - 1


@pytest.mark.parametrize(
    ("change", "expected"),
    [
        (lambda c: c["calibrations"][0].update(status="trusted"), "calibrations[0].status: expected one of"),
        (lambda c: c["calibrations"][-1]["pool"].update(members=[99999]), "pool.members: expected ids of calibrations"),
        (lambda c: c.update(vessel_type="teapot"), "vessel_type: expected one of"),
    ],
)
def test_a_calorimeter_file_with_a_wrong_field_is_refused_by_name(
    source: Any, session: Any, change: Any, expected: str
) -> None:
    src = new_session(source["app"])
    try:
        cup = src.scalar(
            sa.select(Calorimeter)
            .where(Calorimeter.calibrations.any(Calibration.pool.is_not(None)))
            .order_by(Calorimeter.name)
        )
        data = eln.build(src, [], [cup], "cals", "a calorimeter")
    finally:
        src.close()
    before = counts(session)
    report = import_eln(
        session,
        _coordinator(session),
        _retouched(data, change, "calorimeter.json"),
        source="cals.eln",
        password_method=FAST_HASH,
    )
    errors = [i.message for i in report.items if i.outcome == "error"]
    assert len(errors) == 1 and expected in errors[0] and "calorimeter.json" in errors[0], errors
    assert counts(session)[2:4] == before[2:4]  # no calorimeter, no calibration


def test_an_archive_with_the_older_spelling_of_the_audit_keys_restores_the_same(source: Any, session: Any) -> None:
    """Archives written before the names were spelled one way carry ``analysed_at``/``analysed_by``."""

    def old_spelling(doc: dict[str, Any]) -> None:
        for rdoc in [doc.get("result"), *doc.get("results", [])]:
            if rdoc:
                for key in ("analyzed_at", "analyzed_by"):
                    rdoc[key.replace("analyzed", "analysed")] = rdoc.pop(key)

    me = _coordinator(session)
    report = import_eln(
        session, me, _retouched(source["archive"], old_spelling), source="old.eln", password_method=FAST_HASH
    )
    assert report.count("error") == 0, [i for i in report.items if i.outcome == "error"]
    session.expire_all()
    assert snapshot(session) == source["snapshot"]  # who analyzed and when came back from the old keys
