"""API: sections, benches, rosters, bulk import, class dashboards, series, control charts and plans."""

from __future__ import annotations

import dataclasses
from typing import Any

from flask import current_app, jsonify, request, url_for

from webapp.api.blueprint import bp
from webapp.api.params import actor, as_int, as_text, coordinators_only, json_object
from webapp.db import get_session
from webapp.imports.views import IMPORT_MAX_UPLOAD_BYTES
from webapp.jsonfields import attrs
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
    return {
        "id": s.id,
        "name": s.name,
        "course_id": s.course_id,
        "course": s.course.name,
        "groups": [{"id": g.id, "name": g.name} for g in s.groups],
        "benches": [bench_json(b) for b in s.benches],
    }


def bench_json(b: Bench) -> dict[str, Any]:
    """Return a bench as JSON data."""
    return {
        **attrs(b, "id", "name", "section_id", "calorimeter_id", "thermometer"),
        "thermometer_resolution_K": b.thermometer_resolution_k,
    }


def dashboard_json(board: Dashboard) -> dict[str, Any]:
    """Return a dashboard as JSON data."""
    return {
        **attrs(board, "title", "sort", "descending", "flag_counts"),
        "statistics": [dataclasses.asdict(s) for s in board.stats],
        **attrs(board, "feedback", "common_feedback"),
        "rows": [dataclasses.asdict(r) for r in board.rows],
    }


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
    s = create_section(
        get_session(),
        actor(),
        course_id=as_int(data.get("course_id"), "course_id") or 0,
        name=as_text(data.get("name"), "name", required=True) or "",
    )
    return _created(section_json(s), url_for("api.section_dashboard", section_id=s.id))


@bp.post("/sections/<int:section_id>/benches")
@coordinators_only("manage benches")
def create_bench_route(section_id: int):  # type: ignore[no-untyped-def]
    """Add a bench (calorimeter + thermometer) to a section (coordinators)."""
    data = json_object()
    res = data.get("thermometer_resolution")
    if res is not None and not isinstance(res, (str, int, float)) or isinstance(res, bool):
        raise Invalid('expected text like "0.01 K" or a number of kelvins', field="thermometer_resolution")
    b = create_bench(
        get_session(),
        actor(),
        section_id=section_id,
        name=as_text(data.get("name"), "name", required=True) or "",
        calorimeter_id=as_int(data.get("calorimeter_id"), "calorimeter_id"),
        thermometer=as_text(data.get("thermometer"), "thermometer") or "",
        thermometer_resolution=res,
    )
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
        report = import_roster(
            session, actor(), text, source=name, password_method=current_app.config["PASSWORD_METHOD"]
        )
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
    s = create_series(
        session,
        actor(),
        name=as_text(data.get("name"), "name", required=True) or "",
        run_ids=data.get("run_ids"),
        notes=as_text(data.get("notes"), "notes") or "",
    )
    return _created(series_summary(session, actor(), s.id), url_for("api.get_series", series_id=s.id))


@bp.get("/series/<int:series_id>")
def get_series(series_id: int):  # type: ignore[no-untyped-def]
    """A series with its statistics."""
    return jsonify(series_summary(get_session(), actor(), series_id))


@bp.get("/calorimeters/<int:calorimeter_id>/control")
def calorimeter_control(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """The control chart of a calorimeter's check standard with run-rule flags and the calibration due date."""
    view = control_view(
        get_session(),
        actor(),
        calorimeter_id,
        standard=request.args.get("standard") or None,
        baseline=as_int(request.args.get("baseline"), "baseline"),
        default_days=int(current_app.config["CALIBRATION_DUE_DAYS"]),
    )
    return jsonify(control_json(view))


PLAN_NUMBERS = (
    "thermometer_resolution",
    "thermometer_noise",
    "noise_correlation",
    "balance_u",
    "volume_u",
    "temperature",
    "interval",
    "fore",
    "after",
    "release_time",
    "probe_time",
    "molar_enthalpy",
)
PLAN_TEXTS = (
    "formula",
    "mass",
    "water_volume",
    "acid",
    "base",
    "acid_concentration",
    "base_concentration",
    "acid_volume",
    "base_volume",
    "base_temperature",
    "calorimeter_heat_capacity",
)
#: amounts of the calibration and reaction kinds (calc.plan_kinds)
PLAN_KIND_TEXTS = ("heater_voltage", "heater_current", "heater_duration", "warm_volume", "warm_temperature")


@bp.post("/plan")
def plan_route():  # type: ignore[no-untyped-def]
    """Predict a run's ΔT and u(ΔH) before it is made (calc.plan)."""
    from calc.cli.plan import plan_record
    from calc.errors import CupcalError
    from calc.plan import plan_run
    from webapp.api.params import as_float

    data = json_object()
    unknown = sorted(set(data) - set(PLAN_NUMBERS) - set(PLAN_TEXTS) - set(PLAN_KIND_TEXTS) - {"kind", "coefficient"})
    if unknown:
        raise Invalid(f"unknown field(s): {', '.join(unknown)}", field=unknown[0])
    kw: dict[str, Any] = {}
    for k in PLAN_NUMBERS:
        if data.get(k) is not None:
            kw[k] = as_float(data[k], k)
    for k in PLAN_TEXTS:
        if data.get(k) is not None:
            kw[k] = as_text(data[k], k)
    extra: dict[str, Any] = {k: as_text(data[k], k) for k in PLAN_KIND_TEXTS if data.get(k) is not None}
    if data.get("coefficient") is not None:
        c = as_float(data["coefficient"], "coefficient")
        if c != int(c) or c < 1:
            raise Invalid("expected a whole number ≥ 1", field="coefficient")
        extra["coefficient"] = int(c)
    if extra:
        kw["kind_inputs"] = extra
    if "thermometer_resolution" not in kw or "calorimeter_heat_capacity" not in kw:
        raise Invalid(
            "missing: thermometer_resolution and calorimeter_heat_capacity are required",
            field="thermometer_resolution" if "thermometer_resolution" not in kw else "calorimeter_heat_capacity",
        )
    try:
        plan = plan_run(as_text(data.get("kind"), "kind", required=True) or "", **kw)
    except CupcalError as exc:
        raise Invalid(str(exc), field=getattr(exc, "field", None) or "body") from None
    return jsonify(plan_record(plan))
