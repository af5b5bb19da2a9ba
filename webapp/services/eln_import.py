"""Import of ``.eln`` archives: what cupcal wrote comes back exactly; other notebooks' runs are recorded.

The archive is checked whole first (:func:`webapp.services.eln_check.read_archive`); a refused
archive stores nothing. Then, folder by folder:

- ``calorimeter.json`` written by cupcal: the calorimeter and its calibrations;
- ``cupcal-export.json`` written by cupcal: the run with every result and its audit fields
  (:mod:`webapp.services.eln_restore`), oldest first, so calibration runs come before the runs
  that use them;
- any other folder holding a run file (``.toml``) and the log it names: a new run, analyzed like
  a bulk import (no Monte Carlo).

Every file of the archive is reported with its outcome (nothing is dropped silently). Each run
and each calorimeter is stored in its own transaction; a run whose files are already stored
(same SHA-256 as :func:`webapp.services.import_store.content_hash`) is reported unchanged.
"""

from __future__ import annotations

import json
import posixpath
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.exports.document import FORMAT
from webapp.exports.rocrate import EXPORT_NAME, METADATA
from webapp.models import Person, Run
from webapp.services.analysis import AnalysisOptions
from webapp.services.audit import record_change
from webapp.services.classes import require_staff
from webapp.services.eln_calibrations import Known, People, restore_calorimeter, when
from webapp.services.eln_check import ELN_LIMITS, ElnArchive, read_archive
from webapp.services.eln_folders import CALORIMETER_FORMAT, CALORIMETER_NAME
from webapp.services.eln_restore import calibration_stamps, restore_run
from webapp.services.errors import Invalid, ServiceError, storage_error
from webapp.services.import_store import ImportItem, content_hash, record_with_hash, run_file_and_readings
from webapp.services.imports import ImportReport, Limits
from webapp.services.runs import RunUpload

DEFAULT_PASSWORD_METHOD = "scrypt"


class _Import:
    """One import under way: the archive, the report and what is known of the notebook."""

    def __init__(self, session: so.Session, actor: Person, archive: ElnArchive, password_method: str) -> None:
        self.session, self.actor, self.archive = session, actor, archive
        self.report = ImportReport()
        self.done: set[str] = {METADATA}
        self.password_method = password_method
        self.accounts: set[str] = set()
        self.stamps: dict[tuple[Any, ...], str] = {}
        self.known = Known()
        self.fresh()

    def fresh(self) -> None:
        """Forget the people and groups looked up (after a rollback they may be gone)."""
        self.people = People(self.session, self.password_method)
        self.groups: dict[str, Any] = {}

    def item(self, path: str, outcome: str, message: str, run_id: int | None = None) -> None:
        """Report one file of the archive."""
        self.done.add(path)
        self.report.items.append(ImportItem(f"{self.archive.root}/{path}", outcome, message, run_id))

    def attempt(self, path: str, action: Any) -> Any:
        """Run ``action`` in its own transaction; report an error for ``path`` when it fails."""
        try:
            done = action()
            self.accounts.update(self.people.created)
            self.people.created.clear()
            return done
        except ServiceError as exc:
            self.session.rollback()
            self.fresh()
            self.item(path, "error", exc.message)
        except sa.exc.DBAPIError as exc:
            self.session.rollback()
            failure = storage_error(exc)
            if failure is None:
                raise
            raise type(failure)(
                f"{path}: {failure.message}. The import stopped at this file; what came before "
                "is stored, and importing the same archive again skips it"
            ) from None
        except BaseException:
            self.session.rollback()
            raise
        return None


