"""Class pages: views parse input, call one service and render."""

from __future__ import annotations

from flask import Response, current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from webapp.classes.blueprint import bp
from webapp.classes.forms import BenchForm, CourseForm, RosterForm, SectionForm
from webapp.db import get_session
from webapp.error_handlers import flash_refusal
from webapp.exports.grading import grading_csv, grading_extras, grading_xlsx
from webapp.plots.classes import control_chart_svg, distribution_svg
from webapp.services.access import require_coordinator
from webapp.services.board_view import BoardPage, board_page
from webapp.services.calorimeters import calorimeters_query
from webapp.services.classes import (
    courses_query,
    create_bench,
    create_section,
    get_section,
    import_roster,
    visible_sections,
)
from webapp.services.comments import group_comments
from webapp.services.control import control_view
from webapp.services.dashboard import FLAGS, Dashboard, course_dashboard, section_dashboard
from webapp.services.errors import Invalid, ServiceError
from webapp.services.people import create_course
from webapp.services.series import group_series

#: a section plot shows one row per group up to this many groups, else one row for all
MAX_PLOT_ROWS = 40


def _sort_args(default: str) -> tuple[str, bool]:
    return request.args.get("sort", default), request.args.get("dir", "asc") == "desc"


def _view_args(board: Dashboard) -> tuple[BoardPage, dict[str, str]]:
    """Return the page of the board the request asks for, and the query arguments to keep."""
    page = request.args.get("page", "1")
    if not page.isdigit():
        raise Invalid("expected a page number", field="page")
    shown = board_page(
        board.rows, query=request.args.get("q", ""), flag=request.args.get("flag", ""), page=int(page), flags=FLAGS
    )
    keep = {k: v for k, v in (("q", shown.query), ("flag", shown.flag)) if v}
    return shown, keep


def _plot(board: Dashboard, by_section: bool) -> str | None:
    if not board.stats:
        return None
    st = board.stats[0]
    rows = sorted(
        (r for r in board.rows if r.measurement == st.measurement and r.value is not None and r.included),
        key=lambda r: r.run_id,
    )
    many = len({r.group for r in rows}) > MAX_PLOT_ROWS
    labels = [r.section if by_section else ("all groups" if many else r.group) for r in rows]
    return distribution_svg(
        tuple(r.value for r in rows),
        tuple(labels),
        tuple(bool(r.flags) for r in rows),
        unit=st.unit,
        measurement=st.measurement,
        reference=st.reference,
        reference_U=st.reference_U,
    )


@bp.route("/classes/")
@login_required
def index():  # type: ignore[no-untyped-def]
    """List the courses and the sections I may see."""
    session = get_session()
    return render_template(
        "classes/index.html",
        sections=visible_sections(session, current_user),
        courses=session.scalars(courses_query()).all(),
        course_form=CourseForm(),
        roster_form=RosterForm(),
    )


@bp.route("/classes/courses", methods=["POST"])
@login_required
def new_course():  # type: ignore[no-untyped-def]
    """Add a course (coordinators)."""
    require_coordinator(current_user, "manage courses")  # the role first, whatever the form holds
    form = CourseForm()
    if form.validate_on_submit():
        try:
            create_course(get_session(), current_user, name=form.name.data, term=form.term.data or "")
            flash("Course added.")
        except ServiceError as exc:
            if exc.status == 403:
                raise
            flash(exc.message, "error")
    else:
        flash("; ".join(f"{k}: {', '.join(v)}" for k, v in form.errors.items()), "error")
    return redirect(url_for("classes.index"))


@bp.route("/classes/courses/<int:course_id>/sections", methods=["POST"])
@login_required
def new_section(course_id: int):  # type: ignore[no-untyped-def]
    """Add a section to a course (coordinators)."""
    require_coordinator(current_user, "manage sections")
    form = SectionForm()
    if form.validate_on_submit():
        try:
            create_section(get_session(), current_user, course_id=course_id, name=form.name.data)
            flash("Section added.")
        except ServiceError as exc:
            flash_refusal(exc)
    return redirect(url_for("classes.index"))


@bp.route("/classes/roster", methods=["POST"])
@login_required
def roster():  # type: ignore[no-untyped-def]
    """Import a roster CSV (coordinators); all rows or none."""
    require_coordinator(current_user, "import rosters")
    form = RosterForm()
    session = get_session()
    errors: list[str] = []
    report = None
    if form.validate_on_submit() and form.roster.data:
        data = form.roster.data.read()
        try:
            text = data.decode("utf-8-sig")
            report = import_roster(
                session,
                current_user,
                text,
                source=form.roster.data.filename or "roster.csv",
                password_method=current_app.config["PASSWORD_METHOD"],
            )
        except UnicodeDecodeError:
            errors = ["the roster is not UTF-8 text; save it as CSV (UTF-8)"]
        except ServiceError as exc:
            session.rollback()
            if exc.status == 403:
                raise
            errors = getattr(exc, "errors", [exc.message])
    else:
        errors = ["choose a roster file (CSV)"]
    return render_template("classes/roster.html", report=report, errors=errors), (200 if report else 400)


