"""Storing one run file of a bulk import: its readings, its group and bench, its content hash.

Each run is analyzed and stored in its own transaction through
:func:`webapp.services.runs.record_run` (all-or-nothing per run; a crash leaves no half-stored
run), with the SHA-256 of its run file and readings written in the same transaction (under a
unique constraint: the same files stored again are reported unchanged). Reading the archive or
folder, the mapping CSV and the report of the whole import are :mod:`webapp.services.imports`.
"""

from __future__ import annotations

import dataclasses
import hashlib
import posixpath
import tomllib
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Bench, Group, Person, Run
from webapp.services.analysis import AnalysisOptions, run_file_text
from webapp.services.errors import Conflict, Invalid, ServiceError, storage_error
from webapp.services.runs import RunUpload, record_run


@dataclasses.dataclass
class ImportItem:
    """The outcome for one file: ``stored``, ``unchanged`` (already stored), ``error`` or ``ignored``."""

    file: str
    outcome: str
    message: str = ""
    run_id: int | None = None
    group: str | None = None


@dataclasses.dataclass(frozen=True)
class Mapping:
    """Where a run file belongs: its group name and, optionally, its bench name."""

    group: str
    bench: str = ""


def content_hash(run_toml: bytes, readings: bytes) -> str:
    """Return the SHA-256 of a run file and its readings (the identity of an imported run)."""
    h = hashlib.sha256()
    for part in (run_toml, readings):
        h.update(len(part).to_bytes(8, "little"))
        h.update(part)
    return h.hexdigest()


def readings_name(toml_text: str, path: str) -> str:
    """Return the name of the readings file a run file names.

    :raise Invalid: for a run file that is not TOML or names no readings
    """
    try:
        data = tomllib.loads(toml_text.lstrip("\ufeff"))
    except (ValueError, RecursionError) as exc:  # TOMLDecodeError, a 5000-digit number, deep nesting
        raise Invalid(f"{path}: not a valid run file: {exc}", field="run_file") from None
    name = data.get("readings")
    if not isinstance(name, str) or not name.strip():
        raise Invalid(f"{path}, field 'readings': missing; expected the name of the readings file", field="readings")
    return name.strip()


def _group_from_name(stem: str, groups: dict[str, Group]) -> Group | None:
    best = None
    low = stem.lower()
    for name, g in groups.items():
        n = name.lower()
        if low == n or (low.startswith(n) and not low[len(n)].isalnum()):
            if best is None or len(name) > len(best.name):
                best = g
    return best


class GroupMaker:
    """Creates the groups an import names that do not exist yet, in the import's section."""

    def __init__(self, section: Any, actor: Person) -> None:
        self.section_id, self.course_id, self.actor = section.id, section.course_id, actor
        self.created: dict[str, Group] = {}

    def make(self, session: so.Session, name: str, path: str, groups: dict[str, Group]) -> Group:
        """Return a new group ``name`` of the section (added to ``groups``), flushed with the run to come."""
        from webapp.services.audit import record_change

        name = name.strip()
        if not name or len(name) > 120:
            raise Invalid(f"{path}, field 'info.group': a group name has 1 to 120 characters", field="group")
        other = session.scalar(sa.select(Group).where(Group.name == name))
        if other is not None:
            raise Invalid(
                f"{path}, field 'info.group': group {name!r} belongs to another section; group names "
                "are unique in the notebook",
                field="group",
            )
        group = Group(name=name, course_id=self.course_id, section_id=self.section_id)
        session.add(group)
        session.flush()
        record_change(session, self.actor, "group", group.id, "created", None, f"{name} (bulk import)")
        groups[name] = self.created[name] = group
        return group

    def forget(self, groups: dict[str, Group]) -> None:
        """Drop the groups made for a run that was not stored (rolled back with it)."""
        for name in self.created:
            groups.pop(name, None)
        self.created.clear()


@dataclasses.dataclass
class SectionImport:
    """One bulk import into a section: what every run file of it is stored with.

    ``files`` maps paths to contents, ``maps`` the mapping CSV's rows by file name; ``groups`` and
    ``benches`` are the section's by name; ``used`` collects the readings the run files name; ``maker``
    creates the groups named but missing (None: refuse them).
    """

    session: so.Session
    actor: Person
    files: dict[str, bytes]
    maps: dict[str, Mapping]
    groups: dict[str, Group]
    benches: dict[str, Bench]
    section_name: str
    options: AnalysisOptions
    used: set[str]
    maker: GroupMaker | None = None


def import_one(job: SectionImport, path: str) -> ImportItem:
    """Store the run file ``path`` of ``job.files`` in its own transaction and say how it went.

    A failure of this run alone (:class:`ServiceError`) is rolled back and reported; a storage
    failure that the next run would meet too (a full disk) stops the import, saying where.
    """
    session, files, groups, maker = job.session, job.files, job.groups, job.maker
    digest = ""
    try:
        text, rpath = _run_text(path, files, job.used)
        readings = files[rpath]
        digest = content_hash(files[path], readings)
        existing = session.scalar(sa.select(Run.id).where(Run.content_hash == digest))
        if existing is not None:
            return ImportItem(path, "unchanged", f"already stored as run #{existing}", existing)
        base = posixpath.basename(path)
        group, bench = _placed(job, path, text, job.maps.get(base))
        upload = RunUpload(
            run_toml=text,
            run_file_name=base,
            readings=readings,
            readings_name=posixpath.basename(rpath),
            calorimeter_id=bench.calorimeter_id if bench is not None else None,
            group_id=group.id,
            options=job.options,
        )
        return _store(session, job.actor, path, upload, digest, group, bench, maker)
    except ServiceError as exc:
        session.rollback()
        if maker is not None:
            maker.forget(groups)
        return _not_stored(session, path, exc, digest)
    except sa.exc.DBAPIError as exc:
        session.rollback()  # nothing of this run is stored
        failure = _stopping(path, exc)
        if failure is None:
            raise
        raise failure from None
    except BaseException:
        session.rollback()  # nothing of this run is stored
        raise


