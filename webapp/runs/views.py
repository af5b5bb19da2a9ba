"""Run list and run page: plot, result, budget, comparison, cautions; re-analysis and lock."""

from __future__ import annotations

from flask import Response, current_app, flash, get_flashed_messages, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from calc.io.runfile import KINDS
from webapp.auth.forms import ConfirmForm
from webapp.db import get_session
from webapp.plot_cache import budget_plot, draw_result_plots, run_plot, svg_response
from webapp.quantities import main_value
from webapp.runs.blueprint import bp
from webapp.runs.reanalyze_form import ReanalyzeForm
from webapp.services.access import require_editable
from webapp.services.analysis import AnalysisOptions
from webapp.services.calorimeters import calorimeters_query
from webapp.services.errors import Forbidden, ServiceError
from webapp.services.page_data import result_of, run_page
from webapp.services.review_page import review_panel
from webapp.services.run_list import FLAGS as RUN_FLAGS
from webapp.services.run_list import SORTS as RUN_SORTS
from webapp.services.run_list import filtered_runs_query, read_filter
from webapp.services.runs import get_run, lock_run, paginate, reanalyze_run

#: flash category prefix of a message that belongs next to one field of the re-analysis form
FIELD_FLASH = "field:"
_FORM_FIELDS = {
    "method": "method",
    "fore": "fore",
    "after": "after",
    "fore_start": "fore",
    "fore_end": "fore",
    "after_start": "after",
    "after_end": "after",
    "mixing_time": "mixing_time",
    "mixing_time_u": "mixing_time",
}


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """List the runs I may see, newest first, a page at a time."""
    page = request.args.get("page", 1, type=int) or 1
    per_page = int(current_app.config["PAGE_SIZE"])
    chosen = read_filter(request.args)
    session = get_session()
    result = paginate(session, filtered_runs_query(current_user, chosen), page, per_page)
    return render_template(
        "runs/index.html",
        page=result,
        chosen=chosen,
        kinds=KINDS,
        flags=RUN_FLAGS,
        sorts=RUN_SORTS,
        cups=[c.name for c in session.scalars(calorimeters_query())],
    )


@bp.route("/<int:run_id>")
@login_required
def detail(run_id: int):  # type: ignore[no-untyped-def]
    """Show a run: cautions, plot, result, budget, comparison, every result; re-analyze and lock."""
    field_errors: dict[str, list[str]] = {}
    for category, message in get_flashed_messages(with_categories=True):
        if category.startswith(FIELD_FLASH):
            field_errors.setdefault(category[len(FIELD_FLASH) :], []).append(message)
    return _detail_page(run_id, None, field_errors)


def _detail_page(run_id: int, form: ReanalyzeForm | None, field_errors: dict[str, list[str]], status: int = 200):  # type: ignore[no-untyped-def]
    """Render the run page; a refused re-analysis passes its form so that what was typed stays."""
    page = run_page(get_session(), current_user, run_id, request.args.get("result", type=int))
    if form is None:
        form = ReanalyzeForm(formdata=None)
        if page.result is not None:
            form.method.data = page.result.method
    return render_template(
        "runs/detail.html",
        page=page,
        run=page.run,
        result=page.result,
        unit=main_value(page.result)[2] if page.result is not None else "",
        form=form,
        field_errors=field_errors,
        lock_form=ConfirmForm(),
        review=review_panel(get_session(), current_user, page.run),
    ), status


@bp.route("/<int:run_id>/results/<int:result_id>/<string:which>.svg")
@login_required
def plot(run_id: int, result_id: int, which: str):  # type: ignore[no-untyped-def]
    """Send a plot of one result: ``plot`` (readings, drift model, corrected ΔT) or ``budget``."""
    run, result = result_of(get_session(), current_user, run_id, result_id)
    if which == "plot":
        svg, drawn = run_plot(run, result)
        return svg_response(svg, immutable=drawn)
    if which == "budget":
        return svg_response(budget_plot(result))
    return render_template("error.html", status=404, title="Not Found", message="No such plot."), 404


