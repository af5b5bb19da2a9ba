"""API: sections, benches, rosters, bulk import, class dashboards, series, control charts and plans."""

from __future__ import annotations

import dataclasses
from typing import Any

from flask import current_app, jsonify, request, url_for

from webapp.api.blueprint import bp
from webapp.api.params import actor, as_int, as_text, coordinators_only, json_object
from webapp.db import get_session
from webapp.imports.views import IMPORT_MAX_UPLOAD_BYTES
from webapp.models import Bench, Section
from webapp.services.classes import create_bench, create_section, get_section, import_roster, visible_sections
from webapp.services.control import control_json, control_view
from webapp.services.dashboard import Dashboard, course_dashboard
from webapp.services.dashboard import section_dashboard as section_dashboard_service
from webapp.services.errors import Invalid
from webapp.services.imports import files_from_zip, import_files
from webapp.services.series import create_series, group_series, series_summary


def _created(payload: dict[str, Any], location: str):  # type: ignore[no-untyped-def]
    response = jsonify(payload)
    response.status_code = 201
    response.headers["Location"] = location
    return response


def section_json(s: Section) -> dict[str, Any]:
    """Return a section as JSON data."""
    return {"id": s.id, "name": s.name, "course_id": s.course_id, "course": s.course.name,
            "groups": [{"id": g.id, "name": g.name} for g in s.groups],
            "benches": [bench_json(b) for b in s.benches]}


def bench_json(b: Bench) -> dict[str, Any]:
    """Return a bench as JSON data."""
    return {"id": b.id, "name": b.name, "section_id": b.section_id, "calorimeter_id": b.calorimeter_id,
            "thermometer": b.thermometer, "thermometer_resolution_K": b.thermometer_resolution_k}


def dashboard_json(board: Dashboard) -> dict[str, Any]:
    """Return a dashboard as JSON data."""
    return {"title": board.title, "sort": board.sort, "descending": board.descending,
            "flag_counts": board.flag_counts, "statistics": [dataclasses.asdict(s) for s in board.stats],
            "feedback": board.feedback, "common_feedback": board.common_feedback, "rows": [dataclasses.asdict(r) for r in board.rows]}


def _sort() -> tuple[str | None, bool]:
    return request.args.get("sort") or None, request.args.get("dir", "asc") == "desc"


@bp.get("/sections")
def list_sections():  # type: ignore[no-untyped-def]
    """List the sections the caller may see."""
    return jsonify({"items": [section_json(s) for s in visible_sections(get_session(), actor())]})


@bp.post("/sections")
@coordinators_only("manage sections")
def create_section_route():  # type: ignore[no-untyped-def]
    """Add a section to a course (coordinators)."""
    data = json_object()
    s = create_section(get_session(), actor(), course_id=as_int(data.get("course_id"), "course_id") or 0,
                       name=as_text(data.get("name"), "name", required=True) or "")
    return _created(section_json(s), url_for("api.section_dashboard", section_id=s.id))


@bp.post("/sections/<int:section_id>/benches")
@coordinators_only("manage benches")
def create_bench_route(section_id: int):  # type: ignore[no-untyped-def]
    """Add a bench (calorimeter + thermometer) to a section (coordinators)."""
    data = json_object()
    res = data.get("thermometer_resolution")
    if res is not None and not isinstance(res, (str, int, float)) or isinstance(res, bool):
        raise Invalid("expected text like \"0.01 K\" or a number of kelvins", field="thermometer_resolution")
    b = create_bench(get_session(), actor(), section_id=section_id,
                     name=as_text(data.get("name"), "name", required=True) or "",
                     calorimeter_id=as_int(data.get("calorimeter_id"), "calorimeter_id"),
                     thermometer=as_text(data.get("thermometer"), "thermometer") or "", thermometer_resolution=res)
    return _created(bench_json(b), url_for("api.list_sections"))


@bp.post("/rosters")
@coordinators_only("import rosters")
def import_roster_route():  # type: ignore[no-untyped-def]
    """Import a roster CSV (coordinators): the body is the CSV text (text/csv) or a multipart ``roster`` file."""
    if "roster" in request.files:
        raw, name = request.files["roster"].read(), request.files["roster"].filename or "roster.csv"
    else:
        raw, name = request.get_data(), "roster.csv"
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise Invalid("the roster is not UTF-8 text", field="roster") from None
    session = get_session()
    try:
        report = import_roster(session, actor(), text, source=name,
                               password_method=current_app.config["PASSWORD_METHOD"])
    except Invalid as exc:
        session.rollback()
        errors = getattr(exc, "errors", None)
        if errors is None:
            raise
        response = jsonify({"error": exc.message, "field": "roster", "errors": errors})
        response.status_code = 400
        return response
    return _created(dataclasses.asdict(report), url_for("api.list_sections"))


