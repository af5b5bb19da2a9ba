"""The ``.eln`` import page: upload an archive, see what became of each of its files."""

from __future__ import annotations

from typing import Any

from flask import current_app, render_template, request
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from sqlalchemy.orm import Session

from webapp.db import get_session
from webapp.imports.blueprint import bp
from webapp.imports.views import report_of
from webapp.services.classes import require_staff
from webapp.services.eln_import import import_eln
from webapp.services.errors import Invalid


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
        report, error = report_of(form, lambda: _import(session, form))
    status = 400 if error else 200
    return render_template("imports/eln.html", form=form, report=report, error=error), status


def _import(session: Session, form: ElnForm) -> Any:
    """Import the archive sent; return the report of every file."""
    f = form.archive.data
    if not f or not f.filename:
        raise Invalid("choose an .eln archive", field="archive")
    password_method = current_app.config.get("PASSWORD_METHOD", "scrypt")
    return import_eln(session, current_user, f.read(), source=f.filename, password_method=password_method)
