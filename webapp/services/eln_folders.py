"""The folders of an ``.eln`` archive being written: a run's and a calorimeter's, with their ``Dataset``.

- ``run-<id>/``: the run file and the log exactly as uploaded, ``result.json`` (the current
  result), ``cupcal-export.json`` (the run's full JSON export, with the audit trail),
  ``report.html`` (and ``report.pdf`` in a one-run archive) and SVG plots;
- ``calorimeter-<id>/``: ``calorimeter.json`` with the calorimeter and its calibrations.

The archive as a whole (its metadata, what to export) is :mod:`webapp.services.eln`.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
import re
import zipfile
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.exports.document import iso, run_document
from webapp.exports.rocrate import EXPORT_NAME
from webapp.models import AuditEntry, Calibration, Calorimeter, Person, Run
from webapp.services.audit import entry_as_dict
from webapp.services.eln_plots import plots_of

CALORIMETER_NAME = "calorimeter.json"
CALORIMETER_FORMAT = "cupcal-calorimeter-export"
#: 2: every calibration with its id, status, approval, withdrawal, restart, time in force and pool; the type
CALORIMETER_VERSION = 2
RESULT_NAME = "result.json"
REPORT_NAME = "report.html"
_MEDIA = {
    ".toml": "application/toml",
    ".csv": "text/csv",
    ".json": "application/json",
    ".html": "text/html",
    ".svg": "image/svg+xml",
    ".txt": "text/plain",
    ".pdf": "application/pdf",
}


@dataclasses.dataclass
class Archive:
    """An archive being written: its root folder, the zip (each file written as it comes) and the graph."""

    root: str
    zip: zipfile.ZipFile
    graph: list[dict[str, Any]] = dataclasses.field(default_factory=list)
    parts: list[str] = dataclasses.field(default_factory=list)
    files: list[str] = dataclasses.field(default_factory=list)
    people: dict[str, dict[str, Any]] = dataclasses.field(default_factory=dict)

    def add_file(self, folder: str, name: str, data: bytes, title: str) -> str:
        """Write a file under ``folder`` and add its ``File`` entity; return its id."""
        path = f"{folder}{name}"
        self.zip.writestr(f"{self.root}/{path}", data)
        media = _MEDIA.get(name[name.rfind(".") :].lower(), "application/octet-stream")
        self.graph.append(
            {
                "@id": path,
                "@type": "File",
                "name": title,
                "encodingFormat": media,
                "contentType": media,
                "contentSize": str(len(data)),
                "sha256": hashlib.sha256(data).hexdigest(),
            }
        )
        self.parts.append(path)
        self.files.append(path)
        return path

    def person(self, p: Person | None) -> dict[str, str] | None:
        """Return a reference to ``p`` (adding its ``Person`` entity once)."""
        if p is None:
            return None
        pid = f"#person-{hashlib.sha256(p.email.lower().encode()).hexdigest()[:16]}"
        self.people.setdefault(pid, {"@id": pid, "@type": "Person", "name": p.name, "email": p.email})
        return {"@id": pid}


def safe_name(name: str, fallback: str) -> str:
    """Return a file name with only letters, digits, ``.``, ``_`` and ``-``."""
    return re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or fallback


# ----------------------------------------------------------------- a run


def summary_text(run: Run, doc: dict[str, Any]) -> str:
    """Return the experiment's text: the result ± U with k, method, comparison and safety cautions."""
    res = doc["result"]
    lines = [f"cupcal {run.kind} run {run.id}: {run.title}."]
    if res is None:
        lines.append("No result is stored for this run.")
    else:
        main = res["outputs"].get(res["main"], {})
        lines.append(
            f"{res['main'].replace('_', ' ')} = {res['value']:.6g} {res['unit']}, expanded uncertainty "
            f"U = {res['expanded_uncertainty']:.2g} {res['unit']} (coverage factor k = {res['coverage_factor']:.2f}, "
            f"about 95 % coverage; standard uncertainty {main.get('standard_uncertainty', 0):.2g} {res['unit']})."
        )
        lines.append(f"Corrected temperature change by the method '{res['options']['method']}'.")
        comp = res.get("comparison")
        if isinstance(comp, dict) and comp.get("En") is not None:
            ref = (comp.get("reference") or {}).get("name", "the reference value")
            verdict = "satisfactory" if comp.get("satisfactory") else "not satisfactory"
            lines.append(f"Compared with {ref}: E_n = {comp['En']:.2f} ({verdict}, ISO 13528).")
        for c in res.get("cautions") or []:
            if isinstance(c, dict) and c.get("substance") != "general":
                lines.append(f"Caution, {c.get('substance')}: {'; '.join(c.get('hazard_statements') or [])}.")
    lines.append(
        "Wear eye protection; follow the lab's own safety rules, local codes and the supplier's safety data sheet."
    )
    return " ".join(lines)


