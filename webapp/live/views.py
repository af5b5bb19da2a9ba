"""Live run pages: the list, one run as it records, its JSON poll and its event stream; target U, finish."""

from __future__ import annotations

from types import SimpleNamespace
from typing import Any

from flask import flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from wtforms import DecimalField
from wtforms.validators import NumberRange, Optional

from webapp.db import get_session
from webapp.error_handlers import flash_refusal
from webapp.live.blueprint import bp
from webapp.live.stream import event_stream, parse_cursor
from webapp.models import LiveRun
from webapp.services.errors import ServiceError
from webapp.services.live import get_live_run, set_target
from webapp.services.live_finish import finish_live_run
from webapp.services.live_runfile import toml_data
from webapp.services.live_view import change_mark, require_live, update_of, visible_live_runs


def viewer() -> SimpleNamespace:
    """Return who is asking, as plain values a stream can keep after the request's session closed."""
    group = current_user.group
    return SimpleNamespace(
        id=current_user.id,
        role=current_user.role,
        group_id=current_user.group_id,
        group=SimpleNamespace(section_id=group.section_id) if group is not None else None,
    )


class TargetForm(FlaskForm):
    """The target expanded uncertainty U a student (or the section) wants."""

    target_u = DecimalField("Target U", places=None, validators=[Optional(), NumberRange(min=1e-12, max=1e6)])


class FinishForm(FlaskForm):
    """Nothing but the CSRF token: finish the live run into a stored run."""


@bp.route("/live/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """The live runs the person may follow, newest first."""
    return render_template("live/index.html", runs=visible_live_runs(get_session(), current_user))


def _cautions(live: LiveRun) -> list[Any]:
    from calc.refdata.hazards import cautions_for

    try:
        solute = toml_data(live.run_file).get("solute")
    except ServiceError:
        return []
    formula = solute.get("formula") if isinstance(solute, dict) else None
    return list(cautions_for([formula])) if isinstance(formula, str) and formula.strip() else []


@bp.route("/live/<int:live_id>")
@login_required
def page(live_id: int):  # type: ignore[no-untyped-def]
    """One live run: the curve growing, the periods, drift lines, estimate, status line and warnings."""
    session = get_session()
    live = get_live_run(session, current_user, live_id)
    data = update_of(session, live, -1, None)
    form = TargetForm(target_u=live.target_u)
    return render_template(
        "live/page.html", live=live, data=data, form=form, finish_form=FinishForm(), cautions=_cautions(live)
    )


@bp.route("/live/<int:live_id>/update.json")
@login_required
def update(live_id: int):  # type: ignore[no-untyped-def]
    """What the page lacks since ``?after=<seq>&advice=<seq>`` (the poll used when a stream fails)."""
    session = get_session()
    live = get_live_run(session, current_user, live_id)
    after, advice = parse_cursor(f"{request.args.get('after', '-1')}.{request.args.get('advice', '')}")
    return update_of(session, live, after, advice)


@bp.route("/live/<int:live_id>/events")
@login_required
def events(live_id: int):  # type: ignore[no-untyped-def]
    """The live run's Server-Sent Events: ``update`` when readings, advice or state change; ``ping`` else."""
    get_live_run(get_session(), current_user, live_id)  # 404 before the stream starts
    who = viewer()
    cursor = (
        request.headers.get("Last-Event-ID") or f"{request.args.get('after', '-1')}.{request.args.get('advice', '')}"
    )
    seen = {"seq": parse_cursor(cursor)[0], "advice": parse_cursor(cursor)[1], "mark": None}

    def read(session: Any) -> list[tuple[str, dict[str, Any], str | None]]:
        live = require_live(session.get(LiveRun, live_id), who, live_id)
        if change_mark(live) == seen["mark"]:
            return []
        out = update_of(session, live, seen["seq"], seen["advice"])
        seen.update(seq=live.last_seq, advice=live.advice_seq, mark=change_mark(live))
        return [("update", out, f"{live.last_seq}.{live.advice_seq}")]

    return event_stream(read, live_id)


def _steerable(live_id: int) -> None:
    """Raise NotFound or Forbidden unless the person may change this live run."""
    from webapp.services.access import can_steer_live_run
    from webapp.services.errors import Forbidden

    if not can_steer_live_run(current_user, get_live_run(get_session(), current_user, live_id)):
        raise Forbidden("only the live run's owner, their group or staff may change it")


@bp.route("/live/<int:live_id>/target", methods=["POST"])
@login_required
def target(live_id: int):  # type: ignore[no-untyped-def]
    """Set the run's own target U (empty: the section's default, else the advisor's)."""
    _steerable(live_id)  # not yours: 404 (or 403) whatever the form holds
    form = TargetForm()
    if not form.validate_on_submit():
        flash("Target U: expected a positive number, or leave it empty for the default.", "error")
        return redirect(url_for("live.page", live_id=live_id))
    value = float(form.target_u.data) if form.target_u.data is not None else None
    try:
        set_target(get_session(), current_user, live_id, value)
        flash("Target U saved; the advice follows it from now on." if value else "Target U: the default again.")
    except ServiceError as exc:
        flash_refusal(exc)
    return redirect(url_for("live.page", live_id=live_id))


@bp.route("/live/<int:live_id>/finish", methods=["POST"])
@login_required
def finish(live_id: int):  # type: ignore[no-untyped-def]
    """Stop following: analyze the readings and store them as a run, then show the run."""
    _steerable(live_id)
    if not FinishForm().validate_on_submit():
        flash("The form expired; send it again.", "error")
        return redirect(url_for("live.page", live_id=live_id))
    session = get_session()
    try:
        run = finish_live_run(session, current_user, live_id)
    except ServiceError as exc:
        flash_refusal(exc, "Not stored: ")
        return redirect(url_for("live.page", live_id=live_id))
    flash("The live run is stored as this run, analyzed like any upload.")
    return redirect(url_for("runs.detail", run_id=run.id))
