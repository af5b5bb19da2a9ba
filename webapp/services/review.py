"""Withdraw, exclude and accept runs; which runs count in statistics, grading and baselines.

- **Withdraw**: the run's author while the run is unlocked, or staff (coordinator, technician) at
  any time, with a reason. A withdrawn run stays stored and visible, marked withdrawn.
- **Exclude**: staff keep a run out of the statistics, the marks and the control-chart baselines,
  with a reason.
- **Accept**: staff accept a run whose current result a plausibility check flagged
  (:func:`webapp.services.checks.run_flagged`), with a reason; the flag then no longer counts against it.

Every step is reversible (restore, include, unaccept, each with a reason) and audited on the run
(:func:`webapp.services.audit.record_change`, entity ``run``). The decisions live in
:class:`webapp.models.RunReview`, apart from the run, so staff may still withdraw or exclude a
signed run. :func:`included_in_statistics` is the one SQL condition every statistic uses.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Person, Run, RunReview, utcnow
from webapp.services.audit import record_change
from webapp.services.checks import run_flagged
from webapp.services.errors import Conflict, Forbidden, Invalid, RunLocked
from webapp.services.jsontext import required_text
from webapp.services.runs import get_run

MAX_REASON = 2000

#: action → (the review's field, its new value)
ACTIONS: dict[str, tuple[str, bool]] = {
    "withdraw": ("withdrawn", True),
    "restore": ("withdrawn", False),
    "exclude": ("excluded", True),
    "include": ("excluded", False),
    "accept": ("accepted", True),
    "unaccept": ("accepted", False),
}


def with_review(stmt: sa.Select[Any]) -> sa.Select[Any]:
    """Return ``stmt`` outer-joined to each run's review (the query must select from ``Run``)."""
    return stmt.outerjoin(RunReview, RunReview.run_id == Run.id)


def included_in_statistics() -> sa.ColumnElement[bool]:
    """Return the condition for a run that counts: neither withdrawn nor excluded.

    Use it on a query passed through :func:`with_review`; statistics, marks and control-chart
    baselines all use this one condition.
    """
    return sa.or_(RunReview.run_id.is_(None), sa.and_(RunReview.withdrawn.is_(False), RunReview.excluded.is_(False)))


def is_staff(person: Person) -> bool:
    """Return whether ``person`` is a coordinator or a technician."""
    return person.role in ("coordinator", "technician")


def review_of(session: so.Session, run_id: int) -> RunReview | None:
    """Return the review of a run, or None when nobody has decided anything on it."""
    return session.get(RunReview, run_id)


def locked_review(session: so.Session, run_id: int) -> RunReview:
    """Return a run's review under a row lock; a new one (added, nothing decided) when there is none."""
    review = session.get(RunReview, run_id, with_for_update=True)
    if review is None:
        review = RunReview(
            run_id=run_id,
            withdrawn=False,
            excluded=False,
            accepted=False,
            withdrawn_reason="",
            excluded_reason="",
            accepted_reason="",
            mark_reason="",
        )
        session.add(review)
    return review


def commit_review(session: so.Session, run_id: int, field: str) -> None:
    """Commit a change of a run's review; a first review of the same run stored at the same moment is a Conflict."""
    try:
        session.commit()
    except sa.exc.IntegrityError:  # a second first decision on the same run, at the same moment
        session.rollback()
        raise Conflict(
            f"another change to run {run_id} was saved at the same moment; reload and try again", field=field
        ) from None


def _reason(reason: object) -> str:
    missing = "give a reason (it is kept in the run's history)"
    return required_text(reason, field="reason", missing=missing, what="the reason", limit=MAX_REASON)


def _check_may(actor: Person, run: Run, action: str) -> None:
    if action in ("withdraw", "restore"):
        if is_staff(actor):
            return
        if run.author_id != actor.id:
            raise Forbidden("only the run's author or staff may withdraw or restore a run")
        if run.locked:
            raise RunLocked(f"run {run.id} is signed: only staff may withdraw or restore it now")
        return
    if not is_staff(actor):
        raise Forbidden("only a coordinator or a technician may exclude, include or accept runs")


@dataclasses.dataclass(frozen=True)
class ReviewState:
    """What has been decided on a run (a run nobody reviewed: everything False)."""

    withdrawn: bool = False
    withdrawn_reason: str = ""
    excluded: bool = False
    excluded_reason: str = ""
    accepted: bool = False
    accepted_reason: str = ""

    @property
    def included(self) -> bool:
        """Return whether the run counts in statistics (the Python twin of :func:`included_in_statistics`)."""
        return not (self.withdrawn or self.excluded)


def state_of(review: RunReview | None) -> ReviewState:
    """Return the state of a review (None: nothing decided)."""
    if review is None:
        return ReviewState()
    return ReviewState(
        review.withdrawn,
        review.withdrawn_reason,
        review.excluded,
        review.excluded_reason,
        review.accepted,
        review.accepted_reason,
    )


def review_run(session: so.Session, actor: Person, run_id: int, action: str, reason: object) -> RunReview:
    """Withdraw, restore, exclude, include, accept or unaccept a run, audited, and commit.

    :raise NotFound: for a run ``actor`` may not see
    :raise Forbidden: for a role that may not take this step
    :raise RunLocked: when a student withdraws a signed run
    :raise Invalid: for an unknown action, a missing reason, or accepting a run nothing flagged
    :raise Conflict: when the run is already in that state
    """
    run = get_run(session, actor, run_id)  # a run one may not see is not found, whatever the form holds
    if action not in ACTIONS:
        if not is_staff(actor) and run.author_id != actor.id:
            raise Forbidden("only the run's author or staff may review a run")
        raise Invalid(f"unknown action {action!r}; expected one of: {', '.join(ACTIONS)}", field="action")
    _check_may(actor, run, action)
    text = _reason(reason)
    field, value = ACTIONS[action]
    if action == "accept" and not run_flagged(run.current_result):
        raise Invalid(f"run {run.id} has no plausibility flag to accept", field="action")
    review = locked_review(session, run.id)
    if bool(getattr(review, field)) == value:
        raise Conflict(f"run {run.id} is {'already' if value else 'not'} {field}", field="action")
    record_change(session, actor, "run", run.id, field, bool(getattr(review, field)), value)
    record_change(session, actor, "run", run.id, f"{field}_reason", getattr(review, f"{field}_reason") or None, text)
    setattr(review, field, value)
    setattr(review, f"{field}_reason", text)
    review.updated_at = utcnow()
    review.updated_by_id = actor.id
    commit_review(session, run_id, "action")
    return review
