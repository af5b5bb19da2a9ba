"""Bulk import views: the upload form and the report (works without JavaScript)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from flask import current_app, render_template, request
from flask_login import current_user, login_required
from flask_wtf import FlaskForm
from flask_wtf.file import FileField, MultipleFileField
from sqlalchemy.orm import Session
from wtforms import BooleanField

from webapp.db import get_session
from webapp.imports.blueprint import bp
from webapp.services.classes import get_section, require_staff
from webapp.services.errors import Invalid, ServiceError
from webapp.services.imports import Files, files_from_zip, import_files

#: default upload limit of an import (a section's zip); ``IMPORT_MAX_UPLOAD_BYTES`` overrides it
IMPORT_MAX_UPLOAD_BYTES = 64 * 1024 * 1024


class ImportForm(FlaskForm):
    """A zip, or the files of a folder, and an optional mapping CSV."""

    archive = FileField("Zip of run files (.toml) and logs (.csv)")
    files = MultipleFileField("…or the files of a folder")
    mapping = FileField("Mapping CSV (file, group[, bench]), when names do not say the group")
    create_groups = BooleanField("Create the groups that [info] group (or the mapping) names and this section lacks")


@bp.before_request
def _larger_uploads() -> None:
    request.max_content_length = int(current_app.config.get("IMPORT_MAX_UPLOAD_BYTES", IMPORT_MAX_UPLOAD_BYTES))


def _files(form: ImportForm) -> Files:
    if form.archive.data and form.archive.data.filename:
        return files_from_zip(form.archive.data.read(), source=form.archive.data.filename)
    out = Files()
    for f in form.files.data or []:
        if f and f.filename:
            name = f.filename.replace("\\", "/")
            # a browser sends "folder/sub/file": keep the path below the chosen folder
            out.add(name.split("/", 1)[1] if "/" in name else name, f.read())
    if not out:
        raise Invalid("choose a zip file or the files of a folder", field="archive")
    return out


def report_of(form: FlaskForm, work: Callable[[], Any]) -> tuple[Any, str | None]:
    """Run ``work`` for a posted ``form`` that is valid; return ``(its report, None)`` or ``(None, the error)``.

    A service's 403 or 404 is raised on (the error page); any other refusal is shown on the form, nothing stored.
    """
    if not form.validate_on_submit():
        return None, "; ".join(f"{k}: {', '.join(v)}" for k, v in form.errors.items())
    try:
        return work(), None
    except ServiceError as exc:
        get_session().rollback()
        if exc.status in (403, 404):
            raise
        return None, exc.message


def _mapping(form: ImportForm) -> str | None:
    """Return the mapping CSV sent with the import as text (None: none sent)."""
    if not (form.mapping.data and form.mapping.data.filename):
        return None
    try:
        return form.mapping.data.read().decode("utf-8-sig")
    except UnicodeDecodeError:
        raise Invalid("the mapping is not UTF-8 text; save it as CSV (UTF-8)", field="mapping") from None


@bp.route("/sections/<int:section_id>", methods=["GET", "POST"])
@login_required
def new(section_id: int):  # type: ignore[no-untyped-def]
    """Upload a section's runs; the answer is the report of every file."""
    session = get_session()
    require_staff(current_user, "import runs")
    section = get_section(session, current_user, section_id)
    form = ImportForm()
    report, error = None, None
    if request.method == "POST":
        report, error = report_of(form, lambda: _import(session, section.id, form))
    status = 400 if error else 200
    return render_template("imports/new.html", section=section, form=form, report=report, error=error), status


def _import(session: Session, section_id: int, form: ImportForm) -> Any:
    """Import the files sent into the section; return the report of every file."""
    mapping = _mapping(form)  # read before the files: its error is the one named
    create_groups = bool(form.create_groups.data)
    return import_files(session, current_user, section_id, _files(form), mapping=mapping, create_groups=create_groups)
