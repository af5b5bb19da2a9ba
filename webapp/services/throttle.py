"""Sign-in throttling: after a few failures an account, or a client address, must wait, longer each time.

Every failed sign-in is stored (``sign_in_failures``: the e-mail address tried, the client
address, the time), so the count holds across server processes. Within the last
:data:`WINDOW`, once an e-mail address or a client address has ``sign_in_failures`` failures
(calc.limits; default 5), the next attempt must wait ``BASE_WAIT · 2^(n − limit)`` seconds after
the last failure (capped at :data:`MAX_WAIT`); an attempt that comes too early is refused
before the password is checked, and is logged. A successful sign-in clears the failures of
its e-mail address. The back-off is per account as well as per address, so a guesser who
changes address still waits; it also means that someone can make a known account wait
(never more than :data:`MAX_WAIT` at a time), the usual price of per-account throttling.
"""

from __future__ import annotations

import datetime as dt
import logging
import math

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc import limits
from webapp.models import SignInFailure, utcnow
from webapp.services.errors import ServiceError

log = logging.getLogger("cupcal.sign_in")

WINDOW = dt.timedelta(minutes=15)
BASE_WAIT = dt.timedelta(seconds=30)
MAX_WAIT = dt.timedelta(minutes=15)


class TooManyAttempts(ServiceError):
    """Too many failed sign-ins: wait before trying again."""

    status = 429

    def __init__(self, message: str, retry_after: int) -> None:
        super().__init__(message, field="email")
        self.retry_after = retry_after


def _now() -> dt.datetime:
    return utcnow()


def wait_needed(session: so.Session, email: str, address: str, now: dt.datetime | None = None) -> int:
    """Return the seconds still to wait before ``email`` may try from ``address`` (0: may try now)."""
    now = now or _now()
    since = now - WINDOW
    allowed = int(limits.get("sign_in_failures"))
    worst = 0.0
    for column, value in ((SignInFailure.email, email), (SignInFailure.address, address)):
        count, last = session.execute(
            sa.select(sa.func.count(), sa.func.max(SignInFailure.at)).where(column == value, SignInFailure.at >= since)
        ).one()
        if count >= allowed and last is not None:
            wait = min(BASE_WAIT * 2 ** (count - allowed), MAX_WAIT)
            worst = max(worst, (last + wait - now).total_seconds())
    return max(0, math.ceil(worst))


def check(session: so.Session, email: str, address: str) -> None:
    """Refuse (429) an attempt that comes before its back-off is over; log the refusal."""
    wait = wait_needed(session, email, address)
    if wait > 0:
        log.warning("sign-in refused (back-off %d s): email=%r address=%s", wait, email[:254], address)
        raise TooManyAttempts(
            f"too many failed sign-ins for this account or from this address; try again in {wait} s", retry_after=wait
        )


def record_failure(session: so.Session, email: str, address: str) -> None:
    """Store a failed sign-in (and drop failures older than the window); log it."""
    now = _now()
    session.execute(sa.delete(SignInFailure).where(SignInFailure.at < now - WINDOW))
    session.add(SignInFailure(email=email[:254], address=address[:64], at=now))
    session.commit()
    log.warning("sign-in failed: email=%r address=%s", email[:254], address)


def record_success(session: so.Session, email: str) -> None:
    """Clear the failures of an e-mail address that signed in."""
    session.execute(sa.delete(SignInFailure).where(SignInFailure.email == email[:254]))
    session.commit()
