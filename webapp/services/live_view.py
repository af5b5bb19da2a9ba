"""What pages, event streams and the API read of live runs: JSON-ready dicts, from the tables only."""

from __future__ import annotations

import datetime as dt
import json
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import LiveReading, LiveRun, LiveSectionTarget, Person, Section, utcnow
from webapp.services.access import can_view_live_run, require_coordinator
from webapp.services.errors import NotFound
from webapp.services.live import checked_target
from webapp.services.live_advice import effective_target, readings_of

#: a room view shows the section's live runs recording now or changed within this many hours
ROOM_HOURS = 6


def advice_of(live: LiveRun) -> dict[str, Any]:
    """Return the stored advice of a live run (an empty dict before the first)."""
    try:
        value = json.loads(live.advice_json or "{}")
    except ValueError:
        return {}
    return value if isinstance(value, dict) else {}


def live_json(session: so.Session, live: LiveRun) -> dict[str, Any]:
    """Return the API's view of a live run (the contract's GET /api/live-runs/<id>)."""
    n = (
        session.scalar(sa.select(sa.func.count()).select_from(LiveReading).where(LiveReading.live_run_id == live.id))
        or 0
    )
    target, source = effective_target(session, live)
    return {
        "id": live.id,
        "state": live.state,
        "last_seq": live.last_seq,
        "n_readings": int(n),
        "advice": advice_of(live),
        "run_id": live.run_id,
        "page_url": f"/live/{live.id}",
        "target_u": target,
        "target_from": source,
    }


def seconds_since(when: dt.datetime) -> float:
    """Return the seconds from ``when`` (UTC, naive as stored) to now."""
    return max(0.0, (utcnow() - when).total_seconds())


def update_of(session: so.Session, live: LiveRun, after_seq: int, advice_seq: int | None) -> dict[str, Any]:
    """Return what a page showing readings up to ``after_seq`` and advice ``advice_seq`` lacks.

    The advice is included when it differs from what the page has (None: the page has none).
    """
    out: dict[str, Any] = {
        "id": live.id,
        "state": live.state,
        "last_seq": live.last_seq,
        "readings": [list(r) for r in readings_of(session, live.id, after_seq)],
        "stale_s": round(seconds_since(live.updated_at), 1),
        "advice_seq": live.advice_seq,
        "run_url": f"/runs/{live.run_id}" if live.run_id else None,
    }
    if advice_seq is None or advice_seq != live.advice_seq:
        out["advice"] = advice_of(live)
        target, source = effective_target(session, live)
        out["target"] = {"value": target, "from": source}
        out["shown"] = shown_numbers(out["advice"])
    return out


def shown_numbers(advice: dict[str, Any]) -> dict[str, str]:
    """Return the advice's numbers as the page writes them (through calc.formatting, like every page)."""
    from calc import formatting as fmt

    est = advice.get("estimate") or {}
    periods = advice.get("periods") or {}
    out = {"delta_t": "—", "value": "—", "quantity": "Result", "periods": "none yet"}
    try:
        if est.get("delta_t") is not None:
            out["delta_t"] = fmt.measured(est["delta_t"], est.get("u_delta_t"), "K") + " (standard uncertainty)"
        if est.get("value") is not None:
            out["value"] = fmt.measured(est["value"], est.get("expanded_u"), est.get("unit") or "") + " (± U, k ≈ 2)"
            out["quantity"] = str(est.get("quantity") or "Result").replace("_", " ").capitalize()
    except (TypeError, ValueError):
        pass  # an advisor answer of another shape: the page shows dashes
    found = [
        f"fore {fmt.number(p[0], digits=4, trim=True)}–{fmt.number(p[1], 's', digits=4, trim=True)}"
        for p in [periods.get("fore")]
        if isinstance(p, list) and len(p) == 2
    ]
    if periods.get("mixing_time") is not None:
        found.append(f"mixing at {fmt.number(periods['mixing_time'], 's', digits=4, trim=True)}")
    found += [
        f"after {fmt.number(p[0], digits=4, trim=True)}–{fmt.number(p[1], 's', digits=4, trim=True)}"
        for p in [periods.get("after")]
        if isinstance(p, list) and len(p) == 2
    ]
    if found:
        out["periods"] = "; ".join(found)
    return out


def change_mark(live: LiveRun) -> tuple[int, int, str]:
    """Return what tells a stream that a live run changed: readings, advice, state."""
    return live.last_seq, live.advice_seq, live.state


def visible_live_runs(session: so.Session, actor: Person, limit: int = 200) -> list[LiveRun]:
    """Return the live runs ``actor`` may follow, newest first."""
    q = sa.select(LiveRun).order_by(LiveRun.created_at.desc(), LiveRun.id.desc()).limit(limit)
    if actor.role == "student":
        own = LiveRun.owner_id == actor.id
        q = q.where(sa.or_(own, LiveRun.group_id == actor.group_id) if actor.group_id else own)
    return [
        lr
        for lr in session.scalars(q.options(so.joinedload(LiveRun.group), so.joinedload(LiveRun.owner)))
        if can_view_live_run(actor, lr)
    ]


def room_runs(session: so.Session, section: Section) -> list[LiveRun]:
    """Return a section's live runs: those recording and those changed in the last :data:`ROOM_HOURS`."""
    since = utcnow() - dt.timedelta(hours=ROOM_HOURS)
    q = (
        sa.select(LiveRun)
        .where(LiveRun.section_id == section.id, sa.or_(LiveRun.state == "recording", LiveRun.updated_at >= since))
        .options(so.joinedload(LiveRun.group))
        .order_by(LiveRun.bench, LiveRun.id)
    )
    return list(session.scalars(q))


def room_item(session: so.Session, live: LiveRun, after_seq: int, advice_seq: int | None) -> dict[str, Any]:
    """Return one bench's tile of the room view: the update of the run plus who and where."""
    item = update_of(session, live, after_seq, advice_seq)
    item.update(
        bench=live.bench or "(no bench named)",
        group=live.group.name if live.group else "",
        title=live.title,
        page_url=f"/live/{live.id}",
    )
    return item


def section_target(session: so.Session, section_id: int) -> float | None:
    """Return a section's default target U for its live runs (None: the advisor's default)."""
    row = session.get(LiveSectionTarget, section_id)
    return row.target_u if row is not None else None


def set_section_target(session: so.Session, actor: Person, section: Section, value: Any) -> float | None:
    """Set (or, with None, clear) a section's default target U (coordinators) and commit.

    Live runs of the section without a target of their own are advised again on their next readings.
    """
    require_coordinator(actor, "set a section's target uncertainty")
    target = checked_target(value)
    row = session.get(LiveSectionTarget, section.id)
    if target is None:
        if row is not None:
            session.delete(row)
    elif row is None:
        session.add(LiveSectionTarget(section_id=section.id, target_u=target, updated_at=utcnow()))
    else:
        row.target_u, row.updated_at = target, utcnow()
    session.execute(
        sa.update(LiveRun)
        .where(LiveRun.section_id == section.id, LiveRun.target_u.is_(None), LiveRun.state == "recording")
        .values(advice_seq=-1)
        .execution_options(synchronize_session=False)
    )
    session.commit()
    return target


def require_live(live: LiveRun | None, actor: Person, live_id: int) -> LiveRun:
    """Return ``live`` when ``actor`` may follow it, else raise NotFound."""
    if live is None or not can_view_live_run(actor, live):
        raise NotFound(f"no live run with id {live_id}", field="id")
    return live
