"""Home page."""

from __future__ import annotations

from flask import current_app, render_template
from flask_login import current_user, login_required

from webapp.db import get_session
from webapp.main.blueprint import bp
from webapp.services.calorimeters import calorimeters_due
from webapp.services.runs import recent_runs

RECENT = 10


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """Show the newest runs I may see and the calorimeters due for calibration."""
    session = get_session()
    days = int(current_app.config["CALIBRATION_DUE_DAYS"])
    return render_template(
        "main/index.html",
        runs=recent_runs(session, current_user, RECENT),
        due=calorimeters_due(session, max_age_days=days),
        due_days=days,
    )
