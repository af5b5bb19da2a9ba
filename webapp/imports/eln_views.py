"""The ``.eln`` import page: upload an archive, see what became of each of its files."""

from __future__ import annotations

from flask import current_app, render_template, request
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from flask_wtf.file import FileField

from webapp.db import get_session
from webapp.imports.blueprint import bp
from webapp.services.classes import require_staff
from webapp.services.eln_import import import_eln
from webapp.services.errors import Invalid, ServiceError


class ElnForm(FlaskForm):
    """One .eln archive."""

    archive = FileField(".eln archive (from cupcal or another lab notebook)")


@bp.route("/eln", methods=["GET", "POST"])
@login_required
def eln():  # type: ignore[no-untyped-def]
    """Upload an .eln archive; the answer is the report of every file (or why it was refused)."""
    session = get_session()
    require_staff(current_user, "import archives")
    form = ElnForm()
    report, error = None, None
    if request.method == "POST":
        if not form.validate_on_submit():
            error = "; ".join(f"{k}: {', '.join(v)}" for k, v in form.errors.items())
        else:
            try:
                f = form.archive.data
                if not f or not f.filename:
                    raise Invalid("choose an .eln archive", field="archive")
                report = import_eln(
                    session,
                    current_user,
                    f.read(),
                    source=f.filename,
                    password_method=current_app.config.get("PASSWORD_METHOD", "scrypt"),
                )
            except ServiceError as exc:
                session.rollback()
                if exc.status in (403, 404):
                    raise
                error = exc.message
    status = 400 if error else 200
    return render_template("imports/eln.html", form=form, report=report, error=error), status
