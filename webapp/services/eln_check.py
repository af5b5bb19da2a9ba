"""Reading and checking ``.eln`` archives: one root folder, safe paths, the metadata, every ``sha256``.

:func:`read_archive` refuses (raises :class:`Invalid` with a message of its own) an archive
that is not a zip, is over the bulk import's limits (:data:`ELN_LIMITS`: its byte limits, and four
times its number of files, as a run's folder holds more than a run file and a log),
has several entries of one name, several root folders or a file beside the root folder, a path
that leaves the root folder, no ``ro-crate-metadata.json``, metadata that is not JSON or not
valid JSON-LD (checked by expanding it with pyld; the RO-Crate context is replaced by a local
stand-in, so nothing is fetched), no root dataset, a ``hasPart`` entry that is not in the
archive, or a file whose ``sha256`` (or ``contentSize``) does not match its bytes.
"""

from __future__ import annotations

import dataclasses
import hashlib
import io
import json
import zipfile
from typing import Any
from urllib.parse import unquote

from webapp.exports.rocrate import METADATA
from webapp.services.errors import Invalid
from webapp.services.imports import MAX_FILES, Limits, files_from_zip

#: the bulk import's limits, with room for the files an experiment folder holds beside its run file and log
#: (a bulk import counts two files a run; a cupcal run folder holds up to eight)
ELN_LIMITS = Limits(max_files=4 * MAX_FILES)
#: what a remote context stands for while checking the JSON-LD (never fetched)
_STAND_IN = {"@context": {"@vocab": "http://schema.org/"}}


@dataclasses.dataclass
class ElnArchive:
    """A checked archive: its root folder, files by path below the root, and its entities by id."""

    root: str
    files: dict[str, bytes]
    entities: dict[str, dict[str, Any]]
    source: str

    @property
    def root_dataset(self) -> dict[str, Any]:
        """Return the root ``Dataset`` entity."""
        return self.entities["./"]

    def parts_of(self, entity: dict[str, Any]) -> list[str]:
        """Return the ids of the ``hasPart`` entries of ``entity``."""
        return [ref_id(p) for p in as_list(entity.get("hasPart"))]


def as_list(value: Any) -> list[Any]:
    """Return ``value`` as a list (JSON-LD allows one value or an array)."""
    if value is None:
        return []
    return value if isinstance(value, list) else [value]


def ref_id(value: Any) -> str:
    """Return the ``@id`` of a reference (or the text itself)."""
    if isinstance(value, dict):
        value = value.get("@id")
    return value if isinstance(value, str) else ""


def has_type(entity: dict[str, Any], name: str) -> bool:
    """Return whether the entity's ``@type`` is or includes ``name``."""
    return name in as_list(entity.get("@type"))


def _refuse(source: str, message: str) -> Invalid:
    return Invalid(f"{source}: refused: {message}; nothing was imported", field="archive")


def _zip_names(data: bytes, source: str) -> list[str]:
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as zf:
            return [i.filename for i in zf.infolist() if not i.is_dir()]
    except (zipfile.BadZipFile, ValueError):
        raise _refuse(source, "not a zip archive (an .eln archive is a zip)") from None


def _root_of(names: list[str], files: dict[str, bytes], source: str) -> str:
    seen: set[str] = set()
    for n in names:
        if n in seen:
            raise _refuse(source, f"the entry {n!r} is in the archive twice")
        seen.add(n)
    if len(files) != len(names):
        raise _refuse(source, "two entries name the same file (written differently, like 'a/x' and 'a/./x')")
    tops = {p.split("/", 1)[0] for p in files}
    loose = sorted(p for p in files if "/" not in p)
    if loose:
        raise _refuse(
            source,
            f"{loose[0]!r} sits beside the root folder; an .eln archive holds exactly one "
            "folder at its root and nothing else",
        )
    if len(tops) != 1:
        raise _refuse(
            source,
            f"{len(tops)} folders at the root ({', '.join(sorted(tops)[:5])}); an .eln archive holds exactly one",
        )
    return tops.pop()


def _check_json_ld(meta: Any, source: str) -> None:
    from pyld import jsonld

    def loader(url: str, options: Any = None) -> dict[str, Any]:
        return {"contextUrl": None, "documentUrl": url, "document": _STAND_IN}

    if not isinstance(meta, dict) or "@context" not in meta or not isinstance(meta.get("@graph"), list):
        raise _refuse(source, f"{METADATA} is not RO-Crate JSON-LD: expected an object with @context and @graph")
    try:
        jsonld.expand(meta, {"documentLoader": loader, "base": "arcp://uuid,00000000-0000-0000-0000-000000000000/"})
    except jsonld.JsonLdError as exc:
        raise _refuse(source, f"{METADATA} is not valid JSON-LD: {str(exc.args[0] if exc.args else exc)}") from None
    except (RecursionError, TypeError, ValueError, KeyError, AttributeError) as exc:
        raise _refuse(source, f"{METADATA} is not valid JSON-LD: {exc}") from None


