"""Accounts pages: one-time sign-in links, choosing one's own password, and a section's accounts.

Views parse the form, call one service (:mod:`webapp.services.accounts`) and render.
"""

from __future__ import annotations

import sqlalchemy.orm as so
from flask import Response, current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required, login_user

from webapp.auth.blueprint import bp
from webapp.db import get_session
from webapp.models import Section
from webapp.services import accounts
from webapp.services.access import require_coordinator
from webapp.services.classes import get_section
from webapp.services.errors import ServiceError

#: pages a person who must choose a password may still open
_OPEN = {"auth.password", "auth.logout", "auth.link", "auth.login", "static"}


@bp.before_app_request
def _require_own_password():  # type: ignore[no-untyped-def]
    """Send a person who must choose a password to that page first (pages only; the API answers as before)."""
    if (
        current_user.is_authenticated
        and getattr(current_user, "must_set_password", False)
        and request.endpoint not in _OPEN
        and not request.path.startswith("/api/")
        and not request.path.startswith("/embed/")
    ):
        return redirect(url_for("auth.password"))
    return None


@bp.route("/link/<string:secret>", methods=["GET", "POST"])
def link(secret: str):  # type: ignore[no-untyped-def]
    """A one-time sign-in link: GET shows whose it is (so a link preview does not spend it), POST signs in."""
    session = get_session()
    if request.method == "GET":
        person = accounts.link_valid(session, secret)
        if person is None:
            return render_template("auth/link.html", person=None), 404
        return render_template("auth/link.html", person=person)
    person = accounts.use_link(session, secret)
    if person is None:
        return render_template("auth/link.html", person=None), 404
    login_user(person)
    flash(f"Signed in as {person.name}. Choose your own password now.")
    return redirect(url_for("auth.password"))


@bp.route("/password", methods=["GET", "POST"])
@login_required
def password():  # type: ignore[no-untyped-def]
    """Choose one's own password (the current one is asked for unless a new one is required now)."""
    errors: dict[str, str] = {}
    if request.method == "POST":
        try:
            accounts.change_own_password(
                get_session(),
                current_user,
                request.form.get("password", ""),
                request.form.get("confirm", ""),
                current=request.form.get("current"),
                method=current_app.config["PASSWORD_METHOD"],
            )
            flash("Your password is set.")
            return redirect(url_for("main.index"))
        except ServiceError as exc:
            get_session().rollback()
            errors[exc.field or "password"] = exc.message
    return render_template("auth/password.html", errors=errors, minimum=accounts.MIN_PASSWORD_LENGTH), (
        400 if errors else 200
    )


def _coordinated_section(section_id: int, what: str) -> tuple[so.Session, Section]:
    """Return the session and the section, once the caller is known to be a coordinator who may ``what``."""
    require_coordinator(current_user, what)
    session = get_session()
    return session, get_section(session, current_user, section_id)


@bp.route("/sections/<int:section_id>/accounts")
@login_required
def section_accounts(section_id: int):  # type: ignore[no-untyped-def]
    """The accounts of a section's people (coordinators): set passwords, hand out sign-in links."""
    session, section = _coordinated_section(section_id, "manage accounts")
    return render_template(
        "auth/accounts.html",
        section=section,
        people=accounts.section_people(session, section.id),
        minimum=accounts.MIN_PASSWORD_LENGTH,
        days=accounts.SIGN_IN_LINK_DAYS,
    )


@bp.post("/sections/<int:section_id>/sign-in-links")
@login_required
def section_links(section_id: int):  # type: ignore[no-untyped-def]
    """Make sign-in links for the chosen people of a section: a printable page, or CSV (``format=csv``)."""
    session, section = _coordinated_section(section_id, "hand out sign-in links")
    chosen = {int(x) for x in request.form.getlist("person_id") if x.isdigit()}
    people = [p for p in accounts.section_people(session, section.id) if p.id in chosen]
    try:
        issued = accounts.issue_links(session, current_user, people)
    except ServiceError as exc:
        session.rollback()
        flash(exc.message, "error")
        return redirect(url_for("auth.section_accounts", section_id=section.id))
    base = request.host_url.rstrip("/") + request.script_root
    if request.form.get("format") == "csv":
        return Response(
            accounts.links_csv(issued, base),
            mimetype="text/csv",
            headers={
                "Content-Disposition": f'attachment; filename="sign-in-links-section-{section.id}.csv"',
                "Cache-Control": "no-store",
            },
        )
    page = render_template("auth/links.html", section=section, links=issued, base=base)
    return page, 200, {"Cache-Control": "no-store"}


@bp.post("/people/<int:person_id>/password")
@login_required
def set_password(person_id: int):  # type: ignore[no-untyped-def]
    """Set (or reset) a person's password as a coordinator."""
    require_coordinator(current_user, "set other people's passwords")
    session = get_session()
    person = accounts.find_person(session, person_id)
    try:
        accounts.set_password(
            session,
            current_user,
            person,
            request.form.get("password", ""),
            must_change=request.form.get("must_change") == "yes",
            method=current_app.config["PASSWORD_METHOD"],
        )
        flash(f"Password of {person.name} set.")
    except ServiceError as exc:
        session.rollback()
        flash(exc.message, "error")
    section_id = request.form.get("section_id", type=int)
    if section_id:
        return redirect(url_for("auth.section_accounts", section_id=section_id))
    return redirect(url_for("classes.index"))
