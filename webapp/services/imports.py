"""Bulk import of a section's runs: a zip or a folder of run files (.toml) and logs (.csv).

Each run is validated, analyzed and stored in its own transaction through
:func:`webapp.services.runs.record_run` (all-or-nothing per run; a crash leaves no half-stored
run). The run file and the readings are hashed (SHA-256) and the hash is stored on the run
under a unique constraint, so importing the same files again changes nothing. Bulk import
analyses without Monte Carlo (``monte_carlo_trials=0``): the GUM result and budget are those of
a single upload, and a Monte Carlo check can be made later by re-analyzing a run.

Which group a run belongs to: the mapping CSV (columns ``file, group`` and optionally
``bench``), else ``[info] group`` of the run file, else the start of the file name
(``G07-run2.toml`` → group ``G07``). The group must belong to the section, unless the import is
asked to create missing groups (``create_groups``): then a group named by ``[info] group`` (or the
mapping) that does not exist yet is created in the section, in the same transaction as its first
run; a name taken by a group of another section is still refused (group names are unique).
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import posixpath
import tomllib
import zipfile
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc import limits as calc_limits
from webapp.models import Bench, Group, Person, Run
from webapp.services.analysis import AnalysisOptions
from webapp.services.classes import get_section, require_staff
from webapp.services.errors import Conflict, Invalid, ServiceError, storage_error
from webapp.services.runs import RunUpload, record_run

#: limits of one import (a zip bomb or a runaway folder is refused before anything is read)
MAX_FILES = 5000
MAX_TOTAL_BYTES = 512 * 1024 * 1024
MAX_FILE_BYTES = 16 * 1024 * 1024


class Files(dict[str, bytes]):
    """The files of an import by relative path, and the names that occurred more than once
    (``duplicates``: name → count); a duplicated name is refused, since which copy is meant is unknown."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.duplicates: dict[str, int] = {}

    def add(self, name: str, content: bytes) -> None:
        """Add a file; a name seen before is recorded as a duplicate (its first content kept aside)."""
        if name in self:
            self.duplicates[name] = self.duplicates.get(name, 1) + 1
        self[name] = content


@dataclasses.dataclass(frozen=True)
class Limits:
    """How many files and how many bytes (uncompressed) one import may hold."""

    max_files: int = MAX_FILES
    max_total_bytes: int = MAX_TOTAL_BYTES
    max_file_bytes: int = MAX_FILE_BYTES


@dataclasses.dataclass
class ImportItem:
    """The outcome for one file: ``stored``, ``unchanged`` (already stored), ``error`` or ``ignored``."""

    file: str
    outcome: str
    message: str = ""
    run_id: int | None = None
    group: str | None = None


@dataclasses.dataclass
class ImportReport:
    """Every file of an import with its outcome, in file order."""

    items: list[ImportItem] = dataclasses.field(default_factory=list)

    def count(self, outcome: str) -> int:
        """Return how many files had ``outcome``."""
        return sum(1 for i in self.items if i.outcome == outcome)

    @property
    def summary(self) -> str:
        """Return a one-line summary."""
        return (f"{self.count('stored')} stored, {self.count('unchanged')} unchanged (already stored), "
                f"{self.count('error')} with errors, {self.count('ignored')} ignored")

    def as_dict(self) -> dict[str, Any]:
        """Return the report as JSON-ready data."""
        return {"summary": self.summary,
                "counts": {k: self.count(k) for k in ("stored", "unchanged", "error", "ignored")},
                "items": [dataclasses.asdict(i) for i in self.items]}


# ----------------------------------------------------------------- collecting files


def _safe_name(name: str, where: str) -> str:
    """Return a normalised relative path, or raise for an absolute or escaping one."""
    raw = name.replace("\\", "/")
    if raw.startswith("/") or (len(raw) > 1 and raw[1] == ":"):
        raise Invalid(f"{where}: refused: {name!r} is an absolute path; the archive must hold relative paths only",
                      field="archive")
    parts = [p for p in raw.split("/") if p not in ("", ".")]
    if any(p == ".." for p in parts):
        raise Invalid(f"{where}: refused: {name!r} leads out of the archive ('..'); nothing was imported",
                      field="archive")
    return "/".join(parts)


