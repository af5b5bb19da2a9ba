"""Bulk import of a section's runs: a zip or a folder of run files (.toml) and logs (.csv).

Each run is validated, analyzed and stored in its own transaction through
:func:`webapp.services.runs.record_run` (all-or-nothing per run; a crash leaves no half-stored
run; storing one run is :mod:`webapp.services.import_store`). The run file and the readings are hashed (SHA-256) and the hash is stored on the run
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
import io
import posixpath
import zipfile
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc import limits as calc_limits
from webapp.models import Bench, Group, Person
from webapp.services.analysis import AnalysisOptions
from webapp.services.classes import get_section, require_staff
from webapp.services.errors import Invalid
from webapp.services.import_store import (
    GroupMaker,
    ImportItem,
    Mapping,
    SectionImport,
    import_one,
    readings_name,
    readings_path,
)

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
class ImportReport:
    """Every file of an import with its outcome, in file order."""

    items: list[ImportItem] = dataclasses.field(default_factory=list)

    def count(self, outcome: str) -> int:
        """Return how many files had ``outcome``."""
        return sum(1 for i in self.items if i.outcome == outcome)

    @property
    def summary(self) -> str:
        """Return a one-line summary."""
        return (
            f"{self.count('stored')} stored, {self.count('unchanged')} unchanged (already stored), "
            f"{self.count('error')} with errors, {self.count('ignored')} ignored"
        )

    def as_dict(self) -> dict[str, Any]:
        """Return the report as JSON-ready data."""
        return {
            "summary": self.summary,
            "counts": {k: self.count(k) for k in ("stored", "unchanged", "error", "ignored")},
            "items": [dataclasses.asdict(i) for i in self.items],
        }


# ----------------------------------------------------------------- collecting files


def _safe_name(name: str, where: str) -> str:
    """Return a normalised relative path, or raise for an absolute or escaping one."""
    raw = name.replace("\\", "/")
    if raw.startswith("/") or (len(raw) > 1 and raw[1] == ":"):
        raise Invalid(
            f"{where}: refused: {name!r} is an absolute path; the archive must hold relative paths only",
            field="archive",
        )
    parts = [p for p in raw.split("/") if p not in ("", ".")]
    if any(p == ".." for p in parts):
        raise Invalid(
            f"{where}: refused: {name!r} leads out of the archive ('..'); nothing was imported", field="archive"
        )
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
            raise Invalid(
                f"{source}: refused: {len(infos)} files, at most {limits.max_files} per import", field="archive"
            )
        total = 0
        for info in infos:
            _safe_name(info.filename, source)
            total += info.file_size
            if info.file_size > limits.max_file_bytes or total > limits.max_total_bytes:
                raise Invalid(
                    f"{source}: refused: the archive unpacks to more than "
                    f"{(limits.max_file_bytes if info.file_size > limits.max_file_bytes else limits.max_total_bytes) // 2**20} MiB "
                    f"({info.filename!r}); is it a zip bomb?",
                    field="archive",
                )
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
    report.items.extend(_refused_duplicates(duplicates))
    used: set[str] = set(duplicates)
    runs = sorted(p for p in files if p.lower().endswith(".toml") and p not in duplicates)
    check_totals(files, runs)
    options = AnalysisOptions(monte_carlo_trials=0)
    maker = GroupMaker(section, actor) if create_groups else None
    job = SectionImport(session, actor, files, maps, groups, benches, section_name, options, used, maker)
    for path in runs:
        item = import_one(job, path)
        report.items.append(item)
        if progress is not None:
            progress(path)
    for path in sorted(files):
        if path not in used and not path.lower().endswith(".toml"):
            report.items.append(ImportItem(path, "ignored", "not named as readings by any run file"))
    return report


def _refused_duplicates(duplicates: dict[str, int]) -> list[ImportItem]:
    """Return an error for each name the archive holds more than once (which copy is meant is unknown)."""
    return [
        ImportItem(
            name,
            "error",
            f"{name}: refused: the archive holds {count} entries of this "
            "name, so which one is meant is unknown; rename them",
        )
        for name, count in sorted(duplicates.items())
    ]


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
            total += len(files.get(readings_path(path, rname), b""))
    calc_limits.require_size(
        total,
        "import_total_bytes",
        field="archive",
        what=f"the import's run files and readings ({total} bytes, a shared readings file "
        "counted once per run file that uses it)",
    )


def _readings_name_or_none(raw: bytes) -> str | None:
    try:
        return readings_name(raw.decode("utf-8-sig"), "")
    except (Invalid, UnicodeDecodeError):
        return None


def runs_in(files: Iterable[str]) -> int:
    """Return how many run files (``.toml``) are among ``files``."""
    return sum(1 for f in files if f.lower().endswith(".toml"))
