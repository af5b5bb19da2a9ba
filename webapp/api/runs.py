"""API: runs and results."""

from __future__ import annotations

from typing import Any

from flask import Response, jsonify, request, url_for

from calc.deltat.base import DEFAULT_METHOD
from calc.deltat.registry import METHODS
from webapp.api.blueprint import bp
from webapp.api.params import actor, analysis_options, as_int, as_text, body, expected_version, json_object, page_args
from webapp.api.schemas import page_json, person_json, result_json, result_summary, run_json, run_summary
from webapp.db import get_session
from webapp.quantities import series
from webapp.services.audit import audit_trail, entry_as_dict
from webapp.services.errors import Invalid
from webapp.services.runs import (
    RunUpload,
    get_result,
    get_run,
    lock_run,
    paginate,
    reanalyze_run,
    record_run,
    results_query,
    runs_query,
    update_run,
)


@bp.get("/me")
def me():  # type: ignore[no-untyped-def]
    """Return who is calling."""
    return jsonify(person_json(actor()))


@bp.get("/methods")
def methods():  # type: ignore[no-untyped-def]
    """Return the corrected-ΔT methods."""
    items = [
        {
            "name": name,
            "description": (fn.__doc__ or "").strip().splitlines()[0] if fn.__doc__ else "",
            "default": name == DEFAULT_METHOD,
        }
        for name, fn in sorted(METHODS.items())
    ]
    return jsonify({"items": items})


@bp.get("/runs")
def list_runs():  # type: ignore[no-untyped-def]
    """List the runs the caller may see, newest first."""
    page, per_page = page_args()
    query = runs_query(
        actor(),
        kind=as_text(request.args.get("kind"), "kind") or None,
        calorimeter_id=as_int(request.args.get("calorimeter_id"), "calorimeter_id"),
        group_id=as_int(request.args.get("group_id"), "group_id"),
    )
    result = paginate(get_session(), query, page, per_page)
    return jsonify(page_json(result, [run_summary(run, res) for run, res in result.items]))


def _upload_from_request() -> RunUpload:
    data = body()
    if request.is_json:
        run_toml = as_text(data.get("run_toml"), "run_toml", required=True)
        readings_text = as_text(data.get("readings_csv"), "readings_csv", required=True)
        run_name = as_text(data.get("run_file_name"), "run_file_name") or "run.toml"
        readings_name = as_text(data.get("readings_name"), "readings_name") or "readings.csv"
        readings = (readings_text or "").encode("utf-8")
    else:
        run_file = request.files.get("run_file")
        readings_file = request.files.get("readings")
        if run_file is None:
            raise Invalid("missing: upload the run file (TOML) as the form field 'run_file'", field="run_file")
        if readings_file is None:
            raise Invalid("missing: upload the readings (CSV) as the form field 'readings'", field="readings")
        run_name = run_file.filename or "run.toml"
        readings_name = readings_file.filename or "readings.csv"
        try:
            run_toml = run_file.read().decode("utf-8")
        except UnicodeDecodeError as exc:
            raise Invalid(
                f"{run_name}: byte {exc.start + 1} is not UTF-8 text; expected a TOML run file", field="run_file"
            ) from None
        readings = readings_file.read()
    if not run_toml or not run_toml.strip():
        raise Invalid("the run file is empty", field="run_file")
    if not readings.strip():
        raise Invalid("the readings file is empty", field="readings")
    return RunUpload(
        run_toml=run_toml,
        run_file_name=run_name,
        readings=readings,
        readings_name=readings_name,
        calorimeter_id=as_int(data.get("calorimeter_id"), "calorimeter_id"),
        group_id=as_int(data.get("group_id"), "group_id"),
        options=analysis_options(data),
    )


@bp.post("/runs")
def create_run():  # type: ignore[no-untyped-def]
    """Record a run from its run file and readings, analyze it, and return it."""
    session = get_session()
    run = record_run(session, actor(), _upload_from_request())
    response = jsonify(run_json(run))
    response.status_code = 201
    response.headers["Location"] = url_for("api.get_run", run_id=run.id)
    return response