def files_from_zip(data: bytes, limits: Limits = Limits(), *, source: str = "archive") -> Files:
    """Return the files of a zip archive by relative path, refusing unsafe archives.

    :raise Invalid: for a file that is not a zip, a path that is absolute or leads out of the
        archive, more than ``max_files`` files, or more uncompressed bytes than allowed (zip bomb)
    """
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, ValueError):
        raise Invalid(f"{source}: not a zip archive", field="archive") from None
    with zf:
        infos = [i for i in zf.infolist() if not i.is_dir()]
        if len(infos) > limits.max_files:
            raise Invalid(f"{source}: refused: {len(infos)} files, at most {limits.max_files} per import",
                          field="archive")
        total = 0
        for info in infos:
            _safe_name(info.filename, source)
            total += info.file_size
            if info.file_size > limits.max_file_bytes or total > limits.max_total_bytes:
                raise Invalid(
                    f"{source}: refused: the archive unpacks to more than "
                    f"{(limits.max_file_bytes if info.file_size > limits.max_file_bytes else limits.max_total_bytes) // 2**20} MiB "
                    f"({info.filename!r}); is it a zip bomb?", field="archive")
        out = Files()
        read = 0
        for info in infos:
            name = _safe_name(info.filename, source)
            try:
                with zf.open(info) as fh:
                    content = fh.read(limits.max_file_bytes + 1)
            except (zipfile.BadZipFile, RuntimeError, NotImplementedError, OSError, EOFError) as exc:
                raise Invalid(f"{source}: {info.filename!r} cannot be read ({exc})", field="archive") from None
            read += len(content)
            if len(content) > limits.max_file_bytes or read > limits.max_total_bytes:  # pragma: no cover - sizes lie
                raise Invalid(f"{source}: refused: the archive unpacks to more than its stated size", field="archive")
            out.add(name, content)
    return out


def files_from_folder(folder: Path, limits: Limits = Limits()) -> dict[str, bytes]:
    """Return the files under ``folder`` by relative path (symbolic links are not followed out)."""
    folder = Path(folder)
    if not folder.is_dir():
        raise Invalid(f"{folder}: not a folder", field="path")
    root = folder.resolve()
    out: dict[str, bytes] = {}
    total = 0
    for path in sorted(folder.rglob("*")):
        if not path.is_file():
            continue
        if not path.resolve().is_relative_to(root):
            raise Invalid(f"{path}: refused: a link that leads out of {folder}", field="path")
        if len(out) >= limits.max_files:
            raise Invalid(f"{folder}: refused: more than {limits.max_files} files per import", field="path")
        size = path.stat().st_size
        total += size
        if size > limits.max_file_bytes or total > limits.max_total_bytes:
            raise Invalid(f"{folder}: refused: more than {limits.max_total_bytes // 2**20} MiB of files", field="path")
        out[path.relative_to(folder).as_posix()] = path.read_bytes()
    return out


# ----------------------------------------------------------------- mapping


@dataclasses.dataclass(frozen=True)
class Mapping:
    """Where a run file belongs: its group name and, optionally, its bench name."""

    group: str
    bench: str = ""


def parse_mapping(text: str, source: str = "mapping.csv") -> dict[str, Mapping]:
    """Return the mapping CSV as {file name: Mapping}; columns ``file, group`` and optional ``bench``.

    :raise Invalid: naming the line of the first problem
    """
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    if "file" not in header or "group" not in header:
        raise Invalid(f"{source}, line 1: expected the columns file, group (and optionally bench)", field="mapping")
    reader.fieldnames = header
    out: dict[str, Mapping] = {}
    for raw in reader:
        line = reader.line_num
        name = (raw.get("file") or "").strip().replace("\\", "/")
        group = (raw.get("group") or "").strip()
        if not name and not group:
            continue
        if not name or not group:
            raise Invalid(f"{source}, line {line}: give both a file and a group", field="mapping")
        key = posixpath.basename(name)
        if key in out:
            raise Invalid(f"{source}, line {line}: {key!r} is mapped twice", field="mapping")
        out[key] = Mapping(group, (raw.get("bench") or "").strip())
    return out


# ----------------------------------------------------------------- import


def content_hash(run_toml: bytes, readings: bytes) -> str:
    """Return the SHA-256 of a run file and its readings (the identity of an imported run)."""
    h = hashlib.sha256()
    for part in (run_toml, readings):
        h.update(len(part).to_bytes(8, "little"))
        h.update(part)
    return h.hexdigest()


