"""New runs: a kind's form (or the run file and readings uploaded as they are), preview, save.

Both ways end in the same two steps. "Preview" analyses the upload without storing it
(:func:`webapp.services.page_data.preview_run`) and shows the readings, the periods found and
the result; "Save" stores exactly what was previewed (:func:`webapp.services.runs.record_run`).
A problem is shown next to the field it concerns and nothing is stored.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import secrets
from collections.abc import Callable
from pathlib import PurePosixPath
from typing import Any

from flask import abort, current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from calc.deltat.base import DEFAULT_METHOD
from calc.deltat.registry import METHODS
from calc.io.runfile import KINDS
from calc.refdata.reference import reference_names
from webapp.auth.forms import ConfirmForm
from webapp.db import get_session
from webapp.plot_cache import draw_result_plots
from webapp.runs.blueprint import bp
from webapp.runs.entry_form import (
    KIND_TITLES,
    build_run_toml,
    check_values,
    default_values,
    error_key,
    form_sections,
    input_names,
)
from webapp.runs.uploads import Carried, digest, file_from_request
from webapp.services.analysis import AnalysisOptions
from webapp.services.errors import Conflict, Invalid, ServiceError
from webapp.services.page_data import Preview, calorimeter_choices, group_choices, preview_run
from webapp.services.runs import RunUpload, record_run, run_for_submit_token


def _methods() -> list[tuple[str, str]]:
    return [
        (name, (fn.__doc__ or "").strip().splitlines()[0] if fn.__doc__ else "") for name, fn in sorted(METHODS.items())
    ]


@bp.route("/new")
@login_required
def new():  # type: ignore[no-untyped-def]
    """Choose what kind of run to enter, or upload a run file and its readings."""
    return render_template("runs/new.html", kinds=[(k, *KIND_TITLES[k]) for k in KINDS])


def _calorimeter_id(text: str | None) -> int | None:
    text = (text or "").strip()
    if not text:
        return None
    try:
        return int(text)
    except ValueError:
        raise Invalid(f"expected a calorimeter from the list, got {text!r}", field="calorimeter_id") from None


def _preview_svg(preview: Preview) -> str:
    from webapp import plots

    a = preview.analysis
    return plots.preview_plot_svg(a.readings.time_s, a.readings.temperature_K, a.periods)


def _after_save(run: Any) -> Any:
    """Draw the new result's plots into the cache (the run page then opens at once) and go there."""
    result = run.current_result
    if result is not None:
        draw_result_plots(run, result)
    flash(f"Run {run.id} saved.")
    return redirect(url_for("runs.detail", run_id=run.id))


def _analyze(upload: RunUpload, action: str, previewed: str, fingerprint: str) -> tuple[Any, Preview | None, bool]:
    """Save (when asked, and only what was previewed) or preview; return (response, preview, changed).

    :raise ServiceError: from the services, for the form to show
    """
    session = get_session()
    changed = action == "save" and previewed != fingerprint
    if action == "save" and not changed:
        token = request.form.get("submit_token", "")
        if not (16 <= len(token) <= 64 and token.isascii()):
            raise Invalid("the form has no valid one-time token; preview the run again, then save", field="")
        done = run_for_submit_token(session, token)
        if done is None:
            trials = int(current_app.config["MONTE_CARLO_TRIALS"])
            saved = dataclasses.replace(upload, options=AnalysisOptions(monte_carlo_trials=trials), submit_token=token)
            try:
                return _after_save(record_run(session, current_user, saved)), None, False
            except Conflict:
                session.rollback()  # the same form saved at the same moment by a second click
                done = run_for_submit_token(session, token)
                if done is None:
                    raise
        flash(f"Run {done.id} was saved already by this form; it was not saved twice.")
        return redirect(url_for("runs.detail", run_id=done.id)), None, False
    return None, preview_run(session, upload), changed


def _required_file(field: str, missing: str, empty: str, errors: dict[str, str]) -> Carried | None:
    """Return the file sent (or carried from the preview) as ``field``; note in ``errors`` why it is missing or empty."""
    try:
        carried = file_from_request(field)
    except Invalid as exc:
        errors[field] = exc.message
        return None
    if carried is None:
        errors[field] = missing
    elif not carried.data.strip():
        errors[field] = empty
    return carried


def _preview_or_save(
    template: str,
    context: dict[str, Any],
    upload: RunUpload,
    fingerprint: str,
    field_of: Callable[[str | None], str],
    **shown: Any,
) -> Any:
    """The common end of both forms: save what was previewed, or preview (then show ``shown`` too).

    A service's error is shown at the form's field ``field_of(exc.field)`` and nothing is stored.
    """
    context["fingerprint"] = fingerprint
    action, previewed = request.form.get("action", "preview"), request.form.get("previewed", "")
    try:
        response, preview, changed = _analyze(upload, action, previewed, fingerprint)
    except ServiceError as exc:
        get_session().rollback()
        context["errors"] = {field_of(exc.field): exc.message}
        return render_template(template, **context), exc.status
    if response is not None:
        return response
    assert preview is not None
    context.update(preview=preview, preview_svg=_preview_svg(preview), changed=changed, **shown)
    return render_template(template, **context)