def with_etag(run: Any) -> Response:
    """Return the run as JSON with its version as the ETag."""
    response = jsonify(run_json(run))
    response.headers["ETag"] = f'"{run.version}"'
    return response


@bp.get("/runs/<int:run_id>", endpoint="get_run")
def get_run_route(run_id: int):  # type: ignore[no-untyped-def]
    """Return a run with its inputs and results; the ETag is its version."""
    return with_etag(get_run(get_session(), actor(), run_id))


@bp.patch("/runs/<int:run_id>")
def patch_run(run_id: int):  # type: ignore[no-untyped-def]
    """Change a run's details (audited); needs If-Match (or ``version``); a stale or locked run refuses (409)."""
    session = get_session()
    run = get_run(session, actor(), run_id)
    changes = dict(json_object())
    version = expected_version(changes, required=True)
    return with_etag(update_run(session, actor(), run, changes, version))


@bp.post("/runs/<int:run_id>/analyses")
def reanalyze(run_id: int):  # type: ignore[no-untyped-def]
    """Analyze a run again with another method or periods; the old result is kept."""
    session = get_session()
    run = get_run(session, actor(), run_id)
    data: dict[str, Any] = dict(json_object()) if request.data else {}
    version = expected_version(data)
    result = reanalyze_run(session, actor(), run, analysis_options(data), version)
    response = jsonify(result_json(get_result(session, actor(), result.id)))
    response.status_code = 201
    response.headers["Location"] = url_for("api.get_result", result_id=result.id)
    return response


@bp.get("/runs/<int:run_id>/results")
def list_results(run_id: int):  # type: ignore[no-untyped-def]
    """List a run's results, oldest first."""
    session = get_session()
    run = get_run(session, actor(), run_id)
    return jsonify({"items": [result_summary(r) for r in session.scalars(results_query(run.id))]})


@bp.post("/runs/<int:run_id>/lock")
def lock(run_id: int):  # type: ignore[no-untyped-def]
    """Sign a run (its author or a coordinator); it is immutable afterwards.

    With If-Match (or ``version``) the lock signs only that version (409 otherwise); the answer
    names the result and the content hash it signed.
    """
    session = get_session()
    data: dict[str, Any] = dict(json_object()) if request.data else {}
    version = expected_version(data)
    run = get_run(session, actor(), run_id)
    return with_etag(lock_run(session, actor(), run, version))


@bp.get("/runs/<int:run_id>/audit")
def run_audit(run_id: int):  # type: ignore[no-untyped-def]
    """List the changes made to a run."""
    session = get_session()
    run = get_run(session, actor(), run_id)
    return jsonify({"items": [entry_as_dict(e) for e in session.scalars(audit_trail("run", run.id))]})


@bp.get("/runs/<int:run_id>/series")
def run_series(run_id: int):  # type: ignore[no-untyped-def]
    """Return the parsed readings: times (s) and temperatures (K)."""
    t, y = series(get_run(get_session(), actor(), run_id))
    return jsonify({"time_s": t.tolist(), "temperature_K": y.tolist()})


@bp.get("/runs/<int:run_id>/files/<string:which>")
def run_file(run_id: int, which: str):  # type: ignore[no-untyped-def]
    """Return the run file or the readings exactly as uploaded."""
    run = get_run(get_session(), actor(), run_id)
    if which == "run-file":
        return Response(run.run_toml, mimetype="application/toml")
    if which == "readings":
        return Response(run.readings_raw, mimetype="text/csv")
    raise Invalid("expected 'run-file' or 'readings'", field="which")


@bp.get("/results/<int:result_id>", endpoint="get_result")
def get_result_route(result_id: int):  # type: ignore[no-untyped-def]
    """Return a result with every output, the budget and the provenance."""
    return jsonify(result_json(get_result(get_session(), actor(), result_id)))
