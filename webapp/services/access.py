"""Who may see and change what. Every rule of the notebook's roles lives here.

- coordinator: sees and changes everything; manages courses, groups and calorimeters.
- technician: sees every run and may record and re-analyze runs; manages nothing.
- student: sees and changes only the runs of their own group (or their own runs when
  they have no group), and records runs only for their own group.
- A run is locked (signed) by its author or a coordinator; then nobody changes it.
"""

from __future__ import annotations

import sqlalchemy as sa

from webapp.models import LiveRun, Person, Run
from webapp.services.errors import Forbidden, RunLocked


def is_coordinator(person: Person) -> bool:
    """Return whether ``person`` is a coordinator."""
    return person.role == "coordinator"


def require_coordinator(person: Person, what: str) -> None:
    """Raise :class:`Forbidden` unless ``person`` is a coordinator.

    :param what: the action, for the message ("create calorimeters")
    """
    if not is_coordinator(person):
        raise Forbidden(f"only a coordinator may {what}")


def can_view_run(person: Person, run: Run) -> bool:
    """Return whether ``person`` may see ``run``."""
    if person.role in ("coordinator", "technician"):
        return True
    if run.author_id == person.id:
        return True
    return person.group_id is not None and run.group_id == person.group_id


def can_edit_run(person: Person, run: Run) -> bool:
    """Return whether ``person`` may change ``run`` (re-analyze, edit its details)."""
    return can_view_run(person, run)


def can_lock_run(person: Person, run: Run) -> bool:
    """Return whether ``person`` may sign ``run``: its author or a coordinator."""
    return run.author_id == person.id or is_coordinator(person)


def require_editable(person: Person, run: Run) -> None:
    """Raise unless ``person`` may change ``run`` now (not locked, allowed by role)."""
    if not can_edit_run(person, run):
        raise Forbidden("you may change only your own group's runs")
    if run.locked:
        raise RunLocked(f"run {run.id} is locked (signed): it can no longer be changed")


def visible_runs_clause(person: Person) -> sa.ColumnElement[bool]:
    """Return the WHERE clause selecting the runs ``person`` may see."""
    if person.role in ("coordinator", "technician"):
        return sa.true()
    own = Run.author_id == person.id
    if person.group_id is None:
        return own
    return sa.or_(Run.group_id == person.group_id, own)


def can_view_live_run(person: Person, live: LiveRun) -> bool:
    """Return whether ``person`` may follow a live run: staff, its owner, or the owner's group."""
    if person.role in ("coordinator", "technician") or live.owner_id == person.id:
        return True
    return person.group_id is not None and live.group_id == person.group_id


def can_steer_live_run(person: Person, live: LiveRun) -> bool:
    """Return whether ``person`` may set a live run's target U or finish it: its owner, its group, staff."""
    return can_view_live_run(person, live)
