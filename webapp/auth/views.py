"""Sign in, sign out, and API tokens."""

from __future__ import annotations

from urllib.parse import urlsplit

from flask import flash, make_response, redirect, render_template, request, url_for
from flask_login import current_user, login_required, login_user, logout_user

from webapp.auth.blueprint import bp
from webapp.auth.forms import ConfirmForm, LoginForm, TokenForm
from webapp.db import get_session
from webapp.services import people, throttle
from webapp.services.errors import ServiceError
from webapp.services.tokens import issue_scoped_token, tokens_of


def _safe_next(target: str | None) -> str:
    """Return ``target`` when it is a path on this site, else the home page."""
    if target:
        parts = urlsplit(target)
        if not parts.scheme and not parts.netloc and target.startswith("/") and not target.startswith("//"):
            return target
    return url_for("main.index")


@bp.route("/login", methods=["GET", "POST"])
def login():  # type: ignore[no-untyped-def]
    """Show the sign-in form and sign in."""
    if current_user.is_authenticated:
        return redirect(url_for("main.index"))
    form = LoginForm()
    if form.validate_on_submit():
        session = get_session()
        email = (form.email.data or "").strip().lower()
        address = request.remote_addr or "unknown"
        try:
            throttle.check(session, email, address)
        except throttle.TooManyAttempts as exc:
            form.password.errors.append(exc.message)
            response = make_response(render_template("auth/login.html", form=form), 429)
            response.headers["Retry-After"] = str(exc.retry_after)
            return response
        person = people.authenticate(session, email, form.password.data or "")
        if person is not None:
            throttle.record_success(session, email)
            login_user(person)
            return redirect(_safe_next(request.args.get("next")))
        throttle.record_failure(session, email, address)
        form.password.errors.append("E-mail address or password is wrong.")
    status = 400 if request.method == "POST" else 200
    return render_template("auth/login.html", form=form), status


@bp.route("/logout", methods=["POST"])
def logout():  # type: ignore[no-untyped-def]
    """Sign out."""
    form = ConfirmForm()
    if form.validate_on_submit():
        logout_user()
        flash("Signed out.")
    return redirect(url_for("auth.login"))


@bp.route("/tokens", methods=["GET", "POST"])
@login_required
def tokens():  # type: ignore[no-untyped-def]
    """List my API tokens and create one (its secret is shown once)."""
    session = get_session()
    form = TokenForm()
    secret = None
    if form.validate_on_submit():
        _token, secret = issue_scoped_token(session, current_user, form.label.data or "", form.scope.data or "read")
    mine = tokens_of(session, current_user)
    return render_template("auth/tokens.html", form=form, tokens=mine, secret=secret, revoke_form=ConfirmForm())


@bp.route("/tokens/<int:token_id>/revoke", methods=["POST"])
@login_required
def revoke(token_id: int):  # type: ignore[no-untyped-def]
    """Revoke one of my API tokens."""
    form = ConfirmForm()
    if form.validate_on_submit():
        try:
            people.revoke_token(get_session(), current_user, token_id)
            flash("Token revoked.")
        except ServiceError as exc:
            if exc.status == 404:  # not one of mine: as everywhere, a 404 that reveals nothing
                raise
            flash(exc.message, "error")
    return redirect(url_for("auth.tokens"))
