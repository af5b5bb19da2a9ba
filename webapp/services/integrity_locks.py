"""The part of ``cupcal db check`` that proves signed runs stayed signed and the audit trail is whole.

- Every locked run whose lock recorded a content hash: the hash of what is stored now must equal
  it, its current result must be the one the lock signed, no result may be newer than the lock,
  and no audit entry of the run may follow its lock entry.
- The audit chain: for each entity and field, each entry's ``old`` is the previous entry's ``new``.

Read-only, like the rest of the check.
"""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import AuditEntry, Result, Run
from webapp.services.concurrency import content_hash


def check_locks(conn: sa.Connection, report: Any, listed: Any) -> None:
    """Add a problem for every change to a locked run made after its lock."""
    bad: list[str] = []
    signed = legacy = 0
    with so.Session(bind=conn) as session:
        runs = session.scalars(
            sa.select(Run).where(Run.locked.is_(True)).order_by(Run.id).execution_options(yield_per=100)
        )
        for run in runs:
            if run.locked_hash is None:
                legacy += 1
                continue
            signed += 1
            bad.extend(_run_problems(session, run))
            session.expunge(run)
    report.checks.append(
        f"locked runs unchanged since their lock ({signed} signed with a content hash"
        + (f"; {legacy} locked before hashes were recorded, checked by their audit entries only" if legacy else "")
        + ")"
    )
    listed(report, bad, "changes after a lock")


def _run_problems(session: so.Session, run: Run) -> list[str]:
    out = []
    signed_result = session.get(Result, run.locked_result_id) if run.locked_result_id else None
    if content_hash(run, signed_result) != run.locked_hash:
        out.append(f"run {run.id} changed after its lock: what is stored no longer matches the hash it was signed with")
    current = session.scalars(sa.select(Result.id).where(Result.run_id == run.id, Result.is_current.is_(True))).all()
    if run.locked_result_id is not None and list(current) != [run.locked_result_id]:
        out.append(
            f"run {run.id}: its current result is {', '.join(f'#{i}' for i in current) or 'none'}, but its "
            f"lock signed result #{run.locked_result_id}"
        )
    newer = session.scalars(
        sa.select(Result.id).where(
            Result.run_id == run.id, Result.id > (run.locked_result_id or 0), Result.created_at >= run.locked_at
        )
    ).all()
    for rid in newer:
        out.append(f"run {run.id}: result #{rid} was added after its lock")
    lock_entry = session.scalar(
        sa.select(sa.func.min(AuditEntry.id)).where(
            AuditEntry.entity == "run",
            AuditEntry.entity_id == run.id,
            AuditEntry.field == "locked",
            AuditEntry.new == "yes",
        )
    )
    if lock_entry is not None:
        for eid, field in session.execute(
            sa.select(AuditEntry.id, AuditEntry.field).where(
                AuditEntry.entity == "run", AuditEntry.entity_id == run.id, AuditEntry.id > lock_entry
            )
        ):
            out.append(f"run {run.id}: audit entry #{eid} ({field}) was written after its lock")
    return out


def check_audit_chain(conn: sa.Connection, report: Any, listed: Any) -> None:
    """Add a problem for every audit entry whose ``old`` is not the previous entry's ``new``."""
    a = AuditEntry.__table__
    q = sa.select(a.c.id, a.c.entity, a.c.entity_id, a.c.field, a.c.old, a.c.new).order_by(
        a.c.entity, a.c.entity_id, a.c.field, a.c.id
    )
    bad = []
    prev: tuple[Any, ...] | None = None
    count = 0
    for row in conn.execution_options(yield_per=500).execute(q):
        count += 1
        key = (row.entity, row.entity_id, row.field)
        if prev is not None and prev[0] == key and row.old != prev[1]:
            bad.append(
                f"audit chain broken at entry #{row.id} ({row.entity} {row.entity_id}, {row.field}): old "
                f"{_short(row.old)} is not the previous entry's new {_short(prev[1])}"
            )
        prev = (key, row.new)
    report.checks.append(f"audit chain ({count} entries: each old value is the previous new one)")
    listed(report, bad, "breaks in the audit chain")


def _short(text: str | None) -> str:
    if text is None:
        return "(none)"
    return repr(text if len(text) <= 60 else text[:57] + "…")