@bp.route("/classes/sections/<int:section_id>", methods=["GET", "POST"])
@login_required
def section(section_id: int):  # type: ignore[no-untyped-def]
    """A section: its groups and benches; coordinators add benches."""
    session = get_session()
    sec = get_section(session, current_user, section_id)
    form = BenchForm()
    form.calorimeter_id.choices = [SelectChoice(0, "—")] + [
        SelectChoice(c.id, c.name) for c in session.scalars(calorimeters_query())
    ]
    status = 200
    if request.method == "POST":
        require_coordinator(current_user, "manage benches")  # after get_section: not-yours stays 404
        if form.validate_on_submit():
            try:
                create_bench(
                    session,
                    current_user,
                    section_id=sec.id,
                    name=form.name.data,
                    calorimeter_id=form.calorimeter_id.data or None,
                    thermometer=form.thermometer.data or "",
                    thermometer_resolution=form.resolution.data or None,
                )
                flash("Bench added.")
                return redirect(url_for("classes.section", section_id=sec.id))
            except ServiceError as exc:
                session.rollback()
                if exc.status == 403:
                    raise
                flash(exc.message, "error")
        else:
            flash("; ".join(f"{k}: {', '.join(v)}" for k, v in form.errors.items()), "error")
        status = 400
    return render_template("classes/section.html", section=sec, form=form, section_form=SectionForm()), status


@bp.route("/classes/sections/<int:section_id>/dashboard")
@login_required
def section_board(section_id: int):  # type: ignore[no-untyped-def]
    """The dashboard of a section: plot, statistics, sortable table with flags, feedback per group."""
    session = get_session()
    sort, desc = _sort_args("group")
    board = section_dashboard(session, current_user, section_id, sort=sort, descending=desc)
    shown, keep = _view_args(board)
    group_ids = {r.group: r.group_id for r in board.rows if r.group_id is not None}
    return render_template(
        "classes/dashboard.html",
        board=board,
        plot=_plot(board, False),
        flags=FLAGS,
        series=group_series(board.rows, session),
        endpoint="classes.section_board",
        args={"section_id": section_id},
        export="classes.section_export",
        shown=shown,
        link={"section_id": section_id, **keep},
        group_ids=group_ids,
        group_comments=group_comments(session, current_user, list(group_ids.values())),
    )


@bp.route("/classes/courses/<int:course_id>/dashboard")
@login_required
def course_board(course_id: int):  # type: ignore[no-untyped-def]
    """The dashboard of a whole course."""
    sort, desc = _sort_args("section")
    board = course_dashboard(get_session(), current_user, course_id, sort=sort, descending=desc)
    shown, keep = _view_args(board)
    return render_template(
        "classes/dashboard.html",
        board=board,
        plot=_plot(board, True),
        flags=FLAGS,
        series=None,
        endpoint="classes.course_board",
        args={"course_id": course_id},
        export="classes.course_export",
        shown=shown,
        link={"course_id": course_id, **keep},
    )


def _export(board: Dashboard, fmt: str, stem: str) -> Response:
    extras = grading_extras(get_session(), board)
    if fmt == "xlsx":
        return Response(
            grading_xlsx(board, extras),
            mimetype="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
            headers={"Content-Disposition": f'attachment; filename="{stem}.xlsx"'},
        )
    if fmt != "csv":
        raise Invalid("expected format csv or xlsx", field="format")
    return Response(
        grading_csv(board, extras),
        mimetype="text/csv",
        headers={"Content-Disposition": f'attachment; filename="{stem}.csv"'},
    )


@bp.route("/classes/sections/<int:section_id>/export.<fmt>")
@login_required
def section_export(section_id: int, fmt: str):  # type: ignore[no-untyped-def]
    """Export a section for grading (coordinators and technicians): CSV or .xlsx."""
    from webapp.services.classes import require_staff

    require_staff(current_user, "export results for grading")
    sort, desc = _sort_args("group")
    board = section_dashboard(get_session(), current_user, section_id, sort=sort, descending=desc)
    return _export(board, fmt, f"section-{section_id}")


@bp.route("/classes/courses/<int:course_id>/export.<fmt>")
@login_required
def course_export(course_id: int, fmt: str):  # type: ignore[no-untyped-def]
    """Export a course for grading: CSV or .xlsx."""
    sort, desc = _sort_args("section")
    board = course_dashboard(get_session(), current_user, course_id, sort=sort, descending=desc)
    return _export(board, fmt, f"course-{course_id}")


@bp.route("/calorimeters/<int:calorimeter_id>/control")
@login_required
def control(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """The control chart of a calorimeter's heat capacity (default) or of a check standard, with run-rule
    flags and the calibration due date."""
    from webapp.services.control import HEAT_CAPACITY

    baseline = request.args.get("baseline", type=int)
    view = control_view(
        get_session(),
        current_user,
        calorimeter_id,
        standard=request.args.get("standard") or None,
        baseline=baseline,
        default_days=int(current_app.config["CALIBRATION_DUE_DAYS"]),
    )
    svg = None
    if view.chart is not None:
        svg = control_chart_svg(
            view.chart.values,
            view.chart.limits,
            [bool(p["violations"]) for p in view.points],
            unit=view.unit,
            standard=view.standard or "",
            baseline=view.baseline,
            xlabel="calibration, in the order measured" if view.standard == HEAT_CAPACITY else "run, in time order",
        )
    return render_template("classes/control.html", view=view, svg=svg)