@bp.post("/sections/<int:section_id>/imports")
def import_runs_route(section_id: int):  # type: ignore[no-untyped-def]
    """Import a zip of run files and logs into a section (coordinators, technicians); report per file."""
    request.max_content_length = int(current_app.config.get("IMPORT_MAX_UPLOAD_BYTES", IMPORT_MAX_UPLOAD_BYTES))
    archive = request.files.get("archive")
    if archive is None:
        raise Invalid("send the zip as the multipart file 'archive'", field="archive")
    mapping = None
    if "mapping" in request.files:
        try:
            mapping = request.files["mapping"].read().decode("utf-8-sig")
        except UnicodeDecodeError:
            raise Invalid("the mapping is not UTF-8 text", field="mapping") from None
    session = get_session()
    from webapp.services.classes import require_staff

    require_staff(actor(), "import runs")
    get_section(session, actor(), section_id)
    files = files_from_zip(archive.read(), source=archive.filename or "archive")
    create = request.form.get("create_groups", "").strip().lower() in ("1", "true", "yes", "on")
    report = import_files(session, actor(), section_id, files, mapping=mapping, create_groups=create)
    return jsonify(report.as_dict())


@bp.get("/sections/<int:section_id>/dashboard")
def section_dashboard(section_id: int):  # type: ignore[no-untyped-def]
    """The class dashboard of a section: rows with flags, statistics, feedback and each group's series."""
    sort, desc = _sort()
    session = get_session()
    board = section_dashboard_service(session, actor(), section_id, sort=sort or "group", descending=desc)
    payload = dashboard_json(board)
    payload["series"] = group_series(board.rows, session)
    return jsonify(payload)


@bp.get("/courses/<int:course_id>/dashboard")
def course_dashboard_route(course_id: int):  # type: ignore[no-untyped-def]
    """The class dashboard of a whole course (coordinators, technicians)."""
    sort, desc = _sort()
    board = course_dashboard(get_session(), actor(), course_id, sort=sort or "section", descending=desc)
    return jsonify(dashboard_json(board))


@bp.post("/series")
@coordinators_only("make series")
def create_series_route():  # type: ignore[no-untyped-def]
    """Store a named series of repeat runs (coordinators)."""
    data = json_object()
    session = get_session()
    s = create_series(session, actor(), name=as_text(data.get("name"), "name", required=True) or "",
                      run_ids=data.get("run_ids"), notes=as_text(data.get("notes"), "notes") or "")
    return _created(series_summary(session, actor(), s.id), url_for("api.get_series", series_id=s.id))


@bp.get("/series/<int:series_id>")
def get_series(series_id: int):  # type: ignore[no-untyped-def]
    """A series with its statistics."""
    return jsonify(series_summary(get_session(), actor(), series_id))


