"""Errors the services raise; views turn them into responses (status code and message)."""

from __future__ import annotations


class ServiceError(Exception):
    """Base class: a message a user can act on, an HTTP status and the field concerned."""

    status = 400

    def __init__(self, message: str, *, field: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.field = field

    def __str__(self) -> str:
        return self.message


class Invalid(ServiceError):
    """Bad input (the message names the field and what was expected)."""

    status = 400


class NotSignedIn(ServiceError):
    """The request carries no valid session or token."""

    status = 401


class Forbidden(ServiceError):
    """The person may not do this."""

    status = 403


class NotFound(ServiceError):
    """No such thing, or not one the person may see."""

    status = 404


class Conflict(ServiceError):
    """The thing exists already, or is locked."""

    status = 409


class RunLocked(Conflict):
    """The run is signed: nothing about it may change."""
