"""The room view: every live run of a section on one screen, for the coordinator walking the benches."""

from __future__ import annotations

from typing import Any

from flask import flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from webapp.db import get_session
from webapp.error_handlers import flash_refusal
from webapp.live.blueprint import bp
from webapp.live.stream import event_stream
from webapp.live.views import TargetForm, viewer
from webapp.models import Section
from webapp.services.access import require_coordinator
from webapp.services.classes import can_view_section, get_section
from webapp.services.errors import NotFound, ServiceError
from webapp.services.live_view import room_item, room_runs, section_target, set_section_target

#: what a room view has of one live run: readings seen, advice seen, state
Seen = dict[int, tuple[int, int, str]]
_STATES = {"r": "recording", "f": "finished", "a": "abandoned"}


def parse_room_cursor(text: str | None) -> Seen:
    """Return what a room view has, from ``"id:seq:advice:state,…"`` (state r, f or a; bad parts skipped)."""
    seen: Seen = {}
    for part in (text or "").split(",")[:500]:
        bits = part.split(":")
        if len(bits) == 4 and bits[3] in _STATES and all(b.lstrip("-").isdigit() and len(b) < 12 for b in bits[:3]):
            seen[int(bits[0])] = (int(bits[1]), int(bits[2]), _STATES[bits[3]])
    return seen


def room_cursor(seen: Seen) -> str:
    """Return the event id that lets a reconnecting room view resume."""
    return ",".join(f"{k}:{s}:{a}:{state[0]}" for k, (s, a, state) in sorted(seen.items()))


def room_update(session: Any, section: Section, seen: Seen) -> list[dict[str, Any]]:
    """Return the tiles that changed since ``seen``, updating it."""
    items = []
    for live in room_runs(session, section):
        now = (live.last_seq, live.advice_seq, live.state)
        if seen.get(live.id) == now:
            continue
        after, advice, _state = seen.get(live.id, (-1, None, ""))
        items.append(room_item(session, live, after, advice))
        seen[live.id] = now
    return items


@bp.route("/classes/sections/<int:section_id>/live")
@login_required
def room(section_id: int):  # type: ignore[no-untyped-def]
    """All the section's live runs: bench, group, status line, a small curve and the warnings."""
    session = get_session()
    section = get_section(session, current_user, section_id)
    seen: Seen = {}
    tiles = room_update(session, section, seen)
    return render_template(
        "live/room.html",
        section=section,
        tiles=tiles,
        cursor=room_cursor(seen),
        target=section_target(session, section.id),
        form=TargetForm(target_u=section_target(session, section.id)),
    )


@bp.route("/classes/sections/<int:section_id>/live/update.json")
@login_required
def room_poll(section_id: int):  # type: ignore[no-untyped-def]
    """The room view's poll (when a stream fails): tiles changed since ``?since=<cursor>``."""
    session = get_session()
    section = get_section(session, current_user, section_id)
    seen = parse_room_cursor(request.args.get("since"))
    tiles = room_update(session, section, seen)
    return {"items": tiles, "cursor": room_cursor(seen)}


@bp.route("/classes/sections/<int:section_id>/live/events")
@login_required
def room_events(section_id: int):  # type: ignore[no-untyped-def]
    """The room view's Server-Sent Events: ``room`` with the tiles that changed; ``ping`` else."""
    get_section(get_session(), current_user, section_id)
    who = viewer()
    seen = parse_room_cursor(request.headers.get("Last-Event-ID") or request.args.get("since"))

    def read(session: Any) -> list[tuple[str, dict[str, Any], str | None]]:
        section = session.get(Section, section_id)
        if section is None or not can_view_section(who, section):
            raise NotFound(f"no section with id {section_id}")
        items = room_update(session, section, seen)
        cursor = room_cursor(seen)
        return [("room", {"items": items, "cursor": cursor}, cursor)] if items else []

    return event_stream(read)


@bp.route("/classes/sections/<int:section_id>/live/target", methods=["POST"])
@login_required
def room_target(section_id: int):  # type: ignore[no-untyped-def]
    """Set the section's default target U (coordinators); empty clears it."""
    session = get_session()
    get_section(session, current_user, section_id)  # not yours: 404
    require_coordinator(current_user, "set a section's target uncertainty")  # before the form is read
    section = get_section(session, current_user, section_id)
    form = TargetForm()
    if not form.validate_on_submit():
        flash("Target U: expected a positive number, or leave it empty for the advisor's default.", "error")
    else:
        value = float(form.target_u.data) if form.target_u.data is not None else None
        try:
            set_section_target(session, current_user, section, value)
            flash("The section's target U is saved; runs without their own target follow it.")
        except ServiceError as exc:
            flash_refusal(exc)
    return redirect(url_for("live.room", section_id=section_id))
