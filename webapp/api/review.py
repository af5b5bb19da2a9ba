"""API: withdraw, exclude and accept runs; comments on runs and groups; marks and marking schemes."""

from __future__ import annotations

from typing import Any

from flask import jsonify

from webapp.api.blueprint import bp
from webapp.api.openapi import register
from webapp.api.openapi_build import change as _change
from webapp.api.openapi_build import json_response as _json
from webapp.api.openapi_build import operation as _op
from webapp.api.openapi_build import path_param as _id
from webapp.api.openapi_build import read as _read
from webapp.api.openapi_build import request_body as _body
from webapp.api.params import actor, as_float, json_object
from webapp.db import get_session
from webapp.models import Comment, RunReview
from webapp.services import comments as comment_service
from webapp.services.marks import bands_text, scheme_of, set_mark, set_scheme
from webapp.services.review import ACTIONS, review_run, state_of


def comment_json(c: Comment) -> dict[str, Any]:
    """Return a comment as JSON data."""
    return {
        "id": c.id,
        "run_id": c.run_id,
        "group_id": c.group_id,
        "author": c.author.name if c.author else None,
        "body": c.body,
        "created_at": c.created_at.isoformat() + "Z",
    }


def review_json(run_id: int, review: RunReview | None) -> dict[str, Any]:
    """Return what has been decided on a run as JSON data (the ``review`` of a run's JSON, with its id)."""
    st = state_of(review)
    return {
        "run_id": run_id,
        "withdrawn": st.withdrawn,
        "withdrawn_reason": st.withdrawn_reason,
        "excluded": st.excluded,
        "excluded_reason": st.excluded_reason,
        "accepted": st.accepted,
        "accepted_reason": st.accepted_reason,
        "included_in_statistics": st.included,
        "mark_points": review.mark_points if review else None,
        "mark_reason": review.mark_reason if review else "",
    }


@bp.post("/runs/<int:run_id>/review")
def review(run_id: int):  # type: ignore[no-untyped-def]
    """Withdraw, restore, exclude, include, accept or unaccept a run, with a reason."""
    data = json_object()
    r = review_run(get_session(), actor(), run_id, str(data.get("action", "")), data.get("reason"))
    return jsonify(review_json(run_id, r))


@bp.get("/runs/<int:run_id>/comments")
def list_run_comments(run_id: int):  # type: ignore[no-untyped-def]
    """The comments on a run."""
    return jsonify({"items": [comment_json(c) for c in comment_service.run_comments(get_session(), actor(), run_id)]})


@bp.post("/runs/<int:run_id>/comments")
def add_run_comment(run_id: int):  # type: ignore[no-untyped-def]
    """Comment on a run (coordinators and technicians)."""
    c = comment_service.add_run_comment(get_session(), actor(), run_id, json_object().get("body"))
    return jsonify(comment_json(c)), 201


@bp.post("/groups/<int:group_id>/comments")
def add_group_comment(group_id: int):  # type: ignore[no-untyped-def]
    """Comment on a group's work (coordinators and technicians)."""
    c = comment_service.add_group_comment(get_session(), actor(), group_id, json_object().get("body"))
    return jsonify(comment_json(c)), 201


@bp.put("/runs/<int:run_id>/mark")
def put_mark(run_id: int):  # type: ignore[no-untyped-def]
    """Set a run's mark by hand (``points`` null: back to the scheme's), with a reason."""
    data = json_object()
    r = set_mark(get_session(), actor(), run_id, as_float(data.get("points"), "points"), data.get("reason"))
    return jsonify(review_json(run_id, r))


@bp.put("/sections/<int:section_id>/marking-scheme")
def put_scheme(section_id: int):  # type: ignore[no-untyped-def]
    """Set a section's marking scheme: ``en`` and ``relative`` bands as text ("1=6, 2=3, *=0")."""
    data = json_object()
    s = set_scheme(
        get_session(), actor(), section_id, en=str(data.get("en", "")), relative=str(data.get("relative", ""))
    )
    return jsonify(
        {
            "section_id": s.section_id,
            "bands": s.bands,
            "en": bands_text(s.bands["en"]),
            "relative": bands_text(s.bands["relative"], percent=True),
        }
    )


@bp.get("/sections/<int:section_id>/marking-scheme")
def get_scheme(section_id: int):  # type: ignore[no-untyped-def]
    """A section's marking scheme (the default one until a coordinator sets it)."""
    from webapp.services.classes import get_section

    section = get_section(get_session(), actor(), section_id)
    bands, own = scheme_of(get_session(), section.id)
    return jsonify(
        {
            "section_id": section.id,
            "own": own,
            "bands": bands,
            "en": bands_text(bands["en"]),
            "relative": bands_text(bands["relative"], percent=True),
        }
    )


_RUN = [_id("run_id")]
_OBJ = {"type": "object"}
register(
    {
        "/api/runs/{run_id}/review": {
            "post": _op(
                "Withdraw, restore, exclude, include, accept or unaccept a run, with a reason (audited)",
                _json(_OBJ, "What is now decided on the run"),
                (400, 401, 403, 404, 409),
                params=_RUN,
                body=_body(
                    {"action": {"type": "string", "enum": list(ACTIONS)}, "reason": {"type": "string"}},
                    ["action", "reason"],
                ),
            )
        },
        "/api/runs/{run_id}/comments": {
            "get": _read("The comments on a run", _OBJ, "The comments", _RUN),
            "post": _op(
                "Comment on a run (staff)",
                _json(_OBJ, "The comment"),
                (400, 401, 403, 404),
                status="201",
                params=_RUN,
                body=_body({"body": {"type": "string"}}, ["body"]),
            ),
        },
        "/api/groups/{group_id}/comments": {
            "post": _op(
                "Comment on a group's work (staff)",
                _json(_OBJ, "The comment"),
                (400, 401, 403, 404),
                status="201",
                params=[_id("group_id")],
                body=_body({"body": {"type": "string"}}, ["body"]),
            )
        },
        "/api/runs/{run_id}/mark": {
            "put": _change(
                "Set a run's mark by hand, or clear it (points null), with a reason (staff)",
                _OBJ,
                "What is now decided on the run",
                params=_RUN,
                body=_body({"points": {"type": ["number", "null"]}, "reason": {"type": "string"}}, ["reason"]),
            )
        },
        "/api/sections/{section_id}/marking-scheme": {
            "get": _read("A section's marking scheme", _OBJ, "The scheme", [_id("section_id")]),
            "put": _change(
                "Set a section's marking scheme (coordinators)",
                _OBJ,
                "The scheme",
                params=[_id("section_id")],
                body=_body({"en": {"type": "string"}, "relative": {"type": "string"}}, ["en", "relative"]),
            ),
        },
    }
)
