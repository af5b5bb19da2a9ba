"""Make a new result a run's current one, audited: shared by re-analysis and by a withdrawn calibration's re-run."""

from __future__ import annotations

import sqlalchemy.orm as so

from webapp.models import Person, Result, Run
from webapp.services.audit import record_change
from webapp.services.concurrency import bump

__all__ = ["store_result"]


def store_result(session: so.Session, actor: Person | None, run: Run, result: Result) -> None:
    """Make ``result`` the run's current one, audited, in the caller's (row-locked) transaction."""
    old = run.current_result
    for r in run.results:
        r.is_current = False
    result.run = run
    result.created_by = actor
    session.add(result)
    session.flush()
    record_change(session, actor, "run", run.id, "result", _describe_result(old), _describe_result(result))
    bump(run)


def _describe_result(result: Result | None) -> str | None:
    if result is None:
        return None
    return (
        f"#{result.id} {result.method}, fore {result.fore_start_s:g}–{result.fore_end_s:g} s, "
        f"after {result.after_start_s:g}–{result.after_end_s:g} s"
    )
