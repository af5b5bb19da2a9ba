"""Accounts that work: passwords set by a coordinator or by the person, and one-time sign-in links.

- A coordinator sets (or resets) anyone's password; unless told otherwise the person then
  chooses their own at the next sign-in (``Person.must_set_password``).
- A coordinator hands out one-time sign-in links, one per person (a roster at a time): the link's
  secret is shown once (page, print, CSV) and only its SHA-256 is stored. Using a link signs the
  person in once and asks them to choose a password; a newer link replaces an older unused one;
  a link expires after ``SIGN_IN_LINK_DAYS`` days.
- A person changes their own password (with the current one, or without it right after a link
  or a reset).

Every change is audited (entity ``person``; the password itself is never written anywhere).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import secrets

import sqlalchemy as sa
import sqlalchemy.orm as so
from werkzeug.security import check_password_hash

from webapp.models import MAX_ID, Group, Person, SignInLink, utcnow
from webapp.services.access import require_coordinator
from webapp.services.audit import record_change
from webapp.services.errors import Invalid, NotFound
from webapp.services.people import DEFAULT_PASSWORD_METHOD, MIN_PASSWORD_LENGTH, hash_password

SIGN_IN_LINK_DAYS = 14
MAX_PASSWORD_LENGTH = 200
MAX_LINKS = 2000


def _digest(secret: str) -> str:
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def check_new_password(password: object, confirm: object | None = None, field: str = "password") -> str:
    """Return an acceptable new password.

    :raise Invalid: naming ``field`` for a password too short or too long, or a confirmation that differs
    """
    if not isinstance(password, str) or len(password) < MIN_PASSWORD_LENGTH:
        raise Invalid(f"the password must have at least {MIN_PASSWORD_LENGTH} characters", field=field)
    if len(password) > MAX_PASSWORD_LENGTH:
        raise Invalid(f"the password must have at most {MAX_PASSWORD_LENGTH} characters", field=field)
    if confirm is not None and confirm != password:
        raise Invalid("the two passwords differ", field="confirm")
    return password


def find_person(session: so.Session, key: int | str) -> Person:
    """Return a person by id or e-mail address; :raise NotFound: otherwise."""
    if isinstance(key, int) or (isinstance(key, str) and key.isdigit()):
        number = int(key)
        person = session.get(Person, number) if 0 < number <= MAX_ID else None
    else:
        person = session.scalar(sa.select(Person).where(Person.email == str(key).strip().lower()))
    if person is None:
        raise NotFound(f"no person {key!r}", field="person")
    return person


def set_password(
    session: so.Session,
    actor: Person | None,
    person: Person,
    password: object,
    *,
    must_change: bool = True,
    method: str = DEFAULT_PASSWORD_METHOD,
) -> Person:
    """Set ``person``'s password as a coordinator (``actor`` None: the command line) and commit.

    With ``must_change`` the person chooses their own at the next sign-in. Older unused sign-in
    links of the person stop working.
    """
    if actor is not None:
        require_coordinator(actor, "set other people's passwords")
    person.password_hash = hash_password(check_new_password(password), method)
    person.must_set_password = bool(must_change)
    _retire_links(session, person.id)
    record_change(
        session,
        actor,
        "person",
        person.id,
        "password",
        None,
        "set by a coordinator" + ("; to be changed at the next sign-in" if must_change else ""),
    )
    session.commit()
    return person


def change_own_password(
    session: so.Session,
    person: Person,
    new: object,
    confirm: object,
    *,
    current: str | None = None,
    method: str = DEFAULT_PASSWORD_METHOD,
) -> Person:
    """Set one's own password and commit: the current one is needed unless a new one is required now."""
    if not person.must_set_password:
        if not current or not check_password_hash(person.password_hash, current):
            raise Invalid("the current password is wrong", field="current")
    password = check_new_password(new, confirm)
    if check_password_hash(person.password_hash, password):
        raise Invalid("choose a password other than the one you were given", field="password")
    person.password_hash = hash_password(password, method)
    person.must_set_password = False
    record_change(session, person, "person", person.id, "password", None, "changed by its owner")
    session.commit()
    return person


