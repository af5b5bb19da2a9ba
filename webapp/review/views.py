"""Review forms: each view reads the form, calls one service and goes back to the page it came from."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from flask import flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from webapp.db import get_session
from webapp.error_handlers import flash_refusal
from webapp.review.blueprint import bp
from webapp.services import comments as comment_service
from webapp.services.access import require_coordinator
from webapp.services.classes import get_section, require_staff
from webapp.services.errors import Invalid, ServiceError
from webapp.services.marks import bands_text, scheme_of, set_mark, set_scheme
from webapp.services.review import review_run

_DONE = {
    "withdraw": "Run withdrawn.",
    "restore": "Run restored.",
    "exclude": "Run excluded from the statistics.",
    "include": "Run counted in the statistics again.",
    "accept": "Run accepted.",
    "unaccept": "Acceptance taken back.",
}


def _back(run_id: int, anchor: str = "review") -> str:
    return url_for("runs.detail", run_id=run_id) + f"#{anchor}"


def _on_run(run_id: int, anchor: str, work: Callable[[], str]) -> Any:
    """Do ``work`` (it returns what to tell) and go back to the run's page at ``anchor``; a refusal is told instead."""
    try:
        flash(work())
    except ServiceError as exc:
        flash_refusal(exc)
    return redirect(_back(run_id, anchor))


@bp.post("/runs/<int:run_id>/review")
@login_required
def review(run_id: int):  # type: ignore[no-untyped-def]
    """Withdraw, restore, exclude, include, accept or unaccept a run, with a reason."""
    action = request.form.get("action", "")

    def work() -> str:
        review_run(get_session(), current_user, run_id, action, request.form.get("reason", ""))
        return _DONE.get(action, "Saved.")

    return _on_run(run_id, "review", work)


@bp.post("/runs/<int:run_id>/comments")
@login_required
def run_comment(run_id: int):  # type: ignore[no-untyped-def]
    """Comment on a run (staff)."""
    require_staff(current_user, "comment on runs")

    def work() -> str:
        comment_service.add_run_comment(get_session(), current_user, run_id, request.form.get("body", ""))
        return "Comment saved."

    return _on_run(run_id, "comments", work)


@bp.post("/runs/<int:run_id>/mark")
@login_required
def mark(run_id: int):  # type: ignore[no-untyped-def]
    """Set a run's mark by hand (blank: back to the scheme's), with a reason (staff)."""
    require_staff(current_user, "set marks")
    text = request.form.get("points", "").strip()

    def work() -> str:
        try:
            points = float(text) if text else None
        except ValueError:
            raise Invalid(f"expected a number of points, got {text!r}", field="points") from None
        set_mark(get_session(), current_user, run_id, points, request.form.get("reason", ""))
        return "Mark saved." if points is not None else "The scheme's mark applies again."

    return _on_run(run_id, "mark", work)


@bp.post("/groups/<int:group_id>/comments")
@login_required
def group_comment(group_id: int):  # type: ignore[no-untyped-def]
    """Comment on a group's work (staff); back to the section's dashboard."""
    require_staff(current_user, "comment on groups")
    session = get_session()
    try:
        comment = comment_service.add_group_comment(session, current_user, group_id, request.form.get("body", ""))
        flash("Comment saved.")
        section_id = comment_service.get_group(session, current_user, comment.group_id).section_id
    except ServiceError as exc:
        flash_refusal(exc)
        section_id = request.form.get("section_id", type=int)
    if section_id:
        return redirect(url_for("classes.section_board", section_id=section_id) + f"#group-{group_id}")
    return redirect(url_for("classes.index"))


@bp.route("/classes/sections/<int:section_id>/marking", methods=["GET", "POST"])
@login_required
def marking(section_id: int):  # type: ignore[no-untyped-def]
    """A section's marking scheme: see it (staff), set it (coordinators)."""
    require_staff(current_user, "see marking schemes")
    session = get_session()
    section = get_section(session, current_user, section_id)
    en, rel = request.form.get("en", ""), request.form.get("relative", "")
    status = 200
    if request.method == "POST":
        require_coordinator(current_user, "set marking schemes")
        try:
            set_scheme(session, current_user, section.id, en=en, relative=rel)
            flash("Marking scheme saved.")
            return redirect(url_for("review.marking", section_id=section.id))
        except ServiceError as exc:
            flash_refusal(exc)
            status = 400
    bands, own = scheme_of(session, section.id)
    if request.method == "GET" or status == 200:
        en, rel = bands_text(bands["en"]), bands_text(bands["relative"], percent=True)
    return render_template("review/marking.html", section=section, own=own, en=en, relative=rel), status
