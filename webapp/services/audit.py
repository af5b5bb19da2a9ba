"""The audit trail: every change to a run or a calorimeter before it is locked."""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import AuditEntry, Person


def _text(value: Any) -> str | None:
    if value is None:
        return None
    if isinstance(value, bool):
        return "yes" if value else "no"
    return str(value)


def record_change(
    session: so.Session,
    actor: Person | None,
    entity: str,
    entity_id: int,
    field: str,
    old: Any,
    new: Any,
) -> AuditEntry:
    """Add an audit entry (old → new as text) to the session; the caller commits."""
    entry = AuditEntry(
        person=actor,
        entity=entity,
        entity_id=entity_id,
        field=field,
        old=_text(old),
        new=_text(new),
    )
    session.add(entry)
    return entry


def audit_trail(entity: str, entity_id: int) -> sa.Select[tuple[AuditEntry]]:
    """Return the query of one entity's audit entries, oldest first."""
    return (
        sa.select(AuditEntry)
        .where(AuditEntry.entity == entity, AuditEntry.entity_id == entity_id)
        .order_by(AuditEntry.at, AuditEntry.id)
    )


def entry_as_dict(entry: AuditEntry) -> dict[str, Any]:
    """Return an audit entry as a JSON-ready dict."""
    return {
        "id": entry.id,
        "at": entry.at.isoformat() + "Z",
        "person": entry.person.email if entry.person else None,
        "entity": entry.entity,
        "entity_id": entry.entity_id,
        "field": entry.field,
        "old": entry.old,
        "new": entry.new,
    }