@dataclasses.dataclass(frozen=True)
class IssuedLink:
    """A sign-in link just made: the person and the secret (shown once)."""

    person_id: int
    name: str
    email: str
    group: str
    secret: str
    expires_at: dt.datetime


def _retire_links(session: so.Session, person_id: int) -> None:
    session.execute(
        sa.update(SignInLink)
        .where(SignInLink.person_id == person_id, SignInLink.used_at.is_(None))
        .values(used_at=utcnow())
    )


def issue_links(
    session: so.Session, actor: Person | None, people: list[Person], *, days: int = SIGN_IN_LINK_DAYS
) -> list[IssuedLink]:
    """Make one sign-in link per person (coordinators; ``actor`` None: the command line) and commit.

    Each person's older unused links stop working, and they will choose a password after signing in.
    """
    if actor is not None:
        require_coordinator(actor, "hand out sign-in links")
    if not people:
        raise Invalid("choose at least one person", field="people")
    if len(people) > MAX_LINKS:
        raise Invalid(f"at most {MAX_LINKS} links at a time", field="people")
    if not 1 <= days <= 90:
        raise Invalid("a link lasts 1 to 90 days", field="days")
    expires = utcnow() + dt.timedelta(days=days)
    out: list[IssuedLink] = []
    for person in people:
        if not person.active:
            raise Invalid(f"{person.email} is not active", field="people")
        _retire_links(session, person.id)
        secret = secrets.token_urlsafe(24)
        session.add(
            SignInLink(
                person_id=person.id,
                token_hash=_digest(secret),
                created_by_id=actor.id if actor else None,
                expires_at=expires,
            )
        )
        person.must_set_password = True
        record_change(
            session, actor, "person", person.id, "sign_in_link", None, f"issued, valid until {expires:%Y-%m-%d}"
        )
        out.append(
            IssuedLink(person.id, person.name, person.email, person.group.name if person.group else "", secret, expires)
        )
    session.commit()
    return out


def use_link(session: so.Session, secret: str) -> Person | None:
    """Spend a sign-in link and return its active person; None for an unknown, used or expired link.

    The link is marked used by one conditional UPDATE, so two requests racing with the same link
    cannot both sign in.
    """
    if not secret or len(secret) > 100:
        return None
    now = utcnow()
    link = session.scalar(sa.select(SignInLink).where(SignInLink.token_hash == _digest(secret)))
    if link is None or link.used_at is not None or link.expires_at < now or not link.person.active:
        return None
    spent = session.execute(
        sa.update(SignInLink).where(SignInLink.id == link.id, SignInLink.used_at.is_(None)).values(used_at=now)
    )
    if spent.rowcount != 1:
        session.rollback()
        return None
    record_change(session, link.person, "person", link.person_id, "sign_in_link", None, "used")
    session.commit()
    return link.person


def link_valid(session: so.Session, secret: str) -> Person | None:
    """Return the person of a link that would still work (without spending it), else None."""
    if not secret or len(secret) > 100:
        return None
    link = session.scalar(sa.select(SignInLink).where(SignInLink.token_hash == _digest(secret)))
    if link is None or link.used_at is not None or link.expires_at < utcnow() or not link.person.active:
        return None
    return link.person


def section_people(session: so.Session, section_id: int) -> list[Person]:
    """Return the people of a section's groups, by group and name."""
    return list(
        session.scalars(
            sa.select(Person)
            .join(Group, Group.id == Person.group_id)
            .where(Group.section_id == section_id)
            .order_by(Group.name, Person.name)
        )
    )


def links_csv(links: list[IssuedLink], base_url: str) -> str:
    """Return the links as CSV (name, email, group, link, expires) for a mail merge or a print run."""
    import csv
    import io

    from webapp.exports.cells import neutralise

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(["name", "email", "group", "link", "expires"])
    for link in links:
        w.writerow(
            [
                neutralise(link.name),
                neutralise(link.email),
                neutralise(link.group),
                f"{base_url.rstrip('/')}/auth/link/{link.secret}",
                link.expires_at.strftime("%Y-%m-%d"),
            ]
        )
    return buf.getvalue()
