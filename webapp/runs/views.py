"""Run list and run page (plain tables; the page developer adds plots and forms)."""

from __future__ import annotations

from flask import Response
from flask import current_app
from flask import flash
from flask import redirect
from flask import render_template
from flask import request
from flask import url_for
from flask_login import current_user
from flask_login import login_required

from webapp.auth.forms import ConfirmForm
from webapp.db import get_session
from webapp.runs import bp
from webapp.runs.forms import ReanalyseForm
from webapp.services.access import can_edit_run
from webapp.services.access import can_lock_run
from webapp.services.analysis import AnalysisOptions
from webapp.services.audit import audit_trail
from webapp.services.errors import ServiceError
from webapp.services.runs import get_run
from webapp.services.runs import lock_run
from webapp.services.runs import paginate
from webapp.services.runs import reanalyse_run
from webapp.services.runs import runs_query


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """List the runs I may see, newest first, a page at a time."""
    page = request.args.get("page", 1, type=int) or 1
    per_page = int(current_app.config["PAGE_SIZE"])
    result = paginate(get_session(), runs_query(current_user), page, per_page)
    return render_template("runs/index.html", page=result)


@bp.route("/<int:run_id>")
@login_required
def detail(run_id: int):  # type: ignore[no-untyped-def]
    """Show a run: its details, inputs, current result and earlier results."""
    session = get_session()
    run = get_run(session, current_user, run_id)
    form = ReanalyseForm()
    current = run.current_result
    if current is not None:
        form.method.data = current.method
    return render_template(
        "runs/detail.html",
        run=run,
        result=current,
        audit=session.scalars(audit_trail("run", run.id)).all(),
        form=form,
        lock_form=ConfirmForm(),
        may_edit=can_edit_run(current_user, run) and not run.locked,
        may_lock=can_lock_run(current_user, run) and not run.locked,
    )


@bp.route("/<int:run_id>/reanalyse", methods=["POST"])
@login_required
def reanalyse(run_id: int):  # type: ignore[no-untyped-def]
    """Analyse the run again with the method and periods of the form."""
    session = get_session()
    run = get_run(session, current_user, run_id)
    form = ReanalyseForm()
    if not form.validate_on_submit():
        flash("; ".join(f"{k}: {', '.join(v)}" for k, v in form.errors.items()), "error")
        return redirect(url_for("runs.detail", run_id=run.id))
    options = AnalysisOptions(
        method=form.method.data,
        fore=form.period("fore"),
        after=form.period("after"),
        monte_carlo_trials=int(current_app.config["MONTE_CARLO_TRIALS"]),
    )
    try:
        reanalyse_run(session, current_user, run, options)
        flash("Analysed again; the earlier result is kept.")
    except ServiceError as exc:
        session.rollback()
        if exc.status in (403, 409):
            raise
        flash(exc.message, "error")
    return redirect(url_for("runs.detail", run_id=run_id))


@bp.route("/<int:run_id>/lock", methods=["POST"])
@login_required
def lock(run_id: int):  # type: ignore[no-untyped-def]
    """Sign the run: from now on nothing about it can change."""
    session = get_session()
    run = get_run(session, current_user, run_id)
    form = ConfirmForm()
    if form.validate_on_submit():
        lock_run(session, current_user, run)
        flash("Run locked (signed).")
    return redirect(url_for("runs.detail", run_id=run_id))


@bp.route("/<int:run_id>/<string:which>")
@login_required
def download(run_id: int, which: str):  # type: ignore[no-untyped-def]
    """Send the run file or the readings exactly as uploaded."""
    run = get_run(get_session(), current_user, run_id)
    if which == "run-file":
        return Response(run.run_toml, mimetype="application/toml",
                        headers={"Content-Disposition": f'attachment; filename="{run.run_file_name}"'})
    if which == "readings":
        return Response(run.readings_raw, mimetype="text/csv",
                        headers={"Content-Disposition": f'attachment; filename="{run.readings_name}"'})
    return render_template("error.html", status=404, title="Not Found", message="No such file."), 404


