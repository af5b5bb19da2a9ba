"""Helpers of the .eln tests: the demo lab as a source notebook, snapshots to compare, archive builders."""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import warnings
import zipfile
from pathlib import Path
from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import DEMO
from webapp import create_app
from webapp.db import get_engine, new_session
from webapp.exports.document import run_document
from webapp.migrate import upgrade
from webapp.models import AuditEntry, Calibration, Calorimeter, Person, Run
from webapp.services import eln
from webapp.services.analysis import AnalysisOptions
from webapp.services.calibrations import enter_heat_capacity, withdraw_calibration
from webapp.services.concurrency import content_hash
from webapp.services.demo import PEOPLE, SPARE_CUP, load_demo
from webapp.services.in_force import current_calibration, pool_candidates
from webapp.services.runs import lock_run, reanalyze_run, update_run

FAST_HASH = "scrypt:1024:8:1"
FIXED = dt.datetime(2026, 1, 1)
CONTEXT = "https://w3id.org/ro/crate/1.1/context"


def demo_source(folder: Path, monte_carlo_trials: int = 2000) -> tuple[Any, bytes]:
    """Load the demo lab into a new SQLite notebook, edit, re-analyze and sign a run; return (app, archive)."""
    url = f"sqlite:///{folder / 'source.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "source", "PASSWORD_METHOD": FAST_HASH})
    s = new_session(app)
    try:
        load_demo(s, password_method=FAST_HASH, monte_carlo_trials=monte_carlo_trials)
        coord = s.scalar(sa.select(Person).where(Person.email == PEOPLE[0][1]))
        runs = s.scalars(sa.select(Run).order_by(Run.id)).all()
        target = next(r for r in runs if r.kind == "dissolution")
        update_run(s, coord, target, {"notes": "Lid refitted after 200 s (invented).", "bench": "B-2"})
        reanalyze_run(s, coord, target, AnalysisOptions(method="linear-extrapolation", monte_carlo_trials=500, seed=7))
        lock_run(s, coord, runs[-1])
        _withdrawn_calibration(s, coord)
        with app.app_context():
            _name, data = eln.export_notebook(s, coord, eln.report_renderer())
    finally:
        s.close()
    return app, data


def _withdrawn_calibration(session: Any, coord: Person) -> None:
    """Type a second heat capacity for the spare cup (pooled with its first), then withdraw it with a reason."""
    spare = session.scalar(sa.select(Calorimeter).where(Calorimeter.name == SPARE_CUP[0]))
    typed = enter_heat_capacity(
        session, coord, spare, "20.4 ± 2.5 J/K", "2026-01-05", "typed from the bench log (invented)", confirm=True
    )
    withdraw_calibration(session, coord, typed.id, "the bench log belonged to another cup (invented)")


def _strip_ids(doc: dict[str, Any]) -> dict[str, Any]:
    doc["run"].pop("id")
    for r in [doc["result"], *doc["earlier_results"]]:
        if r is not None:
            r.pop("id")
    cal = doc["provenance"]["calibration"]
    if cal is not None:
        cal.pop("id")
        cal.pop("from_run")
        cal.pop("note")  # names the run by its id in each notebook
    return doc


def snapshot(session: Any) -> dict[str, Any]:
    """Return every run (export without ids, audit trail) and calorimeter (with calibrations) of a notebook."""
    runs = []
    for run in session.scalars(sa.select(Run).order_by(Run.created_at, Run.id)):
        doc = _strip_ids(run_document(run, exported_at=FIXED))
        doc["files_bytes"] = [
            hashlib.sha256(run.run_toml.encode()).hexdigest(),
            hashlib.sha256(bytes(run.readings_raw)).hexdigest(),
        ]
        doc["audit"] = [
            (e.at.isoformat(), e.person.email if e.person else None, e.field, e.old, e.new)
            for e in session.scalars(
                sa.select(AuditEntry)
                .where(AuditEntry.entity == "run", AuditEntry.entity_id == run.id, AuditEntry.field != "imported")
                .order_by(AuditEntry.id)
            )
        ]
        doc["review"] = _review(run)
        doc["lock"] = _lock(run)
        runs.append(doc)
    cals = []
    for cal in session.scalars(sa.select(Calorimeter).order_by(Calorimeter.name)):
        history = session.scalars(
            sa.select(Calibration)
            .where(Calibration.calorimeter_id == cal.id)
            .order_by(Calibration.taken_at, Calibration.created_at)
        ).all()
        in_force = current_calibration(session, cal.id)
        cals.append(
            (
                cal.name,
                cal.parts,
                cal.location,
                cal.calibration_interval_days,
                cal.vessel_type,
                [_calibration(c, history) for c in history],
                # what the notebook's rules find: the value in force and the measurements it may pool
                in_force and _calibration(in_force, history),
                [_calibration(c, history) for c in pool_candidates(session, cal.id)],
                _cup_trail(session, cal, history),
            )
        )
    return {"runs": runs, "calorimeters": cals}