def _store(
    session: so.Session,
    actor: Person,
    path: str,
    upload: RunUpload,
    digest: str,
    group: Group,
    bench: Bench | None,
    maker: GroupMaker | None,
) -> ImportItem:
    """Record the run in its group (and at its bench), with its content hash."""
    run = record_with_hash(session, actor, upload, digest, bench)
    made = maker is not None and maker.created.pop(group.name, None) is not None
    return ImportItem(
        path, "stored", f"run #{run.id}" + (f"; group {group.name!r} created" if made else ""), run.id, group.name
    )


def _stopping(path: str, exc: sa.exc.DBAPIError) -> ServiceError | None:
    """Return the error that stops the import at a storage failure the next run would meet too (else None)."""
    failure = storage_error(exc)
    if failure is None:
        return None
    # the next run would fail the same way: stop, saying where and how to go on
    return type(failure)(
        f"{path}: {failure.message}. The import stopped at this file; the runs before it "
        "are stored, and importing the same files again skips them"
    )


def _not_stored(session: so.Session, path: str, exc: ServiceError, digest: str) -> ImportItem:
    """Report a run that was refused (rolled back already)."""
    if isinstance(exc, Conflict) and digest:
        # the same files stored by an import running at the same time: unchanged, not a conflict
        existing = session.scalar(sa.select(Run.id).where(Run.content_hash == digest))
        if existing is not None:
            return ImportItem(path, "unchanged", f"already stored as run #{existing}", existing)
    return ImportItem(path, "error", exc.message)


def run_file_and_readings(path: str, raw: bytes) -> tuple[str, str, str]:
    """Return a run file's text, the readings' name it gives and their path beside it (not yet checked).

    :raise Invalid: for a run file that is not UTF-8 text or TOML, or names no readings
    """
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise Invalid(
            f"{path}: byte {exc.start + 1} is not UTF-8 text; expected a TOML run file", field="run_file"
        ) from None
    rname = readings_name(text, path)
    return text, rname, readings_path(path, rname)


def readings_path(path: str, rname: str) -> str:
    """Return the path of the readings ``rname`` that the run file at ``path`` names (relative to it)."""
    return posixpath.normpath(posixpath.join(posixpath.dirname(path), rname))


def _run_text(path: str, files: dict[str, bytes], used: set[str]) -> tuple[str, str]:
    """Return a run file's text and the path of the readings it names (marked as used)."""
    text, rname, rpath = run_file_and_readings(path, files[path])
    if rpath in getattr(files, "duplicates", {}):
        raise Invalid(f"{path}, field 'readings': {rname!r} occurs more than once in the archive", field="readings")
    if rpath not in files:
        raise Invalid(f"{path}, field 'readings': {rname!r} is not among the imported files", field="readings")
    used.add(rpath)
    return text, rpath


def _placed(job: SectionImport, path: str, text: str, m: Mapping | None) -> tuple[Group, Bench | None]:
    """Return the group and bench of a run file: those of its row ``m`` of the mapping CSV, else the group
    its ``[info] group`` or its file name gives it (and no bench)."""
    groups, section_name, maker = job.groups, job.section_name, job.maker
    if m is not None:
        name, bench_name = m.group, m.bench
        missing = f"{path}: the mapping names group {name!r}, which is not in section {section_name!r}"
    else:
        name, bench_name = run_file_text(text, "info", "group"), ""
        missing = f"{path}, field 'info.group': group {name!r} is not in section {section_name!r}"
    if name is not None:
        group = groups.get(name) or (maker.make(job.session, name, path, groups) if maker else None)
        if group is None:
            raise Invalid(missing, field="group")
    else:
        group = _group_from_name(posixpath.splitext(posixpath.basename(path))[0], groups)
        if group is None:
            raise Invalid(
                f"{path}: cannot tell its group: neither the mapping, [info] group nor the file "
                f"name names a group of section {section_name!r}",
                field="group",
            )
    bench = job.benches.get(bench_name) if bench_name else None
    if bench_name and bench is None:
        raise Invalid(
            f"{path}: the mapping names bench {bench_name!r}, which is not in section {section_name!r}", field="bench"
        )
    return group, bench


def record_with_hash(session: so.Session, actor: Person, upload: RunUpload, digest: str, bench: Bench | None) -> Run:
    """Record one run with its content hash (and bench) written in the same transaction."""

    def stamp(sess: so.Session, _ctx: Any, _inst: Any) -> None:
        for obj in sess.new:
            if isinstance(obj, Run) and obj.content_hash is None:
                obj.content_hash = digest
                if bench is not None:
                    obj.bench_id = bench.id
                    obj.bench = bench.name

    sa.event.listen(session, "before_flush", stamp)
    try:
        return record_run(session, actor, upload)
    finally:
        sa.event.remove(session, "before_flush", stamp)
