"""Import of our own run packages: the JSON export and the RO-Crate zip reproduce the run exactly.

The run file and the readings are stored byte for byte as exported (their SHA-256 is
checked), and the run is analyzed with the exported method and, when they were given, the
exported periods, with the exported Monte Carlo trials and seed. When the run file leaves the calorimeter's heat capacity to a calibration,
the calorimeter of the same name here must have that calibration in force (same value and
uncertainty), else the numbers would differ and the import is refused.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import io
import json
import math
import zipfile
from typing import Any

import sqlalchemy.orm as so

from calc.errors import InputError
from calc.limits import require_number
from webapp.exports.document import FORMAT
from webapp.exports.rocrate import EXPORT_NAME, METADATA, PROFILE
from webapp.models import Person, Run
from webapp.services.analysis import AnalysisOptions, needs_supplied_heat_capacity
from webapp.services.calorimeters import current_calibration, find_calorimeter
from webapp.services.errors import Invalid
from webapp.services.jsontext import load_json
from webapp.services.runs import RunUpload, record_run

MAX_PACKAGE_BYTES = 16 * 1024 * 1024


def _file(doc: dict[str, Any], which: str, blobs: dict[str, bytes] | None) -> tuple[str, bytes]:
    entry = _object(doc, "files", "files").get(which)
    where = f"files.{which}"
    if not isinstance(entry, dict) or not isinstance(entry.get("name"), str):
        raise Invalid("missing: expected an object with 'name' and 'text' or 'base64'", field=where)
    if blobs is not None and isinstance(entry.get("path"), str) and entry["path"] in blobs:
        data = blobs[entry["path"]]
    elif isinstance(entry.get("text"), str):
        data = entry["text"].encode("utf-8")
    elif isinstance(entry.get("base64"), str):
        try:
            data = base64.b64decode(entry["base64"], validate=True)
        except (binascii.Error, ValueError):
            raise Invalid("not valid base64", field=f"{where}.base64") from None
    else:
        raise Invalid("missing: expected 'text' or 'base64' (or a file of the package)", field=where)
    digest = entry.get("sha256")
    if digest is not None and not isinstance(digest, str):
        raise Invalid("expected the SHA-256 as hexadecimal text", field=f"{where}.sha256")
    if digest is not None and hashlib.sha256(data).hexdigest() != digest:
        raise Invalid("the content does not match its SHA-256: the package is damaged", field=where)
    return entry["name"], data


def _object(doc: dict[str, Any], key: str, where: str) -> dict[str, Any]:
    """Return ``doc[key]`` as an object ({} when absent or null); anything else is refused naming it."""
    value = doc.get(key)
    if value is None:
        return {}
    if not isinstance(value, dict):
        raise Invalid(f"expected an object, got {type(value).__name__}", field=where)
    return value


def _options(doc: dict[str, Any], trials: int) -> AnalysisOptions:
    if doc.get("result") is None:
        return AnalysisOptions(monte_carlo_trials=trials)
    result = _object(doc, "result", "result")
    opts = _object(result, "options", "result.options")
    given = bool(opts.get("periods_given"))

    def period(key: str) -> tuple[float, float] | None:
        p = opts.get(key)
        if not given or p is None:
            return None
        if not (
            isinstance(p, list)
            and len(p) == 2
            and all(isinstance(x, (int, float)) and not isinstance(x, bool) and abs(x) <= 1e6 for x in p)
        ):
            raise Invalid("expected two times in seconds (at most 10^6 s)", field=f"result.options.{key}")
        return (float(p[0]), float(p[1]))

    mc = _object(result, "monte_carlo", "result.monte_carlo")
    if isinstance(mc.get("trials"), int) and isinstance(mc.get("seed"), int):
        trials, seed = mc["trials"], mc["seed"]  # the same draws: the same Monte Carlo interval
    else:
        trials, seed = 0, None  # exported without a Monte Carlo check: none now either
    method = opts.get("method")
    if method is not None and not isinstance(method, str):
        raise Invalid("expected the name of a ΔT method", field="result.options.method")
    return AnalysisOptions(
        method=method, fore=period("fore"), after=period("after"), monte_carlo_trials=trials, seed=seed
    ).checked()


def import_document(
    session: so.Session, actor: Person, doc: Any, *, monte_carlo_trials: int = 0, blobs: dict[str, bytes] | None = None
) -> Run:
    """Record the run of a JSON export (a parsed document) and commit; return the new run.

    :raise Invalid: for a document that is not ours, a damaged file, or a calibration that is not here
    """
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise Invalid(f'expected a cupcal run export ("format": "{FORMAT}")', field="format")
    if doc.get("format_version") != 1:
        raise Invalid(f"unknown format_version {doc.get('format_version')!r}; expected 1", field="format_version")
    run_name, run_bytes = _file(doc, "run_file", blobs)
    readings_name, readings = _file(doc, "readings", blobs)
    try:
        run_toml = run_bytes.decode("utf-8")
    except UnicodeDecodeError:
        raise Invalid("the run file is not UTF-8 text", field="files.run_file") from None
    calorimeter_id = None
    info = _object(doc, "run", "run")
    cal_name = info.get("calorimeter")
    if cal_name is not None and not isinstance(cal_name, str):
        raise Invalid("expected the calorimeter's name", field="run.calorimeter")
    options = _options(doc, monte_carlo_trials)
    if cal_name:
        cal = find_calorimeter(session, cal_name)
        if cal is not None:
            calorimeter_id = cal.id
        exported = _object(doc, "provenance", "provenance").get("calibration")
        if exported is not None and needs_supplied_heat_capacity(run_toml):
            here = current_calibration(session, cal.id) if cal is not None else None
            want = _calibration_value(exported)
            if here is None or not (
                math.isclose(here.heat_capacity_j_k, want["value"], rel_tol=1e-12)
                and math.isclose(here.heat_capacity_j_k_std, want["standard_uncertainty"], rel_tol=1e-12)
            ):
                raise Invalid(
                    f"the run takes its heat capacity ({want['value']} ± {want['standard_uncertainty']} J/K) "
                    f"from calorimeter {cal_name!r}, which has no such calibration in force here",
                    field="provenance.calibration",
                )
    return record_run(
        session,
        actor,
        RunUpload(
            run_toml=run_toml,
            run_file_name=run_name,
            readings=readings,
            readings_name=readings_name,
            calorimeter_id=calorimeter_id,
            options=options,
        ),
    )


def _calibration_value(exported: Any) -> dict[str, float]:
    """Return the exported calibration's heat capacity {value, standard_uncertainty} in J/K, checked."""
    want = exported.get("heat_capacity") if isinstance(exported, dict) else None
    if not isinstance(want, dict):
        raise Invalid(
            'expected {"heat_capacity": {"value": …, "standard_uncertainty": …}}', field="provenance.calibration"
        )
    out = {}
    for key in ("value", "standard_uncertainty"):
        try:
            out[key] = require_number(
                want.get(key), key, field=f"provenance.calibration.heat_capacity.{key}", minimum=-1e6, maximum=1e6
            )
        except InputError as exc:
            raise Invalid(exc.message, field=exc.field) from None
    return out