def _email(p: Any) -> str | None:
    return p.email if p is not None else None


def _at(t: dt.datetime | None) -> str | None:
    return t.isoformat() if t is not None else None


def _calibration(c: Calibration, history: list[Calibration]) -> tuple[Any, ...]:
    """Return what defines a calibration; a pool's members and left-out ones by their place in the history."""
    place = {h.id: i for i, h in enumerate(history)}
    pool = None
    if c.pool is not None:
        pool = {k: ([place[i] for i in v] if k in ("members", "excluded") else v) for k, v in c.pool.items()}
    run = None
    if c.result is not None:  # the run (recorded when, which of its results) that measured it
        run = (c.result.run.created_at.isoformat(), [r.id for r in c.result.run.results].index(c.result_id))
    return (
        c.heat_capacity_j_k,
        c.heat_capacity_j_k_std,
        _at(c.taken_at),
        _at(c.created_at),
        _email(c.created_by),
        run,
        None if c.result is not None else c.note,
        c.status,
        _email(c.approved_by),
        _at(c.approved_at),
        _email(c.withdrawn_by),
        _at(c.withdrawn_at),
        c.withdrawn_reason,
        c.restart,
        _at(c.in_force_at),
        pool,
    )


def _cup_trail(session: Any, cal: Calorimeter, history: list[Calibration]) -> list[tuple[Any, ...]]:
    """Return the audit entries of a calorimeter and its calibrations (those by their place in the history)."""
    place = {c.id: i for i, c in enumerate(history)}
    rows = session.scalars(
        sa.select(AuditEntry)
        .where(
            sa.or_(
                sa.and_(AuditEntry.entity == "calorimeter", AuditEntry.entity_id == cal.id),
                sa.and_(AuditEntry.entity == "calibration", AuditEntry.entity_id.in_(list(place))),
            )
        )
        .order_by(AuditEntry.id)
    )
    return [
        (
            e.at.isoformat(),
            _email(e.person),
            e.entity,
            place.get(e.entity_id) if e.entity == "calibration" else 0,
            e.field,
            e.old,
            e.new,
        )
        for e in rows
    ]


def _review(run: Run) -> tuple[Any, ...] | None:
    r = run.review
    if r is None:
        return None
    return (
        r.withdrawn,
        r.withdrawn_reason,
        r.excluded,
        r.excluded_reason,
        r.accepted,
        r.accepted_reason,
        r.mark_points,
        r.mark_reason,
        _at(r.updated_at),
    )


def _lock(run: Run) -> tuple[Any, ...]:
    """Return whether the lock signed the current result and its hash fits what is stored."""
    current = run.current_result
    return (
        run.locked,
        run.locked_result_id is not None and run.locked_result_id == (current and current.id),
        run.locked_hash is not None and run.locked_hash == content_hash(run, current),
    )


def counts(session: Any) -> tuple[int, ...]:
    """Return how many runs, people, calorimeters, calibrations and audit entries are stored."""
    return tuple(
        session.scalar(sa.select(sa.func.count()).select_from(m))
        for m in (Run, Person, Calorimeter, Calibration, AuditEntry)
    )


def dispose(app: Any) -> None:
    """Close the app's database connections."""
    get_engine(app).dispose()


# ----------------------------------------------------------------- archives by hand


def crate(graph: list[dict[str, Any]], parts: list[str]) -> bytes:
    """Return RO-Crate metadata with a descriptor and a root dataset listing ``parts``."""
    return json.dumps(
        {
            "@context": CONTEXT,
            "@graph": [
                {
                    "@id": "ro-crate-metadata.json",
                    "@type": "CreativeWork",
                    "about": {"@id": "./"},
                    "conformsTo": {"@id": "https://w3id.org/ro/crate/1.1"},
                },
                {"@id": "./", "@type": "Dataset", "name": "x", "hasPart": [{"@id": p} for p in parts]},
                *graph,
            ],
        }
    ).encode()


