"""API: calorimeters with their heat-capacity history, groups and courses."""

from __future__ import annotations

from flask import jsonify, request, url_for

from webapp.api.blueprint import bp
from webapp.api.params import actor, as_int, as_text, coordinators_only, expected_version, json_object, page_args
from webapp.api.schemas import calibration_json, calorimeter_json, course_json, group_json, page_json
from webapp.db import get_session
from webapp.services.calorimeters import (
    calibration_history,
    calorimeters_query,
    create_calorimeter,
    current_calibration,
    enter_heat_capacity,
    get_calorimeter,
    update_calorimeter,
)
from webapp.services.classes import courses_query, groups_query
from webapp.services.control import set_interval
from webapp.services.people import create_course, create_group
from webapp.services.runs import paginate


def _created(payload: dict, location: str):  # type: ignore[no-untyped-def]
    response = jsonify(payload)
    response.status_code = 201
    response.headers["Location"] = location
    return response


@bp.get("/calorimeters")
def list_calorimeters():  # type: ignore[no-untyped-def]
    """List the calorimeters with the heat capacity in force."""
    session = get_session()
    page, per_page = page_args()
    result = paginate(session, calorimeters_query(), page, per_page)
    return jsonify(page_json(result, [calorimeter_json(c, current_calibration(session, c.id)) for c in result.items]))


@bp.post("/calorimeters")
@coordinators_only("manage calorimeters")
def create_calorimeter_route():  # type: ignore[no-untyped-def]
    """Add a calorimeter (coordinators), optionally with a first heat capacity."""
    session = get_session()
    data = json_object()
    cal = create_calorimeter(
        session,
        actor(),
        name=as_text(data.get("name"), "name", required=True) or "",
        parts=as_text(data.get("parts"), "parts") or "",
        location=as_text(data.get("location"), "location") or "",
        heat_capacity=as_text(data.get("heat_capacity"), "heat_capacity") or None,
        vessel_type=as_text(data.get("vessel_type"), "vessel_type") or None,
        measured_on=as_text(data.get("measured_on"), "measured_on") or None,
    )
    return _created(
        calorimeter_json(cal, current_calibration(session, cal.id)),
        url_for("api.get_calorimeter", calorimeter_id=cal.id),
    )


