"""API: exports and imports of run packages, card links, API tokens and webhooks."""

from __future__ import annotations

import datetime as dt
from typing import Any

from flask import Response, current_app, jsonify, request, url_for

from webapp.api import exchange_openapi  # noqa: F401  (documents these routes)
from webapp.api.blueprint import bp
from webapp.api.params import actor, as_int, as_text, coordinators_only, json_object
from webapp.api.schemas import iso, run_json
from webapp.db import get_session
from webapp.embed import links
from webapp.exports.bundle import export_selection_zip
from webapp.exports.document import export_json, selected_runs
from webapp.exports.report import report_html, report_pdf
from webapp.exports.results_csv import export_csv
from webapp.exports.rocrate import crate_zip
from webapp.models import MAX_ID
from webapp.services import webhooks
from webapp.services.errors import Invalid, TooLarge
from webapp.services.package_import import import_package
from webapp.services.runs import get_run
from webapp.services.tokens import tokens_of
from webapp.services.webhook_guard import guard_from_config

EXPORT_FORMATS = ("json", "csv", "html", "pdf", "ro-crate", "eln")


def _download(data: str | bytes, mimetype: str, filename: str) -> Response:
    response = Response(data, mimetype=mimetype)
    response.headers["Content-Disposition"] = f'attachment; filename="{filename}"'
    return response


@bp.get("/runs/<int:run_id>/export/<string:fmt>")
def export_run(run_id: int, fmt: str):  # type: ignore[no-untyped-def]
    """Export a run: json, csv, html (printable report), pdf (the same report), ro-crate (zip) or eln."""
    run = get_run(get_session(), actor(), run_id)
    if fmt == "json":
        return _download(export_json(get_session(), actor(), run_id), "application/json", f"cupcal-run-{run.id}.json")
    if fmt == "csv":
        return _download(export_csv([run]), "text/csv", f"cupcal-run-{run.id}.csv")
    if fmt == "html":
        response = Response(report_html(run), mimetype="text/html")
        response.headers["Content-Security-Policy"] = "default-src 'none'; img-src data:; style-src 'unsafe-inline'"
        return response
    if fmt == "pdf":
        return _download(report_pdf(run), "application/pdf", f"cupcal-run-{run.id}.pdf")
    if fmt == "ro-crate":
        return _download(crate_zip(run), "application/zip", f"cupcal-run-{run.id}.crate.zip")
    if fmt == "eln":
        from webapp.services import eln

        name, data = eln.export_runs(get_session(), actor(), [run.id], eln.report_renderer(pdf=True))
        return _download(data, "application/vnd.eln+zip", name)
    raise Invalid(f"unknown format {fmt!r}; expected one of: {', '.join(EXPORT_FORMATS)}", field="fmt")


MAX_SELECTED_RUNS = 500


def _run_ids(raw: str | None) -> list[int]:
    parts = [x for x in (raw or "").split(",") if x.strip()]
    if len(parts) > MAX_SELECTED_RUNS:
        raise TooLarge(f"at most {MAX_SELECTED_RUNS} runs in one export, got {len(parts)}", field="run_ids")
    try:
        return [as_int(x, "run_ids", low=1, high=MAX_ID) or 0 for x in parts]
    except Invalid:
        raise Invalid("expected run ids (1 to 2147483647) separated by commas, like 3,7,12", field="run_ids") from None


@bp.get("/exports")
def export_selection():  # type: ignore[no-untyped-def]
    """Export a selection of runs (``run_ids=3,7``): zip (CSV, JSON and RO-Crate per run) or csv."""
    runs = selected_runs(get_session(), actor(), _run_ids(request.args.get("run_ids")))
    fmt = request.args.get("format", "zip")
    if fmt == "zip":
        return _download(export_selection_zip(runs), "application/zip", "cupcal-runs.zip")
    if fmt == "csv":
        return _download(export_csv(runs), "text/csv", "cupcal-runs.csv")
    if fmt == "eln":
        from webapp.services import eln

        name, data = eln.export_runs(get_session(), actor(), [r.id for r in runs], eln.report_renderer())
        return _download(data, "application/vnd.eln+zip", name)
    raise Invalid(f"unknown format {fmt!r}; expected zip, csv or eln", field="format")