def file_entity(path: str, data: bytes) -> dict[str, Any]:
    """Return a File entity with its size and sha256."""
    return {
        "@id": path,
        "@type": "File",
        "name": path,
        "contentSize": str(len(data)),
        "sha256": hashlib.sha256(data).hexdigest(),
    }


def zip_of(entries: list[tuple[str, bytes]]) -> bytes:
    """Return a zip of (name, bytes) entries, written as given (duplicates too)."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z, warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # a duplicate name is what some tests want
        for name, data in entries:
            z.writestr(zipfile.ZipInfo(name, (2026, 1, 1, 0, 0, 0)), data)
    return out.getvalue()


# ----------------------------------------------------------------- hostile archives (tests and benchmarks)


def _good_parts() -> tuple[dict[str, bytes], list[dict[str, Any]]]:
    files = {
        "exp/run.toml": (DEMO / "diss-kcl-01.toml").read_bytes(),
        "exp/diss-kcl-01.csv": (DEMO / "diss-kcl-01.csv").read_bytes(),
    }
    return files, [file_entity(p, d) for p, d in files.items()] + [
        {"@id": "exp/", "@type": "Dataset", "name": "e", "hasPart": [{"@id": p} for p in files]}
    ]


def _archive(
    root: str = "a",
    *,
    meta: bytes | None = None,
    extra: list[tuple[str, bytes]] = (),
    tamper: bytes | None = None,
    graph_extra: list[dict[str, Any]] = (),
    parts_extra: list[str] = (),
) -> bytes:
    files, graph = _good_parts()
    if tamper is not None:
        files["exp/diss-kcl-01.csv"] = tamper
    meta = meta if meta is not None else crate(graph + list(graph_extra), ["exp/", *parts_extra])
    return zip_of(
        [(f"{root}/ro-crate-metadata.json", meta)] + [(f"{root}/{p}", d) for p, d in files.items()] + list(extra)
    )


def _bomb() -> bytes:
    return _archive(extra=[("a/exp/zeros.bin", bytes(17 * 1024 * 1024))])


HOSTILE = {
    "not a zip": (lambda: b"PK\x03\x04 this is not really a zip", "not a zip archive"),
    "two root folders": (lambda: _archive(extra=[("b/x.txt", b"x")]), "2 folders at the root"),
    "a file beside the root folder": (lambda: _archive(extra=[("readme.txt", b"x")]), "sits beside the root folder"),
    "a path leaving the root": (lambda: _archive(extra=[("a/../../etc/passwd", b"x")]), "leads out of the archive"),
    "an absolute path": (lambda: _archive(extra=[("/etc/cron.d/x", b"x")]), "is an absolute path"),
    "hasPart leaving the root": (lambda: _archive(parts_extra=["../outside.txt"]), "a path that leaves the root"),
    "no metadata": (lambda: zip_of([("a/exp/run.toml", b"x")]), "no a/ro-crate-metadata.json"),
    "metadata not JSON": (lambda: _archive(meta=b"{not json"), "is not JSON"),
    "metadata not JSON-LD": (
        lambda: _archive(meta=json.dumps({"@context": CONTEXT_BAD, "@graph": []}).encode()),
        "is not valid JSON-LD",
    ),
    "an @id that is a number": (
        lambda: _archive(
            meta=json.dumps({"@context": "https://w3id.org/ro/crate/1.1/context", "@graph": [{"@id": 5}]}).encode()
        ),
        "is not valid JSON-LD",
    ),
    "no root dataset": (
        lambda: _archive(
            meta=json.dumps(
                {
                    "@context": "https://w3id.org/ro/crate/1.1/context",
                    "@graph": [{"@id": "ro-crate-metadata.json", "about": {"@id": "./"}}],
                }
            ).encode()
        ),
        "no root Dataset",
    ),
    "sha256 mismatch": (lambda: _archive(tamper=b"time_s,temperature_C\n0,20\n"), "does not match its bytes"),
    "hasPart names a missing file": (lambda: _archive(parts_extra=["exp/ghost.csv"]), "which is not in the archive"),
    "an entry twice": (lambda: _archive(extra=[("a/exp/run.toml", b"shadow")]), "is in the archive twice"),
    "over the size limit (zip bomb)": (_bomb, "is it a zip bomb"),
    "one file under two spellings": (
        lambda: _archive(extra=[("a/exp/./run.toml", b"shadow")]),
        "two entries name the same file",
    ),
    "metadata nested too deeply": (lambda: _archive(meta=b"[" * 100_000 + b"]" * 100_000), "nested too deeply"),
}
CONTEXT_BAD = {"@vocab": 42}
