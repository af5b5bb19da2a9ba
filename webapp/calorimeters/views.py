"""Calorimeter list and page (plain tables; the page developer adds the history plot)."""

from __future__ import annotations

from flask import render_template
from flask_login import current_user
from flask_login import login_required

from webapp.calorimeters import bp
from webapp.db import get_session
from webapp.services.calorimeters import calibration_history
from webapp.services.calorimeters import calorimeters_query
from webapp.services.calorimeters import current_calibration
from webapp.services.calorimeters import get_calorimeter
from webapp.services.runs import paginate
from webapp.services.runs import runs_query


@bp.route("/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """List the calorimeters with the heat capacity in force."""
    session = get_session()
    rows = [(cal, current_calibration(session, cal.id)) for cal in session.scalars(calorimeters_query())]
    return render_template("calorimeters/index.html", rows=rows)


@bp.route("/<int:calorimeter_id>")
@login_required
def detail(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """Show a calorimeter: its heat-capacity history and its latest runs."""
    session = get_session()
    cal = get_calorimeter(session, calorimeter_id)
    history = session.scalars(calibration_history(cal.id)).all()
    runs = paginate(session, runs_query(current_user, calorimeter_id=cal.id), 1, 20)
    return render_template("calorimeters/detail.html", cal=cal, history=history,
                           current=history[-1] if history else None, runs=runs)