@bp.post("/packages")
def import_run_package():  # type: ignore[no-untyped-def]
    """Import one of our packages (JSON export or RO-Crate zip) as a new run."""
    if request.mimetype == "multipart/form-data":
        f = request.files.get("package")
        if f is None:
            raise Invalid("missing: upload the package as the form field 'package'", field="package")
        data = f.read()
    else:
        data = request.get_data()
    if not data:
        raise Invalid("the request body is empty; send the JSON export or the RO-Crate zip", field="package")
    run = import_package(get_session(), actor(), data, monte_carlo_trials=int(current_app.config["MONTE_CARLO_TRIALS"]))
    response = jsonify(run_json(run))
    response.status_code = 201
    response.headers["Location"] = url_for("api.get_run", run_id=run.id)
    return response


@bp.post("/runs/<int:run_id>/embed-link")
def embed_link(run_id: int):  # type: ignore[no-untyped-def]
    """Issue a signed, expiring link to the run's result card."""
    run = get_run(get_session(), actor(), run_id)
    token = links.issue(current_app.config["SECRET_KEY"], run.id, actor().id)
    max_age = int(current_app.config["EMBED_LINK_MAX_AGE"])
    expires = dt.datetime.fromtimestamp(int(links.clock()) + max_age, dt.UTC).replace(tzinfo=None)
    card = url_for("embed.card", run_id=run.id, link=token, _external=True)
    return jsonify(
        {
            "url": card,
            "expires_at": iso(expires),
            "max_age": max_age,
            "oembed": url_for("embed.oembed", url=card, format="json", _external=True),
        }
    )


@bp.get("/tokens")
def list_tokens():  # type: ignore[no-untyped-def]
    """List the caller's API tokens with scope and last use (never the secrets)."""
    return jsonify(
        {
            "items": [
                {
                    "id": t.id,
                    "label": t.label,
                    "prefix": t.prefix,
                    "scope": t.scope,
                    "created_at": iso(t.created_at),
                    "last_used_at": iso(t.last_used_at),
                    "revoked_at": iso(t.revoked_at),
                }
                for t in tokens_of(get_session(), actor())
            ]
        }
    )


def _hook_json(h: Any, secret: str | None = None) -> dict[str, Any]:
    out = {"id": h.id, "url": h.url, "active": h.active, "created_at": iso(h.created_at)}
    if secret is not None:
        out["secret"] = secret
    return out


@bp.get("/webhooks")
def list_hooks():  # type: ignore[no-untyped-def]
    """List the active webhooks (coordinators)."""
    return jsonify({"items": [_hook_json(h) for h in webhooks.list_webhooks(get_session(), actor())]})


@bp.post("/webhooks")
@coordinators_only("manage webhooks")
def add_hook():  # type: ignore[no-untyped-def]
    """Add a webhook (coordinators); its signing secret is returned once."""
    hook, secret = webhooks.add_webhook(
        get_session(),
        actor(),
        as_text(json_object().get("url"), "url", required=True) or "",
        guard_from_config(current_app.config),
    )
    response = jsonify(_hook_json(hook, secret))
    response.status_code = 201
    return response


@bp.delete("/webhooks/<int:webhook_id>")
@coordinators_only("manage webhooks")
def remove_hook(webhook_id: int):  # type: ignore[no-untyped-def]
    """Remove a webhook (coordinators); its delivery log is kept."""
    webhooks.remove_webhook(get_session(), actor(), webhook_id)
    return Response(status=204)


@bp.get("/webhooks/<int:webhook_id>/deliveries")
def hook_deliveries(webhook_id: int):  # type: ignore[no-untyped-def]
    """Return a webhook's delivery log, newest first (coordinators)."""
    return jsonify(
        {"items": [webhooks.delivery_json(d) for d in webhooks.deliveries_of(get_session(), actor(), webhook_id)]}
    )
