"""API: calorimeters with their heat-capacity history, groups and courses."""

from __future__ import annotations

import sqlalchemy as sa
from flask import jsonify
from flask import url_for

from webapp.api.blueprint import bp
from webapp.api.params import actor
from webapp.api.params import as_int
from webapp.api.params import as_text
from webapp.api.params import coordinators_only
from webapp.api.params import json_object
from webapp.api.params import page_args
from webapp.api.schemas import calibration_json
from webapp.api.schemas import calorimeter_json
from webapp.api.schemas import course_json
from webapp.api.schemas import group_json
from webapp.api.schemas import page_json
from webapp.db import get_session
from webapp.models import Course
from webapp.models import Group
from webapp.services.calorimeters import calibration_history
from webapp.services.calorimeters import calorimeters_query
from webapp.services.calorimeters import create_calorimeter
from webapp.services.calorimeters import current_calibration
from webapp.services.calorimeters import enter_heat_capacity
from webapp.services.calorimeters import get_calorimeter
from webapp.services.calorimeters import update_calorimeter
from webapp.services.control import set_interval
from webapp.services.people import create_course
from webapp.services.people import create_group
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
    )
    return _created(calorimeter_json(cal, current_calibration(session, cal.id)),
                    url_for("api.get_calorimeter", calorimeter_id=cal.id))


@bp.get("/calorimeters/<int:calorimeter_id>", endpoint="get_calorimeter")
def get_calorimeter_route(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Return a calorimeter with its whole heat-capacity history."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    history = session.scalars(calibration_history(cal.id)).all()
    payload = calorimeter_json(cal, history[-1] if history else None)
    payload["calibrations"] = [calibration_json(c) for c in history]
    return jsonify(payload)


@bp.patch("/calorimeters/<int:calorimeter_id>")
@coordinators_only("manage calorimeters")
def patch_calorimeter(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Change a calorimeter's name, parts, location or calibration interval (coordinators; audited)."""
    session = get_session()
    changes = dict(json_object())
    interval_given = "calibration_interval_days" in changes
    # checked before anything is stored (null: the notebook's default interval)
    days = as_int(changes.pop("calibration_interval_days", None), "calibration_interval_days", low=1, high=3650)
    cal = update_calorimeter(session, actor(), get_calorimeter(session, calorimeter_id), changes)
    if interval_given:
        set_interval(session, actor(), cal, days)
    return jsonify(calorimeter_json(cal, current_calibration(session, cal.id)))


@bp.get("/calorimeters/<int:calorimeter_id>/calibrations")
def list_calibrations(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """List a calorimeter's heat-capacity history, oldest first."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    return jsonify({"items": [calibration_json(c) for c in session.scalars(calibration_history(cal.id))]})


@bp.post("/calorimeters/<int:calorimeter_id>/calibrations")
@coordinators_only("manage calorimeters")
def enter_calibration(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Enter a heat capacity measured elsewhere (coordinators; audited)."""
    session = get_session()
    data = json_object()
    cal = get_calorimeter(session, calorimeter_id)
    entry = enter_heat_capacity(session, actor(), cal,
                                as_text(data.get("heat_capacity"), "heat_capacity", required=True) or "",
                                as_text(data.get("note"), "note") or "")
    return _created(calibration_json(entry), url_for("api.get_calorimeter", calorimeter_id=cal.id))


@bp.get("/groups")
def list_groups():  # type: ignore[no-untyped-def]
    """List the groups."""
    groups = get_session().scalars(sa.select(Group).order_by(Group.name)).all()
    return jsonify({"items": [group_json(g) for g in groups]})


@bp.post("/groups")
@coordinators_only("manage groups")
def create_group_route():  # type: ignore[no-untyped-def]
    """Add a group (coordinators)."""
    data = json_object()
    group = create_group(get_session(), actor(), name=as_text(data.get("name"), "name", required=True) or "",
                         course_id=as_int(data.get("course_id"), "course_id"))
    return _created(group_json(group), url_for("api.list_groups"))


@bp.get("/courses")
def list_courses():  # type: ignore[no-untyped-def]
    """List the courses."""
    courses = get_session().scalars(sa.select(Course).order_by(Course.name)).all()
    return jsonify({"items": [course_json(c) for c in courses]})


@bp.post("/courses")
@coordinators_only("manage courses")
def create_course_route():  # type: ignore[no-untyped-def]
    """Add a course (coordinators)."""
    data = json_object()
    course = create_course(get_session(), actor(), name=as_text(data.get("name"), "name", required=True) or "",
                           term=as_text(data.get("term"), "term") or "")
    return _created(course_json(course), url_for("api.list_courses"))