@bp.get("/calorimeters/<int:calorimeter_id>/control")
def calorimeter_control(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """The control chart of a calorimeter's check standard with run-rule flags and the calibration due date."""
    view = control_view(get_session(), actor(), calorimeter_id, standard=request.args.get("standard") or None,
                        baseline=as_int(request.args.get("baseline"), "baseline"),
                        default_days=int(current_app.config["CALIBRATION_DUE_DAYS"]))
    return jsonify(control_json(view))


_PLAN_NUMBERS = ("thermometer_resolution", "thermometer_noise", "noise_correlation", "balance_u", "volume_u",
                 "temperature", "interval", "fore", "after", "release_time", "probe_time", "molar_enthalpy")
_PLAN_TEXTS = ("formula", "mass", "water_volume", "acid", "base", "acid_concentration", "base_concentration",
               "acid_volume", "base_volume", "base_temperature", "calorimeter_heat_capacity")
#: amounts of the calibration and reaction kinds (calc.plan_kinds)
_PLAN_KIND_TEXTS = ("heater_voltage", "heater_current", "heater_duration", "warm_volume", "warm_temperature")


@bp.post("/plan")
def plan_route():  # type: ignore[no-untyped-def]
    """Predict a run's ΔT and u(ΔH) before it is made (calc.plan)."""
    from calc.cli.plan import plan_record
    from calc.errors import CupcalError
    from calc.plan import plan_run
    from webapp.api.params import as_float

    data = json_object()
    unknown = sorted(set(data) - set(_PLAN_NUMBERS) - set(_PLAN_TEXTS) - set(_PLAN_KIND_TEXTS) - {"kind", "coefficient"})
    if unknown:
        raise Invalid(f"unknown field(s): {', '.join(unknown)}", field=unknown[0])
    kw: dict[str, Any] = {}
    for k in _PLAN_NUMBERS:
        if data.get(k) is not None:
            kw[k] = as_float(data[k], k)
    for k in _PLAN_TEXTS:
        if data.get(k) is not None:
            kw[k] = as_text(data[k], k)
    extra: dict[str, Any] = {k: as_text(data[k], k) for k in _PLAN_KIND_TEXTS if data.get(k) is not None}
    if data.get("coefficient") is not None:
        c = as_float(data["coefficient"], "coefficient")
        if c != int(c) or c < 1:
            raise Invalid("expected a whole number ≥ 1", field="coefficient")
        extra["coefficient"] = int(c)
    if extra:
        kw["kind_inputs"] = extra
    if "thermometer_resolution" not in kw or "calorimeter_heat_capacity" not in kw:
        raise Invalid("missing: thermometer_resolution and calorimeter_heat_capacity are required",
                      field="thermometer_resolution" if "thermometer_resolution" not in kw else "calorimeter_heat_capacity")
    try:
        plan = plan_run(as_text(data.get("kind"), "kind", required=True) or "", **kw)
    except CupcalError as exc:
        raise Invalid(str(exc), field=getattr(exc, "field", None) or "body") from None
    return jsonify(plan_record(plan))


# ----------------------------------------------------------------- OpenAPI document of these routes

from webapp.api.openapi import json_response as _json  # noqa: E402
from webapp.api.openapi import list_of as _list_of  # noqa: E402
from webapp.api.openapi import operation as _op  # noqa: E402
from webapp.api.openapi import path_param as _id  # noqa: E402
from webapp.api.openapi import register  # noqa: E402
from webapp.api.openapi import request_body as _body  # noqa: E402
from webapp.api.openapi import schema_ref as _ref  # noqa: E402

_OBJ = {"type": "object"}
_NUM = {"type": ["number", "null"]}
register(schemas={
    "Bench": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"}, "section_id": {"type": "integer"},
        "calorimeter_id": {"type": ["integer", "null"]}, "thermometer": {"type": "string"},
        "thermometer_resolution_K": _NUM}},
    "Section": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"}, "course_id": {"type": "integer"},
        "course": {"type": "string"}, "groups": {"type": "array", "items": _ref("Ref")},
        "benches": {"type": "array", "items": _ref("Bench")}}},
    "ImportReport": {"type": "object", "properties": {
        "summary": {"type": "string"}, "counts": {"type": "object", "additionalProperties": {"type": "integer"}},
        "items": {"type": "array", "items": {"type": "object", "properties": {
            "file": {"type": "string"}, "outcome": {"type": "string", "enum": ["stored", "unchanged", "error", "ignored"]},
            "message": {"type": "string"}, "run_id": {"type": ["integer", "null"]}, "group": {"type": ["string", "null"]}}}}}},
    "Dashboard": {"type": "object", "properties": {
        "title": {"type": "string"}, "sort": {"type": "string"}, "descending": {"type": "boolean"},
        "flag_counts": {"type": "object", "additionalProperties": {"type": "integer"}},
        "statistics": {"type": "array", "items": _OBJ}, "feedback": {"type": "object"},
        "rows": {"type": "array", "items": _OBJ}, "series": {"type": "array", "items": _ref("SeriesSummary")}}},
    "SeriesSummary": {"type": "object", "properties": {
        "id": {"type": "integer"}, "name": {"type": "string"}, "group": {"type": "string"}, "unit": {"type": "string"},
        "run_ids": {"type": "array", "items": {"type": "integer"}}, "values": {"type": "array", "items": {"type": "number"}},
        "n": {"type": "integer"}, "mean": {"type": "number"}, "sd": {"type": "number"}, "u_mean": {"type": "number"},
        "dof": {"type": "integer"}, "t95": {"type": "number"}, "ci95": {"type": "array", "items": {"type": "number"}},
        "type_b_u": {"type": "number"}, "type_b_dof": _NUM, "u_combined": {"type": "number"}, "dof_eff": _NUM,
        "k": {"type": "number"}, "U": {"type": "number"}}},
    "ControlChart": {"type": "object", "properties": {
        "calorimeter_id": {"type": "integer"}, "standard": {"type": ["string", "null"]}, "standards": _OBJ,
        "unit": {"type": "string"}, "baseline": {"type": "integer"}, "message": {"type": "string"},
        "calibration": _OBJ, "limits": {"type": ["object", "null"]}, "points": {"type": "array", "items": _OBJ},
        "violations": {"type": "array", "items": _OBJ}, "rules": _OBJ}},
})
_SORT = [{"name": "sort", "in": "query", "schema": {"type": "string"}},
         {"name": "dir", "in": "query", "schema": {"type": "string", "enum": ["asc", "desc"]}}]