def _readings_name(toml_text: str, path: str) -> str:
    try:
        data = tomllib.loads(toml_text.lstrip("\ufeff"))
    except (ValueError, RecursionError) as exc:  # TOMLDecodeError, a 5000-digit number, deep nesting
        raise Invalid(f"{path}: not a valid run file: {exc}", field="run_file") from None
    name = data.get("readings")
    if not isinstance(name, str) or not name.strip():
        raise Invalid(f"{path}, field 'readings': missing; expected the name of the readings file", field="readings")
    return name.strip()


def _info_group(toml_text: str) -> str | None:
    try:
        info = tomllib.loads(toml_text.lstrip("\ufeff")).get("info")
    except (ValueError, RecursionError):  # TOMLDecodeError, a 5000-digit number, deep nesting
        return None
    g = info.get("group") if isinstance(info, dict) else None
    return g.strip() if isinstance(g, str) and g.strip() else None


def _group_from_name(stem: str, groups: dict[str, Group]) -> Group | None:
    best = None
    low = stem.lower()
    for name, g in groups.items():
        n = name.lower()
        if low == n or (low.startswith(n) and not low[len(n)].isalnum()):
            if best is None or len(name) > len(best.name):
                best = g
    return best


def import_files(
    session: so.Session,
    actor: Person,
    section_id: int,
    files: dict[str, bytes],
    *,
    mapping: str | None = None,
    progress: Callable[[str], None] | None = None,
    create_groups: bool = False,
) -> ImportReport:
    """Import every run file among ``files`` into a section and report each file.

    Parameters
    ----------
    files:
        Relative path → content; the ``.toml`` files are runs, each naming its readings
        (relative to the run file); other files not named by a run are reported as ignored.
    mapping:
        Text of the mapping CSV (``file, group[, bench]``), when file names and run files do not
        say the group.
    progress:
        Called with each run file's path after it is handled (for progress bars).
    create_groups:
        Create a group that the mapping or ``[info] group`` names and that does not exist yet
        (in this section).

    Raises
    ------
    Forbidden
        Unless ``actor`` is a coordinator or a technician.
    Invalid
        For a bad mapping (before anything is stored).
    """
    require_staff(actor, "import runs")
    section = get_section(session, actor, section_id)
    maps = parse_mapping(mapping) if mapping else {}
    groups = {g.name: g for g in session.scalars(sa.select(Group).where(Group.section_id == section.id))}
    benches = {b.name: b for b in session.scalars(sa.select(Bench).where(Bench.section_id == section.id))}
    section_name = section.name
    report = ImportReport()
    duplicates = getattr(files, "duplicates", {})
    for name, count in sorted(duplicates.items()):
        report.items.append(ImportItem(name, "error", f"{name}: refused: the archive holds {count} entries of this "
                                       "name, so which one is meant is unknown; rename them"))
    used: set[str] = set(duplicates)
    runs = sorted(p for p in files if p.lower().endswith(".toml") and p not in duplicates)
    check_totals(files, runs)
    options = AnalysisOptions(monte_carlo_trials=0)
    maker = _GroupMaker(section, actor) if create_groups else None
    for path in runs:
        item = _import_one(session, actor, path, files, maps, groups, benches, section_name, options, used, maker)
        report.items.append(item)
        if progress is not None:
            progress(path)
    for path in sorted(files):
        if path not in used and not path.lower().endswith(".toml"):
            report.items.append(ImportItem(path, "ignored", "not named as readings by any run file"))
    return report


class _GroupMaker:
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
            raise Invalid(f"{path}, field 'info.group': group {name!r} belongs to another section; group names "
                          "are unique in the notebook", field="group")
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
def check_totals(files: dict[str, bytes], runs: list[str]) -> None:
    """Refuse an import whose run files and readings pass the limits import_files or import_total_bytes.

    A readings file named by several run files is counted once per run file that uses it (each
    run stores its own copy: a small zip of many run files sharing one large log would otherwise
    grow the database far beyond the zip's size).
    """
    calc_limits.require_size(len(runs), "import_files", what=f"the import's {len(runs)} run files", field="archive")
    total = 0
    for path in runs:
        total += len(files[path])
        rname = _readings_name_or_none(files[path])
        if rname is not None:
            total += len(files.get(posixpath.normpath(posixpath.join(posixpath.dirname(path), rname)), b""))
    calc_limits.require_size(total, "import_total_bytes", field="archive",
                             what=f"the import's run files and readings ({total} bytes, a shared readings file "
                                  "counted once per run file that uses it)")