@bp.route("/new/<string:kind>", methods=["GET", "POST"])
@login_required
def new_kind(kind: str):  # type: ignore[no-untyped-def]
    """Show the form of one kind; preview the run it describes, or save it."""
    if kind not in KINDS:
        abort(404)
    session = get_session()
    sections = form_sections(kind)
    context: dict[str, Any] = dict(
        kind=kind,
        kind_title=KIND_TITLES[kind],
        sections=sections,
        form=ConfirmForm(),
        methods=_methods(),
        default_method=DEFAULT_METHOD,
        calorimeters=calorimeter_choices(session),
        groups=group_choices(session, current_user),
        references=reference_names(),
        errors={},
        preview=None,
        readings=None,
        run_toml=None,
        fingerprint="",
        changed=False,
        submit_token=secrets.token_urlsafe(24),  # one-time: a double submit of "Save" saves one run
    )
    if request.method == "GET":
        values = default_values(sections, operator=current_user.name, date=dt.date.today().isoformat())
        if current_user.role == "student" and current_user.group is not None:
            values["info.group"] = current_user.group.name
        return render_template("runs/new_kind.html", values=values, **context)

    context["form"].validate_on_submit()  # CSRF (CSRFProtect has refused a bad token already)
    values = {name: request.form.get(name, "") for name in input_names(sections)}
    if current_user.role == "student":
        values["info.group"] = current_user.group.name if current_user.group is not None else ""
    errors: dict[str, str] = {}
    missing = "choose the CSV file of the thermometer's readings (times and temperatures)"
    readings = _required_file("readings", missing, "the readings file is empty", errors)
    calorimeter = _chosen_calorimeter(values.get("calorimeter_id"), context["calorimeters"], errors)
    errors.update(check_values(kind, values, calorimeter_chosen=calorimeter is not None))
    context.update(values=values, readings=readings, errors=errors)
    if errors:
        return render_template("runs/new_kind.html", **context), 400

    assert readings is not None
    run_name = (PurePosixPath(readings.name).stem or kind) + ".toml"
    run_toml = build_run_toml(
        kind, values, readings_name=readings.name, calorimeter_name=calorimeter.name if calorimeter else None
    )
    upload = RunUpload(
        run_toml=run_toml,
        run_file_name=run_name,
        readings=readings.data,
        readings_name=readings.name,
        calorimeter_id=calorimeter.id if calorimeter else None,
    )
    context["run_toml"] = run_toml
    fingerprint = digest(kind, run_toml, readings.data, str(upload.calorimeter_id))
    return _preview_or_save("runs/new_kind.html", context, upload, fingerprint, lambda f: error_key(f, sections))


def _chosen_calorimeter(text: str | None, choices: list[Any], errors: dict[str, str]) -> Any:
    """Return the calorimeter chosen in the form (None: none chosen); note in ``errors`` one not in ``choices``."""
    try:
        cid = _calorimeter_id(text)
    except Invalid as exc:
        errors["calorimeter.name"] = exc.message
        return None
    if cid is None:
        return None
    calorimeter = next((c.calorimeter for c in choices if c.calorimeter.id == cid), None)
    if calorimeter is None:
        errors["calorimeter.name"] = f"no calorimeter with id {cid}"
    return calorimeter


_UPLOAD_FIELDS = {
    "run_file": "run_file",
    "readings": "readings",
    "calorimeter_id": "calorimeter_id",
    "calorimeter.heat_capacity": "calorimeter_id",
    "group_id": "group_id",
}


def _upload_field(field: str | None) -> str:
    """The upload form's field for a service's error field (the run file for any other named field)."""
    return _UPLOAD_FIELDS.get(field or "", "run_file" if field else "")


def _run_file_text(run_file: Carried, errors: dict[str, str]) -> str:
    """Return the run file as text ("" when it is not UTF-8, noted in ``errors``)."""
    try:
        return run_file.data.decode("utf-8")
    except UnicodeDecodeError as exc:
        errors["run_file"] = f"byte {exc.start + 1} is not UTF-8 text; expected a TOML run file"
        return ""


@bp.route("/upload", methods=["GET", "POST"])
@login_required
def upload():  # type: ignore[no-untyped-def]
    """Upload a run file (TOML) and its readings (CSV) as the command line reads them; preview, save."""
    session = get_session()
    form = ConfirmForm()
    context: dict[str, Any] = dict(
        form=form,
        calorimeters=calorimeter_choices(session),
        groups=group_choices(session, current_user),
        errors={},
        preview=None,
        run_file=None,
        readings=None,
        fingerprint="",
        changed=False,
        calorimeter_id="",
        group_id="",
        submit_token=secrets.token_urlsafe(24),
    )
    if request.method == "GET":
        return render_template("runs/upload.html", **context)

    form.validate_on_submit()
    errors: dict[str, str] = {}
    run_file = _required_file("run_file", "choose the run file (TOML)", "the file is empty", errors)
    readings = _required_file("readings", "choose the readings (CSV)", "the file is empty", errors)
    context.update(
        run_file=run_file,
        readings=readings,
        calorimeter_id=request.form.get("calorimeter_id", ""),
        group_id=request.form.get("group_id", ""),
    )
    run_toml = _run_file_text(run_file, errors) if run_file is not None and "run_file" not in errors else ""
    cid = group_id = None
    try:
        cid = _calorimeter_id(context["calorimeter_id"])
        if current_user.role != "student" and context["group_id"].strip():
            group_id = int(context["group_id"])
    except Invalid as exc:
        errors["calorimeter_id"] = exc.message
    except ValueError:
        errors["group_id"] = "expected a group from the list"
    if errors:
        context["errors"] = errors
        return render_template("runs/upload.html", **context), 400

    assert run_file is not None and readings is not None
    upload_ = RunUpload(
        run_toml=run_toml,
        run_file_name=run_file.name,
        readings=readings.data,
        readings_name=readings.name,
        calorimeter_id=cid,
        group_id=group_id,
    )
    fingerprint = digest(run_toml, run_file.name, readings.data, readings.name, str(cid), str(group_id))
    return _preview_or_save("runs/upload.html", context, upload_, fingerprint, _upload_field, run_toml=run_toml)
