"""Export of runs and calorimeters as ``.eln`` archives (an open RO-Crate profile for lab notebooks).

An archive is a zip holding exactly one folder, named like the archive, with
``ro-crate-metadata.json`` (RO-Crate 1.1) and one sub-folder per experiment:

- ``run-<id>/``: the run file and the log exactly as uploaded, ``result.json`` (the current
  result), ``cupcal-export.json`` (the run's full JSON export of :mod:`webapp.exports.document`, with the
  audit trail, which an import reads back exactly), ``report.html`` (and ``report.pdf`` in a
  one-run archive) and SVG plots;
- ``calorimeter-<id>/``: ``calorimeter.json`` with the calorimeter and its calibrations.

Those folders are written by :mod:`webapp.services.eln_folders`; this module writes the metadata
and chooses what to export.

The metadata uses schema.org terms where they fit and the ``cupcal:`` namespace
(:data:`NAMESPACE`, documented in ``webapp/README.md``) for the rest. Every ``File`` has its
``contentSize`` and ``sha256``.
"""

from __future__ import annotations

import datetime as dt
import io
import json
import zipfile
from collections.abc import Iterable
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc import __version__
from webapp.exports.document import iso, selected_runs
from webapp.exports.rocrate import CONTEXT, METADATA, PROFILE
from webapp.models import AuditEntry, Calibration, Calorimeter, Group, Person, Result, Run
from webapp.services.access import visible_runs_clause
from webapp.services.audit import entry_as_dict
from webapp.services.calorimeters import get_calorimeter
from webapp.services.classes import get_section
from webapp.services.eln_folders import REPORT_NAME, Archive, add_calorimeter, add_run
from webapp.services.errors import Invalid

#: the namespace of cupcal's own terms in the metadata
NAMESPACE = "urn:cupcal:terms:"
#: the RO-Crate context, our prefix, and ``contentType`` (asked for by some readers) as schema.org's encodingFormat
CRATE_CONTEXT: list[Any] = [CONTEXT, {"cupcal": NAMESPACE, "contentType": "http://schema.org/encodingFormat"}]
#: most runs in one archive (a section of a large class fits)
MAX_RUNS = 5000


def _utc_now() -> dt.datetime:
    return dt.datetime.now(dt.UTC).replace(tzinfo=None)


# ----------------------------------------------------------------- the archive


def finish(archive: Archive, description: str) -> None:
    """Write the metadata (the descriptor, the root dataset, every entity) into the archive."""
    now = iso(_utc_now())
    graph: list[dict[str, Any]] = [
        {
            "@id": METADATA,
            "@type": "CreativeWork",
            "about": {"@id": "./"},
            "conformsTo": {"@id": PROFILE},
            "dateCreated": now,
            "sdPublisher": {"@id": "#cupcal"},
        },
        {
            "@id": "./",
            "@type": "Dataset",
            "name": archive.root,
            "description": description,
            "datePublished": now,
            "license": {"@id": "#license"},
            "hasPart": [{"@id": p} for p in archive.parts + archive.files],
        },
        {
            "@id": "#cupcal",
            "@type": ["SoftwareApplication", "Organization"],
            "name": "cupcal",
            "version": __version__,
            "softwareVersion": __version__,
        },
        {"@id": "#license", "@type": "CreativeWork", "name": "as set by the lab that wrote this archive"},
    ]
    graph += archive.graph + list(archive.people.values())
    meta = json.dumps({"@context": CRATE_CONTEXT, "@graph": graph}, ensure_ascii=False, allow_nan=False)
    archive.zip.writestr(f"{archive.root}/{METADATA}", meta)


def _load(query: sa.Select[tuple[Run]]) -> sa.Select[tuple[Run]]:
    return query.options(
        so.undefer_group("files"),
        so.undefer_group("series"),
        so.selectinload(Run.results).undefer_group("detail").selectinload(Result.created_by),
        so.selectinload(Run.inputs),
        so.joinedload(Run.author),
        so.joinedload(Run.locked_by),
        so.joinedload(Run.group),
        so.joinedload(Run.calorimeter),
        so.joinedload(Run.calibration).joinedload(Calibration.calorimeter),
        so.selectinload(Run.review),
    ).order_by(Run.id)