def _export_doc(run: Run, doc: dict[str, Any], run_path: str, readings_path: str, audit: list[dict[str, Any]]) -> bytes:
    full = doc["files"]
    doc = dict(doc, files={})  # without the files' text: they sit beside it
    for which, path in (("run_file", run_path), ("readings", readings_path)):
        entry = {k: v for k, v in full[which].items() if k not in ("text", "base64")}
        entry["path"] = path.rsplit("/", 1)[-1]
        doc["files"][which] = entry
    doc["audit_trail"] = audit
    doc["content_hash"] = run.content_hash
    doc["review"] = review_document(run)
    return json.dumps(doc, ensure_ascii=False, allow_nan=False).encode("utf-8")


def review_document(run: Run) -> dict[str, Any] | None:
    """Return the run's review (withdrawn, excluded, accepted, a mark by hand), or None when it has none."""
    r = run.review
    if r is None:
        return None
    return {
        "withdrawn": r.withdrawn,
        "withdrawn_reason": r.withdrawn_reason,
        "excluded": r.excluded,
        "excluded_reason": r.excluded_reason,
        "accepted": r.accepted,
        "accepted_reason": r.accepted_reason,
        "mark_points": r.mark_points,
        "mark_reason": r.mark_reason,
        "updated_at": iso(r.updated_at),
        "updated_by": r.updated_by_id and _who_id(run, r.updated_by_id),
    }


def _who_id(run: Run, person_id: int) -> dict[str, str] | None:
    session = so.object_session(run)
    return _who(session.get(Person, person_id)) if session is not None else None


def _modified(run: Run) -> dt.datetime:
    times = [run.created_at] + [r.created_at for r in run.results] + ([run.locked_at] if run.locked_at else [])
    return max(t for t in times if t is not None)


def add_run(archive: Archive, run: Run, audit: list[dict[str, Any]], report: Any = None) -> None:
    """Add one run's experiment folder and its ``Dataset``."""
    folder = f"run-{run.id}/"
    doc = run_document(run)
    current = run.current_result
    taken = {RESULT_NAME, EXPORT_NAME, REPORT_NAME, "report.pdf", "plot-temperature.svg", "plot-budget.svg"}
    run_name = safe_name(run.run_file_name, "run.toml")
    run_name = "uploaded-" + run_name if run_name in taken else run_name
    readings_name = safe_name(run.readings_name, "readings.csv")
    if readings_name in taken or readings_name == run_name:
        readings_name = "readings-" + readings_name
    first = len(archive.parts)
    run_path = archive.add_file(folder, run_name, run.run_toml.encode("utf-8"), "Run file (as uploaded)")
    readings_path = archive.add_file(folder, readings_name, bytes(run.readings_raw), "Temperature log (as uploaded)")
    archive.add_file(
        folder,
        RESULT_NAME,
        json.dumps(doc["result"], ensure_ascii=False).encode("utf-8"),
        "Current result with budget, comparison and cautions (JSON)",
    )
    archive.add_file(
        folder,
        EXPORT_NAME,
        _export_doc(run, doc, run_path, readings_path, audit),
        "Full cupcal export of the run: every result, inputs, provenance and audit trail",
    )
    for name, data in (report(run) if report is not None else {}).items():
        archive.add_file(folder, name, data, f"Printable report ({name.rsplit('.', 1)[-1].upper()})")
    for name, svg in plots_of(run, current).items():
        archive.add_file(folder, name, svg.encode("utf-8"), "Plot: " + name[5:-4].replace("-", " "))
    files = archive.parts[first:]
    del archive.parts[first:]
    archive.parts.append(folder)
    archive.graph.append(_run_dataset(archive, run, doc, folder, files))


def _run_dataset(archive: Archive, run: Run, doc: dict[str, Any], folder: str, files: list[str]) -> dict[str, Any]:
    res = doc["result"]
    entity: dict[str, Any] = {
        "@id": folder,
        "@type": "Dataset",
        "name": run.title or run.run_file_name,
        "description": summary_text(run, doc),
        "author": archive.person(run.author),
        "dateCreated": iso(run.created_at),
        "dateModified": iso(_modified(run)),
        "keywords": ["calorimetry", run.kind],
        "hasPart": [{"@id": f} for f in files],
        "cupcal:kind": run.kind,
        "cupcal:runId": run.id,
        "cupcal:locked": run.locked,
    }
    if run.operator:
        entity["cupcal:operator"] = run.operator
    if run.review is not None:
        entity["cupcal:withdrawn"], entity["cupcal:excluded"] = run.review.withdrawn, run.review.excluded
    if run.calorimeter is not None:
        entity["cupcal:calorimeter"] = run.calorimeter.name
    if res is not None:
        entity["variableMeasured"] = {
            "@id": f"#result-{run.id}",
            "@type": "PropertyValue",
            "name": res["main"],
            "value": res["value"],
            "unitText": res["unit"],
            "measurementTechnique": res["options"]["method"],
            "cupcal:standardUncertainty": res["standard_uncertainty"],
            "cupcal:expandedUncertainty": res["expanded_uncertainty"],
            "cupcal:coverageFactor": res["coverage_factor"],
        }
    return entity


