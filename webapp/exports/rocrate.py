"""RO-Crate 1.1 packages of a run: ``ro-crate-metadata.json`` with the run file, readings and result.

The metadata is written by hand (JSON-LD, RO-Crate 1.1, https://w3id.org/ro/crate/1.1): the
metadata descriptor, the root dataset, one ``File`` per data file, the people, the software
(cupcal) and a ``CreateAction`` (the analysis: run file and readings in, result out). The tests
read it back with the ``rocrate`` library.
"""

from __future__ import annotations

import io
import json
import re
import zipfile
from typing import Any

from calc import __version__
from webapp.exports.document import run_document
from webapp.models import Person, Run

METADATA = "ro-crate-metadata.json"
EXPORT_NAME = "cupcal-export.json"
CONTEXT = "https://w3id.org/ro/crate/1.1/context"
PROFILE = "https://w3id.org/ro/crate/1.1"
_RESERVED = {METADATA, EXPORT_NAME, "ro-crate-preview.html"}


def _safe(name: str, taken: set[str], fallback: str) -> str:
    name = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or fallback
    while name in taken or name in _RESERVED:
        name = "_" + name
    taken.add(name)
    return name


def _person_id(p: Person) -> str:
    return f"#person-{p.id}"


def _file(path: str, name: str, encoding: str, data: bytes) -> dict[str, Any]:
    """Return the crate's ``File`` entity of one data file."""
    return {"@id": path, "@type": "File", "name": name, "encodingFormat": encoding, "contentSize": str(len(data))}


def crate_files(run: Run) -> tuple[dict[str, Any], dict[str, bytes]]:
    """Return the crate metadata and its data files (name → bytes) for ``run``."""
    doc = run_document(run)
    taken: set[str] = set()
    run_name = _safe(run.run_file_name, taken, "run.toml")
    readings_name = _safe(run.readings_name, taken, "readings.csv")
    doc["files"]["run_file"]["path"] = run_name
    doc["files"]["readings"]["path"] = readings_name
    files = {
        run_name: run.run_toml.encode("utf-8"),
        readings_name: bytes(run.readings_raw),
        EXPORT_NAME: json.dumps(doc, ensure_ascii=False, indent=2).encode("utf-8"),
    }
    people = {
        p.id: p for p in (run.author, run.current_result.created_by if run.current_result else None) if p is not None
    }
    software = {"@id": "#cupcal", "@type": "SoftwareApplication", "name": "cupcal", "version": __version__}
    graph: list[dict[str, Any]] = [
        {"@id": METADATA, "@type": "CreativeWork", "conformsTo": {"@id": PROFILE}, "about": {"@id": "./"}},
        {
            "@id": "./",
            "@type": "Dataset",
            "name": run.title or run.run_file_name,
            "description": f"cupcal {run.kind} run {run.id}: run file, thermometer readings and analyzed result",
            "datePublished": doc["exported_at"][:10],
            "creator": [{"@id": _person_id(run.author)}],
            "hasPart": [{"@id": run_name}, {"@id": readings_name}, {"@id": EXPORT_NAME}],
            "mentions": {"@id": "#analysis"},
        },
        _file(run_name, "Run file (as uploaded)", "application/toml", files[run_name]),
        _file(readings_name, "Thermometer readings (as uploaded)", "text/csv", files[readings_name]),
        _file(
            EXPORT_NAME, "Result, budget and provenance (cupcal JSON export)", "application/json", files[EXPORT_NAME]
        ),
        software,
        {
            "@id": "#analysis",
            "@type": "CreateAction",
            "name": "Calorimetric analysis",
            "instrument": {"@id": "#cupcal"},
            "object": [{"@id": run_name}, {"@id": readings_name}],
            "result": [{"@id": EXPORT_NAME}],
            "agent": {"@id": _person_id(run.current_result.created_by)}
            if run.current_result and run.current_result.created_by
            else {"@id": _person_id(run.author)},
            "endTime": doc["result"]["analyzed_at"] if doc["result"] else doc["exported_at"],
        },
    ]
    graph += [{"@id": _person_id(p), "@type": "Person", "name": p.name} for p in people.values()]
    return {"@context": CONTEXT, "@graph": graph}, files


def crate_zip(run: Run) -> bytes:
    """Return the RO-Crate of ``run`` as a zip (metadata at the top level)."""
    meta, files = crate_files(run)
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(METADATA, json.dumps(meta, ensure_ascii=False, indent=2))
        for name, data in files.items():
            z.writestr(name, data)
    return out.getvalue()
