"""People and their access: accounts, API tokens, one-time sign-in links and failed sign-ins."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.classes import Group


ROLES = ("coordinator", "technician", "student")
#: who may record or approve a calibration in force (staff)
STAFF_ROLES = ("coordinator", "technician")


class Person(Base):
    """Somebody who signs in: a coordinator, a technician or a student.

    Provides the four members Flask-Login expects without importing Flask here.
    """

    __tablename__ = "people"
    __table_args__ = (sa.CheckConstraint("role IN ('coordinator', 'technician', 'student')", name="role"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    email: so.Mapped[str] = so.mapped_column(sa.String(254), unique=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120))
    role: so.Mapped[str] = so.mapped_column(sa.String(20))
    password_hash: so.Mapped[str] = so.mapped_column(sa.String(255))
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"), index=True)
    active: so.Mapped[bool] = so.mapped_column(default=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    #: the person chooses a password of their own at the next sign-in (new, reset or link accounts)
    must_set_password: so.Mapped[bool] = so.mapped_column(default=False, server_default=sa.false())

    group: so.Mapped[Group | None] = so.relationship(back_populates="members")
    tokens: so.Mapped[list[ApiToken]] = so.relationship(back_populates="person")

    is_authenticated = True
    is_anonymous = False

    @property
    def is_active(self) -> bool:
        """Return whether the person may sign in."""
        return bool(self.active)

    def get_id(self) -> str:
        """Return the id Flask-Login keeps in the session."""
        return str(self.id)

    def __repr__(self) -> str:
        return f"<Person {self.id} {self.email} {self.role}>"


class ApiToken(Base):
    """An API token of one person; only its SHA-256 hash is stored."""

    __tablename__ = "api_tokens"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    person_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    label: so.Mapped[str] = so.mapped_column(sa.String(120), default="")
    prefix: so.Mapped[str] = so.mapped_column(sa.String(16))
    token_hash: so.Mapped[str] = so.mapped_column(sa.String(64), unique=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    last_used_at: so.Mapped[dt.datetime | None]
    revoked_at: so.Mapped[dt.datetime | None]
    #: "read" (GET only) or "write" (everything the person may do); tokens made before scopes: "write"
    scope: so.Mapped[str] = so.mapped_column(sa.String(10), default="write", server_default="write")

    person: so.Mapped[Person] = so.relationship(back_populates="tokens")


class SignInLink(Base):
    """A one-time sign-in link handed to one person; only the SHA-256 of its secret is stored."""

    __tablename__ = "sign_in_links"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    person_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    token_hash: so.Mapped[str] = so.mapped_column(sa.String(64), unique=True)
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    expires_at: so.Mapped[dt.datetime]
    #: set when the link is used or replaced by a newer one; a link works once
    used_at: so.Mapped[dt.datetime | None]

    person: so.Mapped[Person] = so.relationship(foreign_keys=[person_id])


class SignInFailure(Base):
    """A failed sign-in: the e-mail address tried and the client address (for throttling)."""

    __tablename__ = "sign_in_failures"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    email: so.Mapped[str] = so.mapped_column(sa.String(254), index=True)
    address: so.Mapped[str] = so.mapped_column(sa.String(64), index=True)
    at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow, index=True)