def _readings_name_or_none(raw: bytes) -> str | None:
    try:
        return _readings_name(raw.decode("utf-8-sig"), "")
    except (Invalid, UnicodeDecodeError):
        return None


def _import_one(
    session: so.Session, actor: Person, path: str, files: dict[str, bytes], maps: dict[str, Mapping],
    groups: dict[str, Group], benches: dict[str, Bench], section_name: str, options: AnalysisOptions,
    used: set[str], maker: _GroupMaker | None = None,
) -> ImportItem:
    raw = files[path]
    digest = ""
    try:
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise Invalid(f"{path}: byte {exc.start + 1} is not UTF-8 text; expected a TOML run file",
                          field="run_file") from None
        rname = _readings_name(text, path)
        rpath = posixpath.normpath(posixpath.join(posixpath.dirname(path), rname))
        if rpath in getattr(files, "duplicates", {}):
            raise Invalid(f"{path}, field 'readings': {rname!r} occurs more than once in the archive", field="readings")
        if rpath not in files:
            raise Invalid(f"{path}, field 'readings': {rname!r} is not among the imported files", field="readings")
        used.add(rpath)
        readings = files[rpath]
        digest = content_hash(raw, readings)
        existing = session.scalar(sa.select(Run.id).where(Run.content_hash == digest))
        if existing is not None:
            return ImportItem(path, "unchanged", f"already stored as run #{existing}", existing)
        base = posixpath.basename(path)
        m = maps.get(base)
        group = bench = None
        if m is not None:
            group = groups.get(m.group) or (maker.make(session, m.group, path, groups) if maker else None)
            if group is None:
                raise Invalid(f"{path}: the mapping names group {m.group!r}, which is not in section "
                              f"{section_name!r}", field="group")
            if m.bench:
                bench = benches.get(m.bench)
                if bench is None:
                    raise Invalid(f"{path}: the mapping names bench {m.bench!r}, which is not in section "
                                  f"{section_name!r}", field="bench")
        else:
            named = _info_group(text)
            if named is not None:
                group = groups.get(named) or (maker.make(session, named, path, groups) if maker else None)
                if group is None:
                    raise Invalid(f"{path}, field 'info.group': group {named!r} is not in section {section_name!r}",
                                  field="group")
            else:
                group = _group_from_name(posixpath.splitext(base)[0], groups)
            if group is None:
                raise Invalid(f"{path}: cannot tell its group: neither the mapping, [info] group nor the file "
                              f"name names a group of section {section_name!r}", field="group")
        upload = RunUpload(run_toml=text, run_file_name=base, readings=readings,
                           readings_name=posixpath.basename(rpath),
                           calorimeter_id=bench.calorimeter_id if bench is not None else None,
                           group_id=group.id, options=options)
        run = _record(session, actor, upload, digest, bench)
        made = maker is not None and maker.created.pop(group.name, None) is not None
        return ImportItem(path, "stored", f"run #{run.id}" + (f"; group {group.name!r} created" if made else ""),
                          run.id, group.name)
    except ServiceError as exc:
        session.rollback()
        if maker is not None:
            maker.forget(groups)
        if isinstance(exc, Conflict) and digest:
            # the same files stored by an import running at the same time: unchanged, not a conflict
            existing = session.scalar(sa.select(Run.id).where(Run.content_hash == digest))
            if existing is not None:
                return ImportItem(path, "unchanged", f"already stored as run #{existing}", existing)
        return ImportItem(path, "error", exc.message)
    except sa.exc.DBAPIError as exc:
        session.rollback()  # nothing of this run is stored
        failure = storage_error(exc)
        if failure is None:
            raise
        # the next run would fail the same way: stop, saying where and how to go on
        raise type(failure)(f"{path}: {failure.message}. The import stopped at this file; the runs before it "
                            "are stored, and importing the same files again skips them") from None
    except BaseException:
        session.rollback()  # nothing of this run is stored
        raise


def _record(session: so.Session, actor: Person, upload: RunUpload, digest: str, bench: Bench | None) -> Run:
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


def runs_in(files: Iterable[str]) -> int:
    """Return how many run files (``.toml``) are among ``files``."""
    return sum(1 for f in files if f.lower().endswith(".toml"))
