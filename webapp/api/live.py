"""API: live runs, for a recorder streaming a thermometer's readings (tokens with the scope "live" or "write").

The recorder creates a live run (idempotent on its client key), posts readings in batches
(idempotent by sequence number) and finishes it into an ordinary run. Pages follow it through
``/live/<id>`` (:mod:`webapp.live`).
"""

from __future__ import annotations

from flask import current_app, jsonify, url_for

from webapp.api import live_openapi  # noqa: F401  (documents these routes)
from webapp.api.blueprint import bp
from webapp.api.params import actor, as_int, coordinators_only, json_object
from webapp.db import get_session
from webapp.services.errors import Invalid
from webapp.services.live import LiveCreate, add_readings, create_live_run, get_live_run, set_target
from webapp.services.live_finish import finish_live_run
from webapp.services.live_view import live_json, set_section_target


@bp.post("/live-runs", endpoint="create_live_run")
def create_live_run_route():  # type: ignore[no-untyped-def]
    """Start a live run, or resume the one started with the same client key (200)."""
    data = json_object()
    known = {"run_file", "client_key", "target_u", "calorimeter_id", "group_id", "bench_id"}
    for key in data:
        if key not in known:
            raise Invalid(f"unknown field; expected: {', '.join(sorted(known))}", field=key)
    session = get_session()
    live, new = create_live_run(
        session,
        actor(),
        LiveCreate(
            run_file=data.get("run_file"),
            client_key=data.get("client_key"),
            target_u=data.get("target_u"),
            calorimeter_id=as_int(data.get("calorimeter_id"), "calorimeter_id"),
            group_id=as_int(data.get("group_id"), "group_id"),
            bench_id=as_int(data.get("bench_id"), "bench_id"),
        ),
    )
    response = jsonify(
        {
            "id": live.id,
            "page_url": url_for("live.page", live_id=live.id),
            "last_seq": live.last_seq,
            "state": live.state,
        }
    )
    response.status_code = 201 if new else 200
    response.headers["Location"] = url_for("api.get_live_run", live_id=live.id)
    return response


@bp.post("/live-runs/<int:live_id>/readings", endpoint="live_readings")
def live_readings(live_id: int):  # type: ignore[no-untyped-def]
    """Store a batch of readings; those already stored (seq ≤ last_seq) are ignored."""
    data = json_object()
    if "readings" not in data:
        raise Invalid("missing; expected a list of [seq, time_s, temperature_c]", field="readings")
    every = float(current_app.config.get("LIVE_ADVICE_EVERY_S", 0.0))
    stored, last_seq = add_readings(get_session(), actor(), live_id, data["readings"], every)
    return jsonify({"stored": stored, "last_seq": last_seq})


@bp.get("/live-runs/<int:live_id>", endpoint="get_live_run")
def get_live_run_route(live_id: int):  # type: ignore[no-untyped-def]
    """Return a live run's state, its readings count and the latest advice."""
    session = get_session()
    return jsonify(live_json(session, get_live_run(session, actor(), live_id)))


@bp.post("/live-runs/<int:live_id>/finish", endpoint="finish_live_run")
def finish_live_run_route(live_id: int):  # type: ignore[no-untyped-def]
    """Analyze and store the live run as a run; the recorder's CSV (if sent) is kept exactly."""
    data = json_object()
    run = finish_live_run(get_session(), actor(), live_id, data.get("readings_csv"))
    return jsonify({"run_id": run.id, "run_url": url_for("runs.detail", run_id=run.id)})


@bp.put("/live-runs/<int:live_id>/target", endpoint="live_target")
def live_target(live_id: int):  # type: ignore[no-untyped-def]
    """Set a live run's target U (null: the section's default, else the advisor's)."""
    data = json_object()
    if "target_u" not in data:
        raise Invalid("missing; expected a positive number or null", field="target_u")
    session = get_session()
    return jsonify(live_json(session, set_target(session, actor(), live_id, data["target_u"])))


@bp.put("/sections/<int:section_id>/live-target", endpoint="section_live_target")
@coordinators_only("set a section's target uncertainty")
def section_live_target(section_id: int):  # type: ignore[no-untyped-def]
    """Set a section's default target U for its live runs (coordinators; null clears it)."""
    from webapp.services.classes import get_section

    data = json_object()
    if "target_u" not in data:
        raise Invalid("missing; expected a positive number or null", field="target_u")
    session = get_session()
    section = get_section(session, actor(), section_id)
    return jsonify(
        {"section_id": section.id, "target_u": set_section_target(session, actor(), section, data["target_u"])}
    )