def audit_trails(session: so.Session, run_ids: list[int]) -> dict[int, list[dict[str, Any]]]:
    """Return every run's audit trail (oldest first), by run id, with the people's e-mails."""
    out: dict[int, list[dict[str, Any]]] = {i: [] for i in run_ids}
    for chunk in range(0, len(run_ids), 500):
        rows = session.scalars(
            sa.select(AuditEntry)
            .options(so.joinedload(AuditEntry.person))
            .where(AuditEntry.entity == "run", AuditEntry.entity_id.in_(run_ids[chunk : chunk + 500]))
            .order_by(AuditEntry.id)
        )
        for e in rows:
            d = entry_as_dict(e)
            d["email"] = e.person.email if e.person else None
            out[e.entity_id].append(d)
    return out


def build(
    session: so.Session,
    runs: Iterable[Run],
    calorimeters: Iterable[Calorimeter],
    root: str,
    description: str,
    report: Any = None,
) -> bytes:
    """Return an archive (zip bytes) of ``runs`` and ``calorimeters`` under the folder ``root``."""
    runs = list(runs)
    if len(runs) > MAX_RUNS:
        raise Invalid(f"at most {MAX_RUNS} runs per archive; export a smaller selection", field="run_ids")
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as z:
        archive = Archive(root, z)
        for cal in calorimeters:
            add_calorimeter(archive, cal)
        trails = audit_trails(session, [r.id for r in runs])
        for run in runs:
            add_run(archive, run, trails[run.id], report)
        finish(archive, description)
    return out.getvalue()


# ----------------------------------------------------------------- what to export


def _visible(session: so.Session, actor: Person, where: Any) -> list[Run]:
    return list(session.scalars(_load(sa.select(Run).where(visible_runs_clause(actor), where))).unique())


def export_runs(session: so.Session, actor: Person, run_ids: list[int], report: Any = None) -> tuple[str, bytes]:
    """Return (file name, archive) of a run or a selection of runs ``actor`` may see."""
    ids = [r.id for r in selected_runs(session, actor, run_ids)]
    runs = _visible(session, actor, Run.id.in_(ids))
    root = f"cupcal-run-{ids[0]}" if len(ids) == 1 else f"cupcal-runs-{len(ids)}"
    return root + ".eln", build(session, runs, [], root, f"{len(runs)} calorimetry run(s) from cupcal", report)


def export_section(session: so.Session, actor: Person, section_id: int, report: Any = None) -> tuple[str, bytes]:
    """Return (file name, archive) of every run of a section's groups that ``actor`` may see."""
    section = get_section(session, actor, section_id)
    groups = sa.select(Group.id).where(Group.section_id == section.id)
    runs = _visible(session, actor, Run.group_id.in_(groups))
    root = f"cupcal-section-{section.id}"
    text = f"Runs of section {section.name} of {section.course.name} ({len(runs)} runs), from cupcal"
    return root + ".eln", build(session, runs, [], root, text, report)


def export_calorimeter(
    session: so.Session, actor: Person, calorimeter_id: int, report: Any = None
) -> tuple[str, bytes]:
    """Return (file name, archive) of a calorimeter, its calibrations and its calibration runs."""
    cal = get_calorimeter(session, calorimeter_id)
    from_runs = (
        sa.select(Result.run_id)
        .join(Calibration, Calibration.result_id == Result.id)
        .where(Calibration.calorimeter_id == cal.id)
    )
    runs = _visible(session, actor, Run.id.in_(from_runs))
    root = f"cupcal-calorimeter-{cal.id}"
    return root + ".eln", build(session, runs, [cal], root, f"Calorimeter {cal.name} with its calibrations", report)


def export_notebook(session: so.Session, actor: Person, report: Any = None) -> tuple[str, bytes]:
    """Return (file name, archive) of every calorimeter and every run ``actor`` may see."""
    cals = list(session.scalars(sa.select(Calorimeter).order_by(Calorimeter.id)))
    runs = _visible(session, actor, sa.true())
    return "cupcal-notebook.eln", build(
        session,
        runs,
        cals,
        "cupcal-notebook",
        f"Every calorimeter and run of a cupcal notebook ({len(runs)} runs)",
        report,
    )


def report_renderer(pdf: bool = False) -> Any:
    """Return the function writing a run's printable report files, HTML (and PDF); needs an app context.

    The PDF takes about a second a run, so it is made for one-run archives only.
    """
    from webapp.exports.report import report_html, report_pdf

    def render(run: Run) -> dict[str, bytes]:
        out = {
            REPORT_NAME: report_html(run, plot_uri="plot-temperature.svg" if run.current_result else "").encode("utf-8")
        }
        if pdf:
            out["report.pdf"] = report_pdf(run)
        return out

    return render