def _json(data: bytes) -> Any:
    try:
        return json.loads(data.decode("utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError):
        return None


def _folders(files: dict[str, bytes]) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for path in sorted(files):
        out.setdefault(posixpath.dirname(path), []).append(path)
    return out


def _existing(session: so.Session, digest: str) -> int | None:
    return session.scalar(sa.select(Run.id).where(Run.content_hash == digest))


def _same_run(session: so.Session, doc: dict[str, Any], digest: str) -> int | None:
    """Return the run recorded at the same time from the same files (a run uploaded here has no hash stored)."""
    recorded = (doc.get("provenance") or {}).get("recorded_at")
    try:
        at = when(recorded, "provenance.recorded_at")
    except Invalid:
        return None
    for run in session.scalars(sa.select(Run).where(Run.created_at == at)):
        if content_hash(run.run_toml.encode("utf-8"), bytes(run.readings_raw)) == digest:
            return run.id
    return None


def _calorimeters(job: _Import, folders: dict[str, list[str]]) -> None:
    for folder in folders:
        path = posixpath.join(folder, CALORIMETER_NAME)
        doc = _json(job.archive.files[path]) if path in job.archive.files else None
        if not isinstance(doc, dict) or doc.get("format") != CALORIMETER_FORMAT:
            continue
        job.stamps.update(calibration_stamps(doc))
        message = job.attempt(
            path,
            lambda doc=doc, path=path: restore_calorimeter(job.session, job.actor, doc, job.people, path, job.known),
        )
        if message is not None:
            job.item(path, "stored", message)


def _cupcal_runs(job: _Import, folders: dict[str, list[str]]) -> None:
    found = []
    for folder in folders:
        path = posixpath.join(folder, EXPORT_NAME)
        doc = _json(job.archive.files[path]) if path in job.archive.files else None
        if isinstance(doc, dict) and doc.get("format") == FORMAT:
            prov = doc.get("provenance") if isinstance(doc.get("provenance"), dict) else {}
            source_id = (doc.get("run") or {}).get("id") if isinstance(doc.get("run"), dict) else None
            found.append(
                (str(prov.get("recorded_at") or ""), source_id if isinstance(source_id, int) else 0, folder, doc)
            )
    for _at, source_id, folder, doc in sorted(found, key=lambda f: (f[0], f[1])):
        _one_cupcal_run(job, folder, folders[folder], doc, source_id)


def _one_cupcal_run(job: _Import, folder: str, paths: list[str], doc: dict[str, Any], source_id: int) -> None:
    files = job.archive.files
    path = posixpath.join(folder, EXPORT_NAME)
    blobs = {p.rsplit("/", 1)[-1]: files[p] for p in paths}
    names = [((doc.get("files") or {}).get(w) or {}).get("path") for w in ("run_file", "readings")]
    if not all(isinstance(n, str) and n in blobs for n in names):
        job.item(path, "error", "the run file or the log it names is not in this folder")
        for p in paths:
            if p not in job.done:
                job.item(p, "ignored", f"part of {folder}/, which was not imported (see the error of {path})")
        return

    def store() -> tuple[int, str]:
        digest = content_hash(blobs[names[0]], blobs[names[1]])
        existing = _existing(job.session, digest) or _same_run(job.session, doc, digest)
        if existing is not None:
            return existing, "unchanged"
        run = restore_run(
            job.session,
            job.actor,
            doc,
            blobs,
            job.people,
            job.groups,
            path,
            job.stamps,
            job.known,
            f"from {job.archive.source} (run {source_id} of the notebook that wrote it)",
        )
        job.session.commit()
        return run.id, "stored"

    done = job.attempt(path, store)
    if done is None:
        for p in paths:
            if p not in job.done:
                job.item(p, "ignored", f"part of {folder}/, which was not imported (see the error of {path})")
        return
    run_id, outcome = done
    job.item(
        posixpath.join(folder, names[0]),
        outcome,
        f"run #{run_id}" + (" (already stored)" if outcome == "unchanged" else " with every result"),
        run_id,
    )
    job.item(posixpath.join(folder, names[1]), "used", f"the log of run #{run_id}", run_id)
    job.item(path, "used", f"results, inputs and audit fields of run #{run_id}", run_id)
    for p in paths:
        if p not in job.done:
            job.item(p, "ignored", f"made from run #{run_id}; this notebook makes it again", run_id)


def _foreign_runs(job: _Import, folders: dict[str, list[str]]) -> None:
    files = job.archive.files
    for paths in folders.values():
        for path in paths:
            if not path.lower().endswith(".toml") or path in job.done:
                continue
            outcome = job.attempt(path, lambda path=path: _one_foreign_run(job, path))
            if outcome is not None:
                job.item(*outcome)
    for path in sorted(files):
        if path not in job.done:
            job.item(path, "ignored", "not a run file, nor the log a run file names; kept in the archive only")


def _one_foreign_run(job: _Import, path: str) -> tuple[str, str, str, int]:
    files = job.archive.files
    raw = files[path]
    text, rname, rpath = run_file_and_readings(path, raw)
    if rpath not in files or rpath.startswith("../"):
        raise Invalid(f"{path}, field 'readings': {rname!r} is not in the archive's folder", field="readings")
    job.done.add(rpath)
    digest = content_hash(raw, files[rpath])
    existing = _existing(job.session, digest)
    if existing is not None:
        return path, "unchanged", f"already stored as run #{existing}", existing
    run = record_with_hash(
        job.session,
        job.actor,
        RunUpload(
            run_toml=text,
            run_file_name=posixpath.basename(path),
            readings=files[rpath],
            readings_name=posixpath.basename(rpath),
            options=AnalysisOptions(monte_carlo_trials=0),
        ),
        digest,
        None,
    )
    record_change(job.session, job.actor, "run", run.id, "imported", None, f"from {job.archive.source}")
    job.session.commit()
    job.item(rpath, "used", f"the log of run #{run.id}", run.id)
    return path, "stored", f"run #{run.id}", run.id


def import_eln(
    session: so.Session,
    actor: Person,
    data: bytes,
    *,
    source: str = "archive.eln",
    limits: Limits = ELN_LIMITS,
    password_method: str = DEFAULT_PASSWORD_METHOD,
) -> ImportReport:
    """Import an ``.eln`` archive and report every file of it.

    :raise Forbidden: unless ``actor`` is a coordinator or a technician
    :raise Invalid: when the archive is refused (then nothing is stored)
    """
    require_staff(actor, "import archives")
    archive = read_archive(data, source, limits)
    job = _Import(session, actor, archive, password_method)
    folders = _folders(archive.files)
    expire, session.expire_on_commit = session.expire_on_commit, False  # people and groups stay loaded
    try:
        _calorimeters(job, folders)
        _cupcal_runs(job, folders)
        _foreign_runs(job, folders)
    finally:
        session.expire_on_commit = expire
    if job.accounts:
        job.report.items.append(
            ImportItem(
                archive.root,
                "stored",
                "inactive accounts (they cannot sign in) for: " + ", ".join(sorted(job.accounts)),
            )
        )
    return job.report
