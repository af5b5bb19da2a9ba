"""Calorimeter list and page: heat-capacity history plotted with its uncertainties; coordinators edit."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from flask import current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from webapp.calorimeters.blueprint import bp
from webapp.calorimeters.forms import CalorimeterEditForm, CalorimeterForm, HeatCapacityForm
from webapp.db import get_session
from webapp.error_handlers import flash_refusal
from webapp.plot_cache import history_plot, svg_response
from webapp.services.access import is_coordinator
from webapp.services.calibrations import is_staff
from webapp.services.calorimeters import (
    calibration_history,
    create_calorimeter,
    enter_heat_capacity,
    get_calorimeter,
    update_calorimeter,
)
from webapp.services.control import set_interval
from webapp.services.errors import ServiceError
from webapp.services.page_data import calorimeter_choices, calorimeter_page


def _form_errors(form: Any) -> dict[str, str]:
    return {name: " ".join(messages) for name, messages in form.errors.items()}


@bp.route("/", methods=["GET", "POST"])
@login_required
def index():  # type: ignore[no-untyped-def]
    """List the calorimeters with the heat capacity in force; coordinators add one."""
    session = get_session()
    form = CalorimeterForm(prefix="new")
    errors: dict[str, str] = {}
    status = 200
    if form.is_submitted():
        if form.validate():
            try:
                cal = create_calorimeter(
                    session,
                    current_user,
                    name=form.name.data or "",
                    parts=form.parts.data or "",
                    location=form.location.data or "",
                    vessel_type=form.vessel_type.data or None,
                    heat_capacity=(form.heat_capacity.data or "").strip() or None,
                    measured_on=(form.measured_on.data or "").strip() or None,
                )
                flash(f"Calorimeter {cal.name!r} added.")
                return redirect(url_for("calorimeters.detail", calorimeter_id=cal.id))
            except ServiceError as exc:
                session.rollback()
                if exc.status == 403:
                    raise
                errors, status = {exc.field or "name": exc.message}, exc.status
        else:
            errors, status = _form_errors(form), 400
    return render_template(
        "calorimeters/index.html",
        rows=calorimeter_choices(session),
        form=form,
        errors=errors,
        may_manage=is_coordinator(current_user),
    ), status


def _detail(
    calorimeter_id: int,
    *,
    edit: CalorimeterEditForm | None = None,
    entry: HeatCapacityForm | None = None,
    errors: dict[str, str] | None = None,
    status: int = 200,
):  # type: ignore[no-untyped-def]
    session = get_session()
    page = calorimeter_page(session, current_user, calorimeter_id)
    if edit is None:
        edit = CalorimeterEditForm(prefix="edit", obj=page.calorimeter)
    from webapp.services.control import calibration_info

    due = calibration_info(session, page.calorimeter, int(current_app.config["CALIBRATION_DUE_DAYS"]))
    return render_template(
        "calorimeters/detail.html",
        page=page,
        due=due,
        cal=page.calorimeter,
        history_version=f"{len(page.history)}-{max((c.id for c in page.history), default=0)}",
        edit=edit,
        entry=entry or HeatCapacityForm(prefix="hc"),
        errors=errors or {},
        may_manage=is_coordinator(current_user),
        may_approve=is_staff(current_user),
    ), status


@bp.route("/<int:calorimeter_id>")
@login_required
def detail(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Show a calorimeter: parts, the heat capacity in force, its history, and the runs of each calibration."""
    return _detail(calorimeter_id)


