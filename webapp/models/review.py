"""Review and audit: staff's decisions on a run, comments, and the trail of every change."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.people import Person
    from webapp.models.runs import Run


class RunReview(Base):
    """Staff's and the author's decisions on a run: withdrawn, excluded, accepted, a mark set by hand.

    Kept apart from the run so that a signed (locked) run can still be withdrawn or excluded by
    staff; every change is audited on the run (``services.review``).
    """

    __tablename__ = "run_reviews"

    run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("runs.id"), primary_key=True)
    withdrawn: so.Mapped[bool] = so.mapped_column(default=False)
    withdrawn_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    excluded: so.Mapped[bool] = so.mapped_column(default=False)
    excluded_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    #: a plausibility flag of the current result was looked at and the run accepted
    accepted: so.Mapped[bool] = so.mapped_column(default=False)
    accepted_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    #: a mark set by staff in place of the scheme's (None: the scheme's mark)
    mark_points: so.Mapped[float | None]
    mark_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    updated_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))

    run: so.Mapped[Run] = so.relationship()


class Comment(Base):
    """A comment by staff on one run or on one group's work; the group's students read it."""

    __tablename__ = "comments"
    __table_args__ = (sa.CheckConstraint("(run_id IS NULL) <> (group_id IS NULL)", name="one_target"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    run_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"), index=True)
    author_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"))
    body: so.Mapped[str] = so.mapped_column(sa.Text)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    author: so.Mapped[Person] = so.relationship()


class AuditEntry(Base):
    """One change: who, when, which entity and field, old → new (as text)."""

    __tablename__ = "audit_entries"
    __table_args__ = (sa.Index("ix_audit_entries_entity", "entity", "entity_id"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    person_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    entity: so.Mapped[str] = so.mapped_column(sa.String(40))
    entity_id: so.Mapped[int]
    field: so.Mapped[str] = so.mapped_column(sa.String(80))
    old: so.Mapped[str | None] = so.mapped_column(sa.Text)
    new: so.Mapped[str | None] = so.mapped_column(sa.Text)

    person: so.Mapped[Person | None] = so.relationship()