_SEC = [_id("section_id")]
register({
    "/api/sections": {
        "get": _op("List the sections you may see", _json(_list_of(_ref("Section")), "Sections"), 401),
        "post": _op("Add a section to a course (coordinators)", _json(_ref("Section"), "The new section"),
                    400, 401, 403, 404, 409, status="201",
                    body=_body({"course_id": {"type": "integer"}, "name": {"type": "string"}}, ["course_id", "name"])),
    },
    "/api/sections/{section_id}/benches": {
        "post": _op("Add a bench: calorimeter and thermometer (coordinators)", _json(_ref("Bench"), "The new bench"),
                    400, 401, 403, 404, 409, params=_SEC, status="201", body=_body({
                        "name": {"type": "string"}, "calorimeter_id": {"type": "integer"},
                        "thermometer": {"type": "string"},
                        "thermometer_resolution": {"type": ["string", "number"], "description": "e.g. \"0.01 K\""}},
                        ["name"])),
    },
    "/api/rosters": {
        "post": _op("Import a roster CSV (coordinators; all rows or none)",
                    _json(_OBJ, "People, courses, sections and groups created"), 400, 401, 403, status="201",
                    body={"required": True, "content": {
                        "text/csv": {"schema": {"type": "string", "description": "course,section,group,name,email,role"}},
                        "multipart/form-data": {"schema": {"type": "object", "properties": {
                            "roster": {"type": "string", "format": "binary"}}}}}}),
    },
    "/api/sections/{section_id}/imports": {
        "post": _op("Import a zip of run files and logs into a section; a report per file",
                    _json(_ref("ImportReport"), "The report"), 400, 401, 403, 404, 413, params=_SEC,
                    body={"required": True, "content": {"multipart/form-data": {"schema": {
                        "type": "object", "required": ["archive"], "properties": {
                            "archive": {"type": "string", "format": "binary"},
                            "mapping": {"type": "string", "format": "binary",
                                        "description": "CSV: file, group[, bench]"},
                            "create_groups": {"type": "string", "enum": ["true", "false"],
                                              "description": "create the groups [info] group names"}}}}}}),
    },
    "/api/sections/{section_id}/dashboard": {
        "get": _op("The class dashboard of a section (flags, statistics, feedback, series)",
                   _json(_ref("Dashboard"), "The dashboard"), 400, 401, 404, params=_SEC + _SORT)},
    "/api/courses/{course_id}/dashboard": {
        "get": _op("The class dashboard of a course (coordinators, technicians)",
                   _json(_ref("Dashboard"), "The dashboard"), 400, 401, 403, 404,
                   params=[_id("course_id")] + _SORT)},
    "/api/series": {
        "post": _op("Store a named series of repeat runs (coordinators)", _json(_ref("SeriesSummary"), "The series"),
                    400, 401, 403, status="201", body=_body({
                        "name": {"type": "string"}, "run_ids": {"type": "array", "items": {"type": "integer"}},
                        "notes": {"type": "string"}}, ["name", "run_ids"]))},
    "/api/series/{series_id}": {
        "get": _op("A series with its statistics", _json(_ref("SeriesSummary"), "The series"), 401, 404,
                   params=[_id("series_id")])},
    "/api/calorimeters/{calorimeter_id}/control": {
        "get": _op("Control chart of a check standard and the calibration due date",
                   _json(_ref("ControlChart"), "The chart"), 400, 401, 404, params=[_id("calorimeter_id"),
                   {"name": "standard", "in": "query", "schema": {"type": "string"}},
                   {"name": "baseline", "in": "query", "schema": {"type": "integer", "minimum": 2}}])},
    "/api/plan": {
        "post": _op("Plan a run: predicted ΔT, u(ΔH), budget by equipment, suggestion, cautions",
                    _json(_OBJ, "The plan"), 400, 401, body=_body(
                        {"kind": {"type": "string", "enum": ["dissolution", "neutralization", "electrical-calibration",
                                                             "mixing-calibration", "reaction"]},
                         **{k: {"type": "number"} for k in _PLAN_NUMBERS},
                         **{k: {"type": "string"} for k in _PLAN_TEXTS + _PLAN_KIND_TEXTS},
                         "coefficient": {"type": "integer", "minimum": 1}},
                        ["kind", "thermometer_resolution", "calorimeter_heat_capacity"]))},
})
