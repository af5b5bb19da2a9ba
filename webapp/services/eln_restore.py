"""Reading back the runs cupcal wrote into an ``.eln`` archive, exactly (calorimeters: :mod:`~webapp.services.eln_calibrations`).

A run is analyzed again from its files, exactly as the archive says it was (method, periods,
Monte Carlo trials and seed, the calibration that supplied the heat capacity), for each of its
results in turn; every number of every result must then equal the archive's, else the run is
not stored. The audit fields are restored as written: who recorded, analyzed and signed it and
when, its details, its group and its audit trail (plus one entry saying it was imported). People
are matched by e-mail; someone not in this notebook gets an inactive account that cannot sign in.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.exports.document import FORMAT, result_document
from webapp.models import CALIBRATION_KINDS, AuditEntry, Calibration, Calorimeter, Group, Person, Result, Run, RunReview
from webapp.services.access import require_coordinator
from webapp.services.analysis import (
    decode_readings,
    inputs_from_spec,
    needs_supplied_heat_capacity,
    parse_inputs,
    result_from_analysis,
    run_analysis,
)
from webapp.services.audit import record_change
from webapp.services.calibrations import calibration_from_result
from webapp.services.calorimeters import find_calorimeter
from webapp.services.concurrency import content_hash as signed_hash
from webapp.services.eln_calibrations import Known, People, find_calibration, when
from webapp.services.errors import Invalid
from webapp.services.import_store import content_hash
from webapp.services.package_import import _file, _options
from webapp.services.run_upload import RunUpload, new_run, periods_given, upload_file_name

#: most results of one run read back (each is analyzed again)
MAX_RESULTS = 100
#: the parts of a result that must come back number for number
COMPARED = (
    "main",
    "value",
    "standard_uncertainty",
    "unit",
    "expanded_uncertainty",
    "coverage_factor",
    "dof_eff",
    "outputs",
    "options",
    "mixing_time",
    "budget",
    "warnings",
    "comparison",
    "cautions",
    "properties",
    "monte_carlo",
    "checks",
)


# ----------------------------------------------------------------- runs


def _calibration_for(
    session: so.Session, info: dict[str, Any], doc: dict[str, Any], run_toml: str, where: str, known: Known
) -> tuple[Calorimeter | None, Calibration | None]:
    name = info.get("calorimeter")
    cal = find_calorimeter(session, name) if isinstance(name, str) and name else None
    if name and cal is None:
        raise Invalid(
            f"{where}: the run belongs to calorimeter {name!r}, which this notebook does not have; a "
            "coordinator can add it by importing its archive (or the whole notebook's) first",
            field="run.calorimeter",
        )
    exported = (doc.get("provenance") or {}).get("calibration")
    if exported is None or not needs_supplied_heat_capacity(run_toml):
        return cal, None
    hc = exported.get("heat_capacity") or {}
    found = None
    mine = known.by_source.get((cal.name, exported.get("id"))) if cal is not None else None
    if mine is not None:
        found = session.get(Calibration, mine)
    elif cal is not None:
        found = find_calibration(
            session,
            cal,
            hc.get("value"),
            hc.get("standard_uncertainty"),
            when(exported["taken_at"], "provenance.calibration.taken_at") if exported.get("taken_at") else None,
        )
    if found is None:
        raise Invalid(
            f"{where}: the run takes its heat capacity ({hc.get('value')} ± {hc.get('standard_uncertainty')} "
            f"J/K) from a calibration of calorimeter {name!r}, which this notebook does not have; import "
            "the calorimeter's archive (or the archive of the calibration run) first",
            field="provenance.calibration",
        )
    return cal, found


def _plain(value: Any) -> Any:
    return json.loads(json.dumps(value, allow_nan=True))


def check_same(result: Result, exported: dict[str, Any], where: str) -> None:
    """Raise unless the new result equals the exported one in every compared part."""
    mine = _plain(result_document(result))
    theirs = _plain(exported)
    for key in COMPARED:
        if mine.get(key) != theirs.get(key):
            raise Invalid(
                f"{where}: the analysis here does not reproduce the archive's result {exported.get('id')} "
                f"({key} differs; the archive was analyzed by cupcal "
                f"{exported.get('software_version')}); the run was not stored",
                field="result",
            )


def _details(
    session: so.Session, actor: Person, run: Run, doc: dict[str, Any], people: People, groups: dict[str, Group]
) -> None:
    info, prov = doc.get("run") or {}, doc.get("provenance") or {}
    for key, limit in (("title", 300), ("operator", 200), ("bench", 120), ("performed_on", 40), ("notes", None)):
        if isinstance(info.get(key), str):
            setattr(run, key, info[key][:limit] if limit else info[key])
    name = info.get("group")
    if isinstance(name, str) and name.strip():
        if name not in groups:
            groups[name] = session.scalar(sa.select(Group).where(Group.name == name)) or Group(name=name[:120])
            session.add(groups[name])
        run.group = groups[name]
    if prov.get("recorded_at"):
        run.created_at = when(prov["recorded_at"], "provenance.recorded_at")
    if prov.get("locked"):
        require_coordinator(actor, "import signed runs (they keep their signatures)")
        when(prov.get("locked_at"), "provenance.locked_at")  # refused early when it is not a time


def _sign(run: Run, doc: dict[str, Any], people: People) -> None:
    """Sign the restored run as the archive says, last (a signed run can no longer change)."""
    prov = doc.get("provenance") or {}
    if not prov.get("locked"):
        return
    current = run.current_result
    run.locked_result_id = current.id if current is not None else None
    run.locked_hash = signed_hash(run, current)  # the same content, signed with this notebook's ids
    run.locked_by = people.get(prov.get("locked_by"))
    run.locked_at = when(prov.get("locked_at"), "provenance.locked_at")
    run.locked = True


def _audit(session: so.Session, run: Run, doc: dict[str, Any], people: People) -> None:
    for i, e in enumerate(doc.get("audit_trail") or []):
        if not isinstance(e, dict) or not isinstance(e.get("field"), str):
            raise Invalid(f"entry {i + 1}: expected an object with a 'field'", field="audit_trail")
        session.add(
            AuditEntry(
                at=when(e.get("at"), f"audit_trail[{i}].at"),
                person=people.get(e.get("person")),
                entity="run",
                entity_id=run.id,
                field=e["field"][:80],
                old=None if e.get("old") is None else str(e["old"]),
                new=None if e.get("new") is None else str(e["new"]),
            )
        )


def _results_in_order(doc: dict[str, Any], where: str) -> list[dict[str, Any]]:
    current = doc.get("result")
    if not isinstance(current, dict):
        raise Invalid(f"{where}: the run has no result", field="result")
    earlier = [r for r in doc.get("earlier_results") or [] if isinstance(r, dict)]
    if len(earlier) >= MAX_RESULTS:
        raise Invalid(
            f"{where}: {len(earlier) + 1} results; at most {MAX_RESULTS} per run are read back", field="earlier_results"
        )
    return sorted(earlier + [current], key=lambda r: r.get("id") if isinstance(r.get("id"), int) else 0)


def calibration_stamps(doc: Any) -> dict[tuple[Any, ...], str]:
    """Return when each calibration measured by a run was stored, from a ``calorimeter.json``."""
    out = {}
    for c in (doc.get("calibrations") or []) if isinstance(doc, dict) else []:
        if isinstance(c, dict) and c.get("from_run") is not None and isinstance(c.get("created_at"), str):
            hc = c.get("heat_capacity") or {}
            out[(doc.get("name"), c["from_run"], hc.get("value"), hc.get("standard_uncertainty"))] = c["created_at"]
    return out


def restore_run(
    session: so.Session,
    actor: Person,
    doc: Any,
    blobs: dict[str, bytes],
    people: People,
    groups: dict[str, Group],
    where: str,
    stamps: dict[tuple[Any, ...], str] | None = None,
    known: Known | None = None,
    imported: str | None = None,
) -> Run:
    """Store the run of a ``cupcal-export.json`` with every result, checked number for number (no commit).

    ``known`` (from the archive's ``calorimeter.json`` files) ties the calibrations the run measured
    to their results; without them (an archive of format 1) they are recorded anew, ``stamps``
    (:func:`calibration_stamps`) giving them their time of storing. ``imported`` (by ``actor``) is
    audited before the restored trail, so a signed run has no entry after its lock.
    """
    if not isinstance(doc, dict) or doc.get("format") != FORMAT or doc.get("format_version") != 1:
        raise Invalid(f"{where}: expected a cupcal run export (format {FORMAT!r}, version 1)", field="format")
    known = known or Known()
    run_name, run_bytes, run_toml, readings_name, readings = _files(doc, blobs, where)
    cal, calibration = _calibration_for(session, doc.get("run") or {}, doc, run_toml, where, known)
    spec, rd = parse_inputs(run_toml, run_name, decode_readings(readings, readings_name), readings_name, calibration)
    author = people.get((doc.get("provenance") or {}).get("recorded_by")) or actor
    upload = RunUpload(run_toml=run_toml, run_file_name=run_name, readings=readings, readings_name=readings_name)
    run = new_run(spec, rd, upload, run_name, readings_name, author, None, cal, calibration)
    run.inputs = inputs_from_spec(spec, calibration)
    run.content_hash = content_hash(run_bytes, readings)
    _details(session, actor, run, doc, people, groups)
    session.add(run)
    source_id = (doc.get("run") or {}).get("id")
    own = known.of_run.get((cal.name, source_id), set()) if cal is not None else set()
    for rdoc in _results_in_order(doc, where):
        options = _options({"result": rdoc}, 0).checked()
        _legacy_keys(rdoc)
        analyzed_at = when(rdoc["analyzed_at"], "result.analyzed_at") if rdoc.get("analyzed_at") else None
        result = result_from_analysis(
            run_analysis(spec, rd, options, **_check_context(session, cal, own, analyzed_at)),
            input_name=run_name,
            periods_given=periods_given(options),
        )
        result.run, result.is_current = run, rdoc is doc["result"]
        session.add(result)
        result.created_by = people.get(rdoc.get("analyzed_by"))
        if analyzed_at is not None:
            result.created_at = analyzed_at
        check_same(result, rdoc, where)
        if run.kind in CALIBRATION_KINDS and cal is not None:
            _measured(session, cal, run, result, rdoc, doc, known, stamps)
    session.flush()
    if imported is not None:
        record_change(session, actor, "run", run.id, "imported", None, imported)
    _audit(session, run, doc, people)
    _review(session, run, doc, people)
    session.flush()
    _sign(run, doc, people)
    return run


def _files(doc: dict[str, Any], blobs: dict[str, bytes], where: str) -> tuple[str, bytes, str, str, bytes]:
    """Return the run file (name, bytes, text) and the readings (name, bytes) of a run export."""
    run_name, run_bytes = _file(doc, "run_file", blobs)
    readings_name, readings = _file(doc, "readings", blobs)
    try:
        run_toml = run_bytes.decode("utf-8")
    except UnicodeDecodeError:
        raise Invalid(f"{where}: the run file is not UTF-8 text", field="files.run_file") from None
    run_name, readings_name = upload_file_name(run_name, "run_file"), upload_file_name(readings_name, "readings")
    return run_name, run_bytes, run_toml, readings_name, readings


def _check_context(
    session: so.Session, cal: Calorimeter | None, own: set[int], at: dt.datetime | None
) -> dict[str, Any]:
    """Return the cup's type and its history as it stood when the result was made (the plausibility checks)."""
    if cal is None:
        return {}
    rows = session.scalars(
        sa.select(Calibration)
        .where(Calibration.calorimeter_id == cal.id)
        .order_by(Calibration.taken_at, Calibration.id)
    ).all()
    history = [
        (c.heat_capacity_j_k, c.heat_capacity_j_k_std)
        for c in rows
        if c.id not in own and (at is None or c.created_at <= at)
    ]
    return {"calorimeter_type": cal.vessel_type, "history": history}


def _measured(
    session: so.Session,
    cal: Calorimeter,
    run: Run,
    result: Result,
    rdoc: dict[str, Any],
    doc: dict[str, Any],
    known: Known,
    stamps: dict[tuple[Any, ...], str] | None,
) -> None:
    """Tie the calibration this result measured to it (or record it anew for an archive of format 1)."""
    source_id = (doc.get("run") or {}).get("id")
    mine = known.by_result.get((cal.name, source_id, rdoc.get("id")))
    if mine is not None:
        row = session.get(Calibration, mine)
        if row is not None and row.result_id is None:
            row.result = result
        return
    if (cal.name, source_id) in known.of_run:
        return  # the archive lists this run's calibrations, and none from this result
    session.flush()  # the calibration's note names the run
    c = calibration_from_result(session, cal, result, result.created_by)
    stamp = (stamps or {}).get((cal.name, source_id, c.heat_capacity_j_k, c.heat_capacity_j_k_std))
    if stamp:
        c.created_at = when(stamp, "calibrations.created_at")


def _review(session: so.Session, run: Run, doc: dict[str, Any], people: People) -> None:
    """Store the run's review (withdrawn, excluded, accepted, a mark by hand) as written."""
    r = doc.get("review")
    if r is None:
        return
    if not isinstance(r, dict):
        raise Invalid("expected an object", field="review")
    row = RunReview(run_id=run.id)
    for key in ("withdrawn", "excluded", "accepted"):
        if not isinstance(r.get(key, False), bool):
            raise Invalid(f"review.{key}: expected true or false", field="review")
        setattr(row, key, r.get(key, False))
        setattr(row, f"{key}_reason", str(r.get(f"{key}_reason") or ""))
    points = r.get("mark_points")
    if points is not None and (
        isinstance(points, bool) or not isinstance(points, (int, float)) or not math.isfinite(points)
    ):
        raise Invalid("review.mark_points: expected a number or null", field="review")
    row.mark_points, row.mark_reason = points, str(r.get("mark_reason") or "")
    if r.get("updated_at"):
        row.updated_at = when(r["updated_at"], "review.updated_at")
    who = people.get(r.get("updated_by"))
    if who is not None:
        session.flush()
        row.updated_by_id = who.id
    session.add(row)


def _legacy_keys(rdoc: dict) -> None:
    """Archives written before the US spelling of names carry ``analysed_at``/``analysed_by``: read them too."""
    for new in ("analyzed_at", "analyzed_by"):
        old = new.replace("analyzed", "analysed")
        if old in rdoc and new not in rdoc:
            rdoc[new] = rdoc[old]