@bp.route("/<int:run_id>/reanalyze", methods=["POST"])
@login_required
def reanalyze(run_id: int):  # type: ignore[no-untyped-def]
    """Analyze the run again with the method and periods of the form; the earlier result is kept."""
    session = get_session()
    run = get_run(session, current_user, run_id)
    require_editable(current_user, run)  # a signed run is refused (409) whatever the form holds
    form = ReanalyzeForm()
    if not form.validate_on_submit():
        errors: dict[str, list[str]] = {}
        for name, messages in form.errors.items():
            errors.setdefault(_FORM_FIELDS.get(str(name), "form"), []).extend(messages)
        return _detail_page(run.id, form, errors, 400)
    options = AnalysisOptions(
        method=form.method.data,
        fore=form.period("fore"),
        after=form.period("after"),
        mixing_time=form.mixing(),
        monte_carlo_trials=int(current_app.config["MONTE_CARLO_TRIALS"]),
    )
    try:
        result = reanalyze_run(session, current_user, run, options, request.form.get("version", type=int))
    except ServiceError as exc:
        session.rollback()
        if exc.status in (403, 409):
            raise
        # the page again, with what was typed and the message beside its field (the same text as the API's 400)
        return _detail_page(run_id, form, {_FORM_FIELDS.get(exc.field or "", "form"): [exc.message]}, 400)
    draw_result_plots(run, result)  # into the cache now, so the page opens at once
    flash("Analyzed again; the earlier result is kept.")
    return redirect(url_for("runs.detail", run_id=run_id))


@bp.route("/<int:run_id>/lock", methods=["GET"])
@login_required
def lock_confirm(run_id: int):  # type: ignore[no-untyped-def]
    """The step before signing: what locking means, the result that will be final, and the button."""
    page = run_page(get_session(), current_user, run_id)
    if page.run.locked:
        flash("This run is locked (signed) already.")
        return redirect(url_for("runs.detail", run_id=run_id))
    if not page.may_lock:
        raise Forbidden("only the run's author or a coordinator may lock (sign) it")
    return render_template(
        "runs/lock_confirm.html",
        run=page.run,
        result=page.result,
        lock_form=ConfirmForm(),
        unit=main_value(page.result)[2] if page.result is not None else "",
    )


@bp.route("/<int:run_id>/lock", methods=["POST"])
@login_required
def lock(run_id: int):  # type: ignore[no-untyped-def]
    """Sign the run: from now on nothing about it can change."""
    session = get_session()
    run = get_run(session, current_user, run_id)
    form = ConfirmForm()
    if form.validate_on_submit():
        lock_run(session, current_user, run, request.form.get("version", type=int))
        flash("Run locked (signed): it can no longer be changed.")
    return redirect(url_for("runs.detail", run_id=run_id))


@bp.route("/<int:run_id>/<string:which>")
@login_required
def download(run_id: int, which: str):  # type: ignore[no-untyped-def]
    """Send the run file or the readings exactly as uploaded."""
    run = get_run(get_session(), current_user, run_id)
    if which == "run-file":
        return Response(
            run.run_toml, mimetype="application/toml", headers={"Content-Disposition": _attachment(run.run_file_name)}
        )
    if which == "readings":
        return Response(
            run.readings_raw, mimetype="text/csv", headers={"Content-Disposition": _attachment(run.readings_name)}
        )
    return render_template("error.html", status=404, title="Not Found", message="No such file."), 404


def _attachment(name: str) -> str:
    """Return a Content-Disposition header value for a stored file name (ASCII, quotes dropped)."""
    safe = "".join(ch for ch in name if ch.isascii() and ch.isprintable() and ch not in '"\\')
    return f'attachment; filename="{safe or "file"}"'


@bp.route("/samples")
@login_required
def series_index():  # type: ignore[no-untyped-def]
    """Replicates by sample (lot): each sample's runs with mean, t 95 % interval and ν_eff."""
    from webapp.services.samples import sample_series

    sample = (request.args.get("sample") or "").strip()
    return render_template(
        "runs/samples.html", series=sample_series(get_session(), current_user, sample=sample), sample=sample
    )
