"""API: ``.eln`` archives of a section, a calorimeter or the whole notebook, and their import.

A run's archive and a selection's are ``/api/runs/<id>/export/eln`` and
``/api/exports?format=eln`` (in :mod:`webapp.api.exchange`).
"""

from __future__ import annotations

from flask import Response, current_app, jsonify, request

from webapp.api.blueprint import bp
from webapp.api.params import actor
from webapp.db import get_session
from webapp.imports.views import IMPORT_MAX_UPLOAD_BYTES
from webapp.services import eln
from webapp.services.classes import require_staff
from webapp.services.eln_import import import_eln
from webapp.services.errors import Invalid

ELN_TYPE = "application/vnd.eln+zip"


def eln_download(name: str, data: bytes) -> Response:
    """Return an archive as a download."""
    response = Response(data, mimetype=ELN_TYPE)
    response.headers["Content-Disposition"] = f'attachment; filename="{name}"'
    return response


@bp.get("/sections/<int:section_id>/export.eln")
def export_section_eln(section_id: int):  # type: ignore[no-untyped-def]
    """A section's runs as an .eln archive (one experiment folder per run)."""
    return eln_download(*eln.export_section(get_session(), actor(), section_id, eln.report_renderer()))


@bp.get("/calorimeters/<int:calorimeter_id>/export.eln")
def export_calorimeter_eln(calorimeter_id: int):  # type: ignore[no-untyped-def]
    """A calorimeter with its calibrations and calibration runs as an .eln archive."""
    return eln_download(*eln.export_calorimeter(get_session(), actor(), calorimeter_id, eln.report_renderer()))


@bp.get("/notebook/export.eln")
def export_notebook_eln():  # type: ignore[no-untyped-def]
    """Every calorimeter and every run the caller may see as an .eln archive."""
    return eln_download(*eln.export_notebook(get_session(), actor(), eln.report_renderer()))


def uploaded_archive() -> tuple[str, bytes]:
    """Return (name, bytes) of the archive sent as the multipart file 'archive' or as the body."""
    if request.mimetype == "multipart/form-data":
        f = request.files.get("archive")
        if f is None:
            raise Invalid("send the .eln archive as the multipart file 'archive'", field="archive")
        return f.filename or "archive.eln", f.read()
    data = request.get_data()
    if not data:
        raise Invalid("the request body is empty; send the .eln archive", field="archive")
    return request.args.get("name") or "archive.eln", data


@bp.post("/eln-imports")
def import_eln_route():  # type: ignore[no-untyped-def]
    """Import an .eln archive (coordinators, technicians); report every file. A refused archive stores nothing."""
    request.max_content_length = int(current_app.config.get("IMPORT_MAX_UPLOAD_BYTES", IMPORT_MAX_UPLOAD_BYTES))
    require_staff(actor(), "import archives")
    name, data = uploaded_archive()
    report = import_eln(
        get_session(), actor(), data, source=name, password_method=current_app.config.get("PASSWORD_METHOD", "scrypt")
    )
    return jsonify(report.as_dict())
