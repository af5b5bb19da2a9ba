"""The result card and oEmbed views."""

from __future__ import annotations

import base64
from urllib.parse import parse_qs, urlsplit

from flask import abort, current_app, jsonify, render_template, request, url_for
from flask_login import current_user
from markupsafe import escape

from calc import __version__
from calc.refdata.comparison import verdict
from webapp.db import get_session
from webapp.embed import links
from webapp.embed.blueprint import bp
from webapp.models import MAX_ID, Person, Run
from webapp.quantities import result_value
from webapp.services.checks import flagged_checks
from webapp.services.errors import Forbidden, Invalid, NotFound, NotSignedIn
from webapp.services.runs import get_run
from webapp.services.tokens import token_for_secret

CARD_WIDTH = 480
CARD_HEIGHT = 420


def reader(run_id: int, link: str | None) -> Person:
    """Return the person on whose behalf the card of ``run_id`` is read.

    :raise Forbidden: for a bad or expired link
    :raise NotSignedIn: when the request carries no link, token or session

    An API token is taken from the ``Authorization`` header only, never from the URL: a URL ends
    up in server and proxy logs, and a token (unlike a link) opens every run its owner may see.
    """
    session = get_session()
    if link:
        person_id = links.verify(
            current_app.config["SECRET_KEY"], link, run_id, int(current_app.config["EMBED_LINK_MAX_AGE"])
        )
        person = session.get(Person, person_id)
        if person is None or not person.active:
            raise Forbidden("this link is no longer valid")
        return person
    header = request.headers.get("Authorization", "")
    secret = header.partition(" ")[2].strip() if header.lower().startswith("bearer ") else ""
    if secret:
        found = token_for_secret(session, secret)
        if found is None:
            raise NotSignedIn("the API token is unknown or revoked")
        return found.person
    if current_user.is_authenticated:
        return current_user._get_current_object()
    raise NotSignedIn("this card needs a signed link (?link=…) or an API token (Authorization: Bearer …)")


def card_flags(run: Run) -> list[dict[str, str]]:
    """Return the flags shown on a card: warnings, an unsatisfactory E_n, an unsigned run."""
    result = run.current_result
    flags = []
    if result is not None:
        for w in result.warnings or []:
            flags.append({"name": "warning", "detail": str(w)})
        for c in flagged_checks(result.checks):
            flags.append({"name": "check warning", "detail": str(c.get("message", ""))})
        v = verdict(result.comparison)
        if v is not None and not v.satisfactory:
            flags.append({"name": "|En| > 1", "detail": f"E_n = {v.En:+.2f} against the {v.label} (ISO 13528)"})
    if not run.locked:
        flags.append({"name": "not signed", "detail": "the run may still change"})
    return flags


def plot_data_uri(run: Run) -> str:
    """Return the run plot of the current result as a data: URI (so the card needs no second request)."""
    from webapp.plot_cache import run_plot

    svg, _ok = run_plot(run, run.current_result)
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


@bp.get("/embed/runs/<int:run_id>")
def card(run_id: int):  # type: ignore[no-untyped-def]
    """Show the compact result card of a run."""
    person = reader(run_id, request.args.get("link"))
    run = get_run(get_session(), person, run_id)
    result = run.current_result
    return render_template(
        "embed/card.html",
        run=run,
        result=result,
        main=result_value(result, result.main) if result else None,
        plot_uri=plot_data_uri(run) if result else "",
        flags=card_flags(run),
        version=__version__,
    )


def _pixels_or_id(text: str, most: int) -> bool:
    """Tell whether ``text`` is a whole number from 1 to ``most`` in ASCII digits (``str.isdigit`` also
    takes '٣' and '²', and a 5000-digit number cannot even be turned into an int)."""
    return text.isascii() and text.isdigit() and len(text) <= len(str(most)) and 0 < int(text) <= most


@bp.get("/oembed")
def oembed():  # type: ignore[no-untyped-def]
    """Return the oEmbed 1.0 ``rich`` response for a card URL (or a run page URL)."""
    url = request.args.get("url", "")
    fmt = request.args.get("format", "json")
    if fmt != "json":
        abort(501)  # oEmbed 1.0, section 2.3.4: an unsupported format
    parts = urlsplit(url)
    path = parts.path
    root = request.script_root
    if root and path.startswith(root):
        path = path[len(root) :]
    segs = [s for s in path.split("/") if s]
    if len(segs) < 2 or segs[-2] != "runs" or not _pixels_or_id(segs[-1], MAX_ID):
        raise NotFound("expected the URL of a run's card (…/embed/runs/<id>) or page (…/runs/<id>)", field="url")
    run_id = int(segs[-1])
    link = (parse_qs(parts.query).get("link") or [None])[0] or request.args.get("link")
    person = reader(run_id, link)
    run = get_run(get_session(), person, run_id)
    width, height = CARD_WIDTH, CARD_HEIGHT
    for name in ("maxwidth", "maxheight"):
        raw = request.args.get(name)
        if raw is not None and not _pixels_or_id(raw, 100_000):
            raise Invalid("expected a whole number of pixels from 1 to 100000 (digits 0-9)", field=name)
    if request.args.get("maxwidth"):
        width = min(width, int(request.args["maxwidth"]))
    if request.args.get("maxheight"):
        height = min(height, int(request.args["maxheight"]))
    src = (
        url_for("embed.card", run_id=run.id, link=link, _external=True)
        if link
        else url_for("embed.card", run_id=run.id, _external=True)
    )
    html = (
        f'<iframe src="{escape(src)}" width="{width}" height="{height}" '
        f'title="{escape(run.title)} (cupcal run {run.id})" style="border:0" loading="lazy" '
        f'sandbox="allow-popups"></iframe>'
    )
    return jsonify(
        {
            "version": "1.0",
            "type": "rich",
            "provider_name": "cupcal",
            "title": run.title,
            "html": html,
            "width": width,
            "height": height,
            "cache_age": int(current_app.config["EMBED_LINK_MAX_AGE"]) if link else 0,
        }
    )
