"""API token scopes: "read" tokens may only read; "write" tokens may do all their owner may; "live"
tokens may only record live runs (a recorder on a lab bench holds one).

Tokens are made by :func:`webapp.services.people.issue_token` (shown once, stored as a SHA-256
hash, revocable, last use recorded); this module adds the scope.
"""

from __future__ import annotations

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import ApiToken, Person
from webapp.services.errors import Forbidden, Invalid
from webapp.services.people import (
    issue_token,
    token_for_secret,  # noqa: F401  (re-exported)
)

#: "live" tokens may only create live runs, post their readings, set their target and finish them
SCOPES = ("read", "write", "live")


def issue_scoped_token(
    session: so.Session, person: Person, label: str = "", scope: str = "write"
) -> tuple[ApiToken, str]:
    """Create a token with ``scope`` ("read", "write" or "live") and commit; return it with its secret (shown once)."""
    if scope not in SCOPES:
        raise Invalid(f"unknown scope {scope!r}; expected one of: {', '.join(SCOPES)}", field="scope")
    return issue_token(session, person, label, scope)


def require_scope(token: ApiToken | None, scope: str) -> None:
    """Raise :class:`Forbidden` when a token lacks ``scope`` (None: a browser session, checked elsewhere)."""
    if token is not None and scope == "write" and token.scope != "write":
        raise Forbidden("this API token is read-only; make a token with the scope 'write'", field="scope")


def tokens_of(session: so.Session, person: Person) -> list[ApiToken]:
    """Return ``person``'s tokens, newest first (with scope, creation, last use and revocation)."""
    return list(
        session.scalars(sa.select(ApiToken).where(ApiToken.person_id == person.id).order_by(ApiToken.id.desc()))
    )
