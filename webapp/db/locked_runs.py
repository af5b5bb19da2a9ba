"""Session hook: keep signed runs immutable on every path; a flush that would change one fails.

:func:`guard_locked_runs` is registered on the app's session factory
(:func:`webapp.db.init_app`), so it holds for views, the API, commands and any
service, not only for the checks the services make first.
"""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Result, Run, RunInput
from webapp.services.errors import RunLocked


def _was_locked(run: Run) -> bool:
    state = sa.inspect(run)
    if state.pending or state.transient:
        return False
    hist = state.attrs.locked.history
    if hist.deleted:
        return bool(hist.deleted[0])
    return bool(run.locked)


def _owner(obj: Any) -> Run | None:
    if isinstance(obj, Run):
        return obj
    if isinstance(obj, (Result, RunInput)):
        return obj.run
    return None


def guard_locked_runs(session: so.Session, _context: Any, _instances: Any) -> None:
    """Refuse to flush any change to a run that was locked before this flush."""
    for obj in list(session.new) + list(session.dirty) + list(session.deleted):
        run = _owner(obj)
        if run is None or not _was_locked(run):
            continue
        if obj in session.dirty and not session.is_modified(obj, include_collections=False):
            continue
        raise RunLocked(f"run {run.id} is locked (signed): it can no longer be changed")


def install(factory: so.sessionmaker[so.Session]) -> None:
    """Register the guard on a session factory."""
    sa.event.listen(factory, "before_flush", guard_locked_runs)