# ----------------------------------------------------------------- a calorimeter


def _who(p: Person | None) -> dict[str, str] | None:
    return None if p is None else {"name": p.name, "email": p.email}


def calibration_document(c: Calibration) -> dict[str, Any]:
    """Return one calibration with what defines it; ``id`` is its id here, which a pool's members name."""
    return {
        "id": c.id,
        "heat_capacity": {"value": c.heat_capacity_j_k, "standard_uncertainty": c.heat_capacity_j_k_std, "unit": "J/K"},
        "taken_at": iso(c.taken_at),
        "created_at": iso(c.created_at),
        "note": c.note,
        "created_by": _who(c.created_by),
        "from_run": c.result.run_id if c.result is not None else None,
        "from_result": c.result_id,
        "status": c.status,
        "approved_by": _who(c.approved_by),
        "approved_at": iso(c.approved_at),
        "withdrawn_by": _who(c.withdrawn_by),
        "withdrawn_at": iso(c.withdrawn_at),
        "withdrawn_reason": c.withdrawn_reason,
        "restart": c.restart,
        "in_force_at": iso(c.in_force_at),
        "pool": c.pool,
    }


def calorimeter_document(cal: Calorimeter) -> dict[str, Any]:
    """Return a calorimeter with its calibrations, oldest first, as JSON-ready data."""
    return {
        "format": CALORIMETER_FORMAT,
        "format_version": CALORIMETER_VERSION,
        "name": cal.name,
        "parts": cal.parts,
        "location": cal.location,
        "created_at": iso(cal.created_at),
        "calibration_interval_days": cal.calibration_interval_days,
        "vessel_type": cal.vessel_type,
        "calibrations": [calibration_document(c) for c in sorted(cal.calibrations, key=lambda c: (c.taken_at, c.id))],
        "audit_trail": calorimeter_trail(cal),
    }


def calorimeter_trail(cal: Calorimeter) -> list[dict[str, Any]]:
    """Return the audit entries of the calorimeter and of its calibrations, oldest first (ids of this notebook)."""
    session = so.object_session(cal)
    if session is None:
        return []
    ids = [c.id for c in cal.calibrations]
    rows = session.scalars(
        sa.select(AuditEntry)
        .options(so.joinedload(AuditEntry.person))
        .where(
            sa.or_(
                sa.and_(AuditEntry.entity == "calorimeter", AuditEntry.entity_id == cal.id),
                sa.and_(AuditEntry.entity == "calibration", AuditEntry.entity_id.in_(ids)),
            )
        )
        .order_by(AuditEntry.id)
    )
    return [entry_as_dict(e) for e in rows]


def add_calorimeter(archive: Archive, cal: Calorimeter) -> None:
    """Add a calorimeter's folder (its calibrations) and its ``Dataset``."""
    folder = f"calorimeter-{cal.id}/"
    doc = calorimeter_document(cal)
    path = archive.add_file(
        folder,
        CALORIMETER_NAME,
        json.dumps(doc, ensure_ascii=False).encode(),
        "Calorimeter and its calibrations (JSON)",
    )
    archive.parts.remove(path)
    archive.parts.append(folder)
    history = "; ".join(
        f"{c['heat_capacity']['value']:.4g} ± {c['heat_capacity']['standard_uncertainty']:.2g} J/K "
        f"(standard uncertainty) taken {c['taken_at'][:10]}"
        for c in doc["calibrations"]
    )
    created_by = next((c for c in cal.calibrations if c.created_by is not None), None)
    archive.graph.append(
        {
            "@id": folder,
            "@type": "Dataset",
            "name": f"Calorimeter {cal.name}",
            "description": f"Calorimeter {cal.name} ({cal.parts or 'parts not given'}; {cal.location or 'no location'}). "
            f"Calibrations: {history or 'none'}.",
            "author": archive.person(created_by.created_by) if created_by else None,
            "dateCreated": iso(cal.created_at),
            "dateModified": iso(max([cal.created_at] + [c.created_at for c in cal.calibrations])),
            "hasPart": [{"@id": path}],
            "cupcal:calorimeter": cal.name,
            "cupcal:vesselType": cal.vessel_type,
        }
    )
    if archive.graph[-1]["author"] is None:
        del archive.graph[-1]["author"]
