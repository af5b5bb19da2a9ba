"""Errors the services raise; views turn them into responses (status code and message)."""

from __future__ import annotations

from typing import TYPE_CHECKING, TypeVar

if TYPE_CHECKING:
    import sqlalchemy.orm as so

_Row = TypeVar("_Row")


class ServiceError(Exception):
    """Base class: a message a user can act on, an HTTP status and the field concerned."""

    status = 400

    def __init_subclass__(cls, *, status: int | None = None, **kwargs: object) -> None:
        super().__init_subclass__(**kwargs)
        if status is not None:
            cls.status = status

    def __init__(self, message: str, *, field: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.field = field

    def __str__(self) -> str:
        return self.message


class Invalid(ServiceError, status=400):
    """Bad input (the message names the field and what was expected)."""


class TooLarge(ServiceError, status=413):
    """A limit of calc.limits (or of the notebook) was passed; the message names it."""


class NotSignedIn(ServiceError, status=401):
    """The request carries no valid session or token."""


class Forbidden(ServiceError, status=403):
    """The person may not do this."""


class NotFound(ServiceError, status=404):
    """No such thing, or not one the person may see."""


class Conflict(ServiceError, status=409):
    """The thing exists already, or is locked."""


def get_or_not_found(session: so.Session, model: type[_Row], ident: int, what: str, field: str) -> _Row:
    """Return the ``model`` row with primary key ``ident``.

    :raise NotFound: "no ``what`` with id ``ident``", naming ``field``, when there is none
    """
    row = session.get(model, ident)
    if row is None:
        raise NotFound(f"no {what} with id {ident}", field=field)
    return row


class RunLocked(Conflict):
    """The run is signed: nothing about it may change."""


class StorageUnavailable(ServiceError, status=503):
    """The database could not store or read (disk full, server gone, lock held too long)."""


class StorageFull(StorageUnavailable):
    """The disk under the database is full."""

    status = 507


#: how each database driver says its disk is full: SQLite's SQLITE_FULL message and
#: PostgreSQL's SQLSTATE 53100 (disk_full) with the operating system's ENOSPC text
_FULL_SIGNS = ("database or disk is full", "no space left on device", "could not extend file")


def storage_error(exc: BaseException) -> StorageUnavailable | None:
    """Return the :class:`StorageUnavailable` a database driver's ``exc`` means, or None.

    Only operational failures qualify (a full disk, a lost connection, a busy database);
    programming errors and constraint violations return None and keep their own handling.
    """
    import sqlalchemy as sa

    if not isinstance(exc, sa.exc.OperationalError | sa.exc.InterfaceError):
        return None
    orig = getattr(exc, "orig", None)
    text = str(orig if orig is not None else exc).strip()
    first = text.splitlines()[0] if text else type(exc).__name__
    if getattr(orig, "sqlstate", None) == "53100" or any(s in text.lower() for s in _FULL_SIGNS):
        return StorageFull(
            f"the database's disk is full ({first}); nothing of this was saved. "
            "Free some space (or ask the notebook's administrator) and try again"
        )
    return StorageUnavailable(
        f"the database is unavailable just now ({first}); nothing of this was saved. "
        "Try again in a moment; if it persists, tell the notebook's administrator"
    )


class Stale(Conflict):
    """A write based on an older version than the one stored: refused, with the current state."""

    def __init__(self, message: str, *, field: str | None = "version", current: dict | None = None) -> None:
        super().__init__(message, field=field)
        self.current = current or {}


class VersionRequired(ServiceError, status=428):
    """A write that must say which version it changes (If-Match or ``version``) did not."""
