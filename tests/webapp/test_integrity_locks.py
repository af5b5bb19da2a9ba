"""``cupcal db check`` reports a change to a signed run after its lock and a break in the audit chain.

The damage is done behind the notebook's back (plain SQL), as a faulty script or a restore might.
"""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa

from tests.webapp.conftest import locked_after
from webapp.db import get_engine
from webapp.models import AuditEntry, Result, Run
from webapp.services.integrity import check_database


def _locked_run(client: Any, lab: Any) -> int:
    return locked_after(client, lab, {"title": "before the lock"})


def test_a_clean_database_passes_and_names_the_new_checks(client: Any, lab: Any) -> None:
    _locked_run(client, lab)
    report = check_database(get_engine(client.application))
    assert report.ok, report.problems
    assert any("locked runs unchanged since their lock (1 signed" in c for c in report.checks)
    assert any(c.startswith("audit chain") for c in report.checks)


def test_a_change_after_the_lock_is_reported(client: Any, lab: Any) -> None:
    run_id = _locked_run(client, lab)
    engine = get_engine(client.application)
    with engine.begin() as c:
        c.execute(sa.update(Run).where(Run.id == run_id).values(title="changed behind its back"))
        c.execute(sa.update(Result).where(Result.run_id == run_id).values(heat_j=Result.heat_j * 2))
        c.execute(
            sa.insert(AuditEntry).values(
                entity="run", entity_id=run_id, field="notes", old="", new="late", at=sa.func.current_timestamp()
            )
        )
    problems = check_database(engine).problems
    assert any(f"run {run_id} changed after its lock" in p for p in problems)
    assert any(f"run {run_id}: audit entry" in p and "after its lock" in p for p in problems)


def test_a_break_in_the_audit_chain_is_reported(client: Any, lab: Any) -> None:
    run_id = _locked_run(client, lab)
    engine = get_engine(client.application)
    with engine.begin() as c:  # a lost update: its old value is not the previous entry's new one
        entry = c.scalar(sa.select(AuditEntry.id).where(AuditEntry.entity == "run", AuditEntry.field == "title"))
        c.execute(
            sa.insert(AuditEntry).values(
                entity="run",
                entity_id=run_id,
                field="title",
                old="something else",
                new="x",
                at=sa.func.current_timestamp(),
            )
        )
    problems = check_database(engine).problems
    assert entry is not None
    assert any("audit chain broken" in p and "'something else'" in p and "'before the lock'" in p for p in problems)