def _entities(meta: dict[str, Any], source: str) -> dict[str, dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for e in meta["@graph"]:
        if not isinstance(e, dict) or not isinstance(e.get("@id"), str):
            raise _refuse(source, f"{METADATA}: every entity of @graph needs a text @id")
        if e["@id"] in out:
            raise _refuse(source, f"{METADATA}: the @id {e['@id']!r} is given twice")
        out[e["@id"]] = e
    desc = out.get(METADATA) or out.get("./" + METADATA)
    if desc is None or ref_id(desc.get("about")) != "./":
        raise _refuse(source, f"{METADATA}: no metadata descriptor about the root dataset './'")
    root = out.get("./")
    if root is None or not has_type(root, "Dataset"):
        raise _refuse(source, f"{METADATA}: no root Dataset './'")
    return out


def local_path(entity_id: str) -> str | None:
    """Return the archive path of a data entity's id (percent-decoded), or None for a web or local id."""
    if entity_id.startswith("#") or "://" in entity_id or entity_id.startswith(("mailto:", "urn:", "arcp:")):
        return None
    path = unquote(entity_id)
    return path[2:] if path.startswith("./") else path


def _check_path(path: str, source: str) -> None:
    parts = path.rstrip("/").split("/")
    if path.startswith("/") or ".." in parts or (len(path) > 1 and path[1] == ":"):
        raise _refuse(source, f"the metadata names {path!r}, a path that leaves the root folder")


def _check_parts(entities: dict[str, dict[str, Any]], files: dict[str, bytes], source: str) -> None:
    folders = set()
    for p in files:
        parts = p.split("/")[:-1]
        folders.update("/".join(parts[:i]) + "/" for i in range(1, len(parts) + 1))
    todo, seen = [entities["./"]], set()
    while todo:
        entity = todo.pop()
        for ref in as_list(entity.get("hasPart")):
            pid = ref_id(ref)
            path = local_path(pid)
            if path is None or pid in seen:
                continue
            seen.add(pid)
            _check_path(path, source)
            if path.endswith("/"):
                if path not in folders:
                    raise _refuse(source, f"hasPart lists the folder {pid!r}, which is not in the archive")
            elif path not in files:
                raise _refuse(source, f"hasPart lists the file {pid!r}, which is not in the archive")
            if pid in entities:
                todo.append(entities[pid])


def _check_files(entities: dict[str, dict[str, Any]], files: dict[str, bytes], source: str) -> None:
    for pid, e in entities.items():
        path = local_path(pid)
        if path is None or path == "./" or path.endswith("/"):
            continue
        _check_path(path, source)
        if not has_type(e, "File"):
            continue
        if path not in files:
            raise _refuse(source, f"the metadata describes the file {pid!r}, which is not in the archive")
        digest = e.get("sha256")
        if digest is not None and (
            not isinstance(digest, str) or hashlib.sha256(files[path]).hexdigest() != digest.lower()
        ):
            raise _refuse(
                source, f"the sha256 of {pid!r} does not match its bytes: the archive is damaged or was changed"
            )
        size = e.get("contentSize")
        if size is not None and str(size).isdigit() and int(size) != len(files[path]):
            raise _refuse(source, f"the contentSize of {pid!r} ({size}) is not its size ({len(files[path])} bytes)")


def read_archive(data: bytes, source: str = "archive.eln", limits: Limits = ELN_LIMITS) -> ElnArchive:
    """Return the checked archive, or raise :class:`Invalid` saying why it is refused."""
    names = _zip_names(data, source)
    try:
        files = files_from_zip(data, limits, source=source)
    except Invalid as exc:
        tail = "" if "nothing was imported" in exc.message else "; nothing was imported"
        raise Invalid(exc.message + tail, field="archive") from None
    root = _root_of(names, files, source)
    inner = {p[len(root) + 1 :]: b for p, b in files.items()}
    if METADATA not in inner:
        raise _refuse(source, f"no {root}/{METADATA}")
    try:
        meta = json.loads(inner[METADATA].decode("utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise _refuse(source, f"{METADATA} is not JSON: {exc}") from None
    except RecursionError:
        raise _refuse(source, f"{METADATA} is nested too deeply to read") from None
    _check_json_ld(meta, source)
    entities = _entities(meta, source)
    _check_parts(entities, inner, source)
    _check_files(entities, inner, source)
    return ElnArchive(root, inner, entities, source)