@bp.route("/<int:calorimeter_id>/history.svg")
@login_required
def history_svg(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Send the plot of the heat-capacity history (the URL's ``v`` names the calibrations drawn)."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    history = list(session.scalars(calibration_history(cal.id)))
    return svg_response(
        history_plot(history, history[-1] if history else None),
        immutable=request.args.get("v") == f"{len(history)}-{max((c.id for c in history), default=0)}",
    )


def _submit(
    calorimeter_id: int,
    form: Any,
    prefix: str,
    slot: str,
    store: Callable[[Any], None],
    error_field: Callable[[ServiceError], str],
    done: str,
) -> Any:
    """Handle one of the page's forms: errors beside their fields (re-rendered), else store, flash, redirect.

    :param prefix: the form's field prefix (``edit`` or ``hc``), which the error keys carry
    :param slot: the form's name in :func:`_detail` (``edit`` or ``entry``)
    :param store: called with the calorimeter once the form is valid; raises ServiceError
    :param error_field: the form field a service error belongs to
    """
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    if not form.validate_on_submit():
        return _detail(
            calorimeter_id,
            **{slot: form},
            errors={f"{prefix}-{k}": v for k, v in _form_errors(form).items()},
            status=400,
        )
    try:
        store(cal)
    except ServiceError as exc:
        session.rollback()
        if exc.status == 403:
            raise
        return _detail(
            calorimeter_id, **{slot: form}, errors={f"{prefix}-{error_field(exc)}": exc.message}, status=exc.status
        )
    flash(done)
    return redirect(url_for("calorimeters.detail", calorimeter_id=calorimeter_id))


@bp.route("/<int:calorimeter_id>/edit", methods=["POST"])
@login_required
def edit(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Change a calorimeter's name, parts, location or calibration interval (coordinators)."""
    form = CalorimeterEditForm(prefix="edit")

    def store(cal: Any) -> None:
        session = get_session()
        version = request.form.get("edit-version", type=int)
        cal = update_calorimeter(
            session,
            current_user,
            cal,
            {
                "name": form.name.data or "",
                "parts": form.parts.data or "",
                "location": form.location.data or "",
                "vessel_type": form.vessel_type.data or "foam-cups",
            },
            version,
            commit=False,
        )
        set_interval(session, current_user, cal, form.calibration_interval_days.data)  # in range: the form says so

    return _submit(
        calorimeter_id,
        form,
        "edit",
        "edit",
        store,
        lambda exc: "name" if exc.field in (None, "version") else exc.field,
        "Calorimeter changed.",
    )


@bp.route("/<int:calorimeter_id>/heat-capacity", methods=["POST"])
@login_required
def heat_capacity(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Record a heat capacity measured elsewhere (coordinators); it becomes the one in force."""
    form = HeatCapacityForm(prefix="hc")

    def store(cal: Any) -> None:
        enter_heat_capacity(
            get_session(),
            current_user,
            cal,
            form.heat_capacity.data or "",
            form.measured_on.data,
            form.note.data or "",
            confirm=bool(form.confirm.data),
            restart=bool(form.restart.data),
        )

    return _submit(
        calorimeter_id,
        form,
        "hc",
        "entry",
        store,
        lambda exc: exc.field if exc.field in ("measured_on", "note", "confirm") else "heat_capacity",
        "Heat capacity recorded; the value in force is recomputed from the recent calibrations.",
    )


def _action(calorimeter_id: int, act: Callable[[Any], str]) -> Any:
    """Run one calibration action of the page (CSRF-checked); flash its outcome or its error."""
    from flask_wtf.csrf import validate_csrf

    validate_csrf(request.form.get("csrf_token"))
    session = get_session()
    try:
        flash(act(session))
    except ServiceError as exc:
        flash_refusal(exc)
    return redirect(url_for("calorimeters.detail", calorimeter_id=calorimeter_id))


@bp.route("/<int:calorimeter_id>/calibrations/<int:calibration_id>/approve", methods=["POST"])
@login_required
def approve(calorimeter_id: int, calibration_id: int):  # type: ignore[no-untyped-def]
    """Approve a proposed calibration (staff); a large change needs the confirm box."""
    from webapp.services.calibrations import approve_calibration

    def act(session: Any) -> str:
        approve_calibration(
            session,
            current_user,
            calibration_id,
            confirm=bool(request.form.get("confirm")),
            restart=bool(request.form.get("restart")),
        )
        return f"Calibration #{calibration_id} approved; the value in force is recomputed."

    return _action(calorimeter_id, act)


@bp.route("/<int:calorimeter_id>/calibrations/<int:calibration_id>/withdraw", methods=["POST"])
@login_required
def withdraw(calorimeter_id: int, calibration_id: int):  # type: ignore[no-untyped-def]
    """Withdraw a calibration (staff, with a reason) and list the runs that used it."""
    from webapp.services.calibrations import runs_using, withdraw_calibration

    def act(session: Any) -> str:
        cal = withdraw_calibration(session, current_user, calibration_id, request.form.get("reason", ""))
        runs = runs_using(session, cal)
        listed = ", ".join(f"#{r.id}" + (" (signed)" if r.locked else "") for r in runs) or "none"
        return f"Calibration #{calibration_id} withdrawn. Runs that used it: {listed}."

    return _action(calorimeter_id, act)


@bp.route("/<int:calorimeter_id>/calibrations/<int:calibration_id>/reanalyze-runs", methods=["POST"])
@login_required
def reanalyze_runs(calorimeter_id: int, calibration_id: int):  # type: ignore[no-untyped-def]
    """Re-analyze, with the value in force, every unsigned run that used this calibration (staff)."""
    from webapp.services.calibrations import reanalyze_runs_using

    def act(session: Any) -> str:
        done = reanalyze_runs_using(session, current_user, calibration_id)
        parts = [
            f"Re-analyzed {len(done.reanalyzed)} run(s) with the value in force"
            + (f" ({', '.join(f'#{i}' for i in done.reanalyzed)})" if done.reanalyzed else "")
        ]
        if done.locked:
            parts.append(f"signed, left as they are: {', '.join(f'#{i}' for i in done.locked)}")
        if done.failed:
            parts.append("not re-analyzed: " + "; ".join(f"#{i}: {m}" for i, m in done.failed))
        return "; ".join(parts) + "."

    return _action(calorimeter_id, act)
