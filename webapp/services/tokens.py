"""API token scopes: "read" tokens may only read; "write" tokens may do all their owner may.

Tokens are made by :func:`webapp.services.people.issue_token` (shown once, stored as a SHA-256
hash, revocable, last use recorded); this module adds the scope.
"""

from __future__ import annotations

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import ApiToken
from webapp.models import Person
from webapp.models import utcnow
from webapp.services.errors import Forbidden
from webapp.services.errors import Invalid
from webapp.services.people import _TOKEN_TOUCH
from webapp.services.people import _digest
from webapp.services.people import issue_token

SCOPES = ("read", "write")


def issue_scoped_token(session: so.Session, person: Person, label: str = "", scope: str = "write"
                       ) -> tuple[ApiToken, str]:
    """Create a token with ``scope`` ("read" or "write") and commit; return it with its secret (shown once)."""
    if scope not in SCOPES:
        raise Invalid(f"unknown scope {scope!r}; expected one of: {', '.join(SCOPES)}", field="scope")
    token, secret = issue_token(session, person, label)
    if token.scope != scope:
        token.scope = scope
        session.commit()
    return token, secret


def token_for_secret(session: so.Session, secret: str) -> ApiToken | None:
    """Return the unrevoked token of an active person with this secret (recording its use), or None."""
    token = session.scalar(sa.select(ApiToken).where(ApiToken.token_hash == _digest(secret)))
    if token is None or token.revoked_at is not None or not token.person.active:
        return None
    now = utcnow()
    if token.last_used_at is None or now - token.last_used_at > _TOKEN_TOUCH:
        token.last_used_at = now
        session.commit()
    return token


def require_scope(token: ApiToken | None, scope: str) -> None:
    """Raise :class:`Forbidden` when a token lacks ``scope`` (None: a browser session, checked elsewhere)."""
    if token is not None and scope == "write" and token.scope != "write":
        raise Forbidden("this API token is read-only; make a token with the scope 'write'", field="scope")


def tokens_of(session: so.Session, person: Person) -> list[ApiToken]:
    """Return ``person``'s tokens, newest first (with scope, creation, last use and revocation)."""
    return list(session.scalars(
        sa.select(ApiToken).where(ApiToken.person_id == person.id).order_by(ApiToken.id.desc())))