@bp.get("/calorimeters/<int:calorimeter_id>", endpoint="get_calorimeter")
def get_calorimeter_route(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Return a calorimeter with its whole heat-capacity history."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    history = session.scalars(calibration_history(cal.id)).all()
    payload = calorimeter_json(cal, current_calibration(session, cal.id))
    payload["calibrations"] = [calibration_json(c) for c in history]
    response = jsonify(payload)
    response.headers["ETag"] = f'"{cal.version}"'
    return response


@bp.patch("/calorimeters/<int:calorimeter_id>")
@coordinators_only("manage calorimeters")
def patch_calorimeter(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Change a calorimeter's name, parts, location or calibration interval (coordinators; audited).

    Needs If-Match (or ``version``); a stale version gets 409 with the current state.
    """
    session = get_session()
    changes = dict(json_object())
    version = expected_version(changes, required=True)
    interval_given = "calibration_interval_days" in changes
    # checked before anything is stored (null: the notebook's default interval)
    days = as_int(changes.pop("calibration_interval_days", None), "calibration_interval_days", low=1, high=3650)
    cal = update_calorimeter(
        session, actor(), get_calorimeter(session, calorimeter_id), changes, version, commit=not interval_given
    )
    if interval_given:
        set_interval(session, actor(), cal, days)
    response = jsonify(calorimeter_json(cal, current_calibration(session, cal.id)))
    response.headers["ETag"] = f'"{cal.version}"'
    return response


@bp.get("/calorimeters/<int:calorimeter_id>/calibrations")
def list_calibrations(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """List a calorimeter's heat-capacity history, oldest first."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    return jsonify({"items": [calibration_json(c) for c in session.scalars(calibration_history(cal.id))]})


@bp.post("/calorimeters/<int:calorimeter_id>/calibrations")
def enter_calibration(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Enter a heat capacity measured elsewhere, with the date it was measured (staff; audited).

    ``confirm: true`` accepts a value in force that moves by more than k·u (409 otherwise);
    ``restart: true`` says the cup itself changed, so its pooled history starts again here.
    """
    from webapp.services.calibrations import require_staff

    require_staff(actor(), "record a heat capacity")  # whatever the body holds
    session = get_session()
    data = json_object()
    cal = get_calorimeter(session, calorimeter_id)
    entry = enter_heat_capacity(
        session,
        actor(),
        cal,
        as_text(data.get("heat_capacity"), "heat_capacity", required=True) or "",
        as_text(data.get("measured_on"), "measured_on"),
        as_text(data.get("note"), "note") or "",
        confirm=_flag(data, "confirm"),
        restart=_flag(data, "restart"),
    )
    return _created(calibration_json(entry), url_for("api.get_calorimeter", calorimeter_id=cal.id))


def _flag(data: dict, name: str) -> bool:
    value = data.get(name, False)
    if not isinstance(value, bool):
        from webapp.services.errors import Invalid

        raise Invalid("expected true or false", field=name)
    return value


@bp.post("/calibrations/<int:calibration_id>/approve")
def approve_calibration_route(calibration_id: int):  # type: ignore[no-untyped-def]
    """Approve a proposed calibration (staff): it joins the value in force (``confirm``, ``restart`` as above)."""
    from webapp.services.calibrations import approve_calibration

    data = dict(json_object()) if request.data else {}
    cal = approve_calibration(
        get_session(), actor(), calibration_id, confirm=_flag(data, "confirm"), restart=_flag(data, "restart")
    )
    return jsonify(calibration_json(cal))


@bp.post("/calibrations/<int:calibration_id>/withdraw")
def withdraw_calibration_route(calibration_id: int):  # type: ignore[no-untyped-def]
    """Withdraw a calibration (staff, with a ``reason``); answers with the runs that used it."""
    from webapp.services.calibrations import runs_using, withdraw_calibration

    session = get_session()
    data = json_object()
    cal = withdraw_calibration(session, actor(), calibration_id, as_text(data.get("reason"), "reason") or "")
    return jsonify({**calibration_json(cal), "runs_using": [r.id for r in runs_using(session, cal)]})


@bp.get("/calibrations/<int:calibration_id>/runs")
def calibration_runs(calibration_id: int):  # type: ignore[no-untyped-def]
    """List the runs whose C_cal came from this calibration (or a pooled value that held it)."""
    from webapp.services.access import can_view_run
    from webapp.services.calibrations import get_calibration, runs_using

    session = get_session()
    cal = get_calibration(session, calibration_id)
    runs = [r for r in runs_using(session, cal) if can_view_run(actor(), r)]
    return jsonify(
        {
            "items": [
                {"id": r.id, "title": r.title, "locked": r.locked, "calibration_id": r.calibration_id} for r in runs
            ]
        }
    )


@bp.post("/calibrations/<int:calibration_id>/reanalyze-runs")
def reanalyze_calibration_runs(calibration_id: int):  # type: ignore[no-untyped-def]
    """Re-analyze, with the value now in force, every unlocked run that used this calibration (staff)."""
    from webapp.services.calibrations import reanalyze_runs_using

    done = reanalyze_runs_using(get_session(), actor(), calibration_id)
    return jsonify(
        {
            "calibration": calibration_json(done.calibration) if done.calibration else None,
            "reanalyzed": done.reanalyzed,
            "locked": done.locked,
            "failed": [{"run_id": i, "error": m} for i, m in done.failed],
        }
    )


@bp.get("/groups")
def list_groups():  # type: ignore[no-untyped-def]
    """List the groups."""
    groups = get_session().scalars(groups_query()).all()
    return jsonify({"items": [group_json(g) for g in groups]})


@bp.post("/groups")
@coordinators_only("manage groups")
def create_group_route():  # type: ignore[no-untyped-def]
    """Add a group (coordinators)."""
    data = json_object()
    group = create_group(
        get_session(),
        actor(),
        name=as_text(data.get("name"), "name", required=True) or "",
        course_id=as_int(data.get("course_id"), "course_id"),
    )
    return _created(group_json(group), url_for("api.list_groups"))


@bp.get("/courses")
def list_courses():  # type: ignore[no-untyped-def]
    """List the courses."""
    courses = get_session().scalars(courses_query()).all()
    return jsonify({"items": [course_json(c) for c in courses]})


@bp.post("/courses")
@coordinators_only("manage courses")
def create_course_route():  # type: ignore[no-untyped-def]
    """Add a course (coordinators)."""
    data = json_object()
    course = create_course(
        get_session(),
        actor(),
        name=as_text(data.get("name"), "name", required=True) or "",
        term=as_text(data.get("term"), "term") or "",
    )
    return _created(course_json(course), url_for("api.list_courses"))