def import_crate(session: so.Session, actor: Person, data: bytes, *, monte_carlo_trials: int = 0) -> Run:
    """Record the run of one of our RO-Crate zips and commit.

    :raise Invalid: when the zip is not an RO-Crate 1.1 made by cupcal, or a file is missing or damaged
    """
    try:
        z = zipfile.ZipFile(io.BytesIO(data))
        names = set(z.namelist())
        if sum(i.file_size for i in z.infolist()) > MAX_PACKAGE_BYTES:
            raise Invalid(f"the package unpacks to more than {MAX_PACKAGE_BYTES // 2**20} MiB", field="package")
        if METADATA not in names:
            raise Invalid(f"not an RO-Crate: no {METADATA} at the top of the zip", field="package")
        meta = load_json(z.read(METADATA), "package")
        graph = {e.get("@id"): e for e in meta.get("@graph", []) if isinstance(e, dict)}
        desc = graph.get(METADATA) or {}
        if (desc.get("conformsTo") or {}).get("@id") != PROFILE:
            raise Invalid(f"{METADATA}: expected conformsTo {PROFILE}", field="package")
        parts = {p.get("@id") for p in (graph.get("./") or {}).get("hasPart", [])}
        if EXPORT_NAME not in parts or EXPORT_NAME not in names:
            raise Invalid(f"not a cupcal package: no {EXPORT_NAME} in the crate", field="package")
        doc = load_json(z.read(EXPORT_NAME), "package")
        blobs = {}
        for which in ("run_file", "readings"):
            path = ((doc.get("files") or {}).get(which) or {}).get("path")
            if path not in parts or path not in names:
                raise Invalid(f"the crate lists no file for {which} ({path!r})", field="package")
            blobs[path] = z.read(path)
    except zipfile.BadZipFile:
        raise Invalid("expected a zip file (an RO-Crate package)", field="package") from None
    except (json.JSONDecodeError, UnicodeDecodeError, AttributeError, TypeError) as exc:
        raise Invalid(f"the package's JSON is not readable: {exc}", field="package") from None
    return import_document(session, actor, doc, monte_carlo_trials=monte_carlo_trials, blobs=blobs)


def import_package(session: so.Session, actor: Person, data: bytes, *, monte_carlo_trials: int = 0) -> Run:
    """Record the run of a package: a zip (RO-Crate) or JSON text (our export)."""
    if len(data) > MAX_PACKAGE_BYTES:
        raise Invalid(f"the package is larger than {MAX_PACKAGE_BYTES // 2**20} MiB", field="package")
    if data[:2] == b"PK":
        return import_crate(session, actor, data, monte_carlo_trials=monte_carlo_trials)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise Invalid(f"expected our JSON export or an RO-Crate zip: {exc}", field="package") from None
    doc = load_json(text, "package")
    return import_document(session, actor, doc, monte_carlo_trials=monte_carlo_trials)
