"""People, groups, courses, API tokens and signing in."""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import re
import secrets

import sqlalchemy as sa
import sqlalchemy.orm as so
from werkzeug.security import check_password_hash, generate_password_hash

from webapp.models import ROLES, ApiToken, Course, Group, Person, utcnow
from webapp.services.access import require_coordinator
from webapp.services.errors import Conflict, Invalid, NotFound

#: werkzeug's scrypt (the default method); tests may pass a cheaper parameter set
DEFAULT_PASSWORD_METHOD = "scrypt"
MIN_PASSWORD_LENGTH = 10
TOKEN_PREFIX = "cupcal_"
#: a token's last use is written at most this often
_TOKEN_TOUCH = dt.timedelta(minutes=10)
_EMAIL_RE = re.compile(r"[^@\s]+@[^@\s]+\.[^@\s]+")


def hash_password(password: str, method: str = DEFAULT_PASSWORD_METHOD) -> str:
    """Return the salted hash of ``password`` (werkzeug, scrypt by default)."""
    return generate_password_hash(password, method=method)


def create_person(
    session: so.Session,
    *,
    email: str,
    name: str,
    role: str,
    password: str,
    group: Group | None = None,
    password_method: str = DEFAULT_PASSWORD_METHOD,
) -> Person:
    """Add a person and commit.

    :raise Invalid: for a bad e-mail address, role or a short password
    :raise Conflict: when the e-mail address is taken
    """
    email = email.strip().lower()
    if not _EMAIL_RE.fullmatch(email):
        raise Invalid(f"expected an e-mail address, got {email!r}", field="email")
    if role not in ROLES:
        raise Invalid(f"unknown role {role!r}; expected one of: {', '.join(ROLES)}", field="role")
    if len(password) < MIN_PASSWORD_LENGTH:
        raise Invalid(f"the password must have at least {MIN_PASSWORD_LENGTH} characters", field="password")
    if session.scalar(sa.select(Person.id).where(Person.email == email)) is not None:
        raise Conflict(f"{email} has an account already", field="email")
    person = Person(
        email=email,
        name=name.strip() or email,
        role=role,
        password_hash=hash_password(password, password_method),
        group=group,
    )
    session.add(person)
    session.commit()
    return person


def authenticate(session: so.Session, email: str, password: str) -> Person | None:
    """Return the active person with this e-mail address and password, else None."""
    person = session.scalar(sa.select(Person).where(Person.email == email.strip().lower()))
    if person is None or not person.active:
        # spend the same time as a real check, so the answer does not tell who exists
        check_password_hash(_dummy_hash(), password)
        return None
    return person if check_password_hash(person.password_hash, password) else None


@functools.lru_cache(maxsize=1)
def _dummy_hash() -> str:
    return generate_password_hash(secrets.token_hex(16), method=DEFAULT_PASSWORD_METHOD)


def get_person(session: so.Session, person_id: int) -> Person | None:
    """Return the person with this id, or None."""
    return session.get(Person, person_id)


def create_course(session: so.Session, actor: Person, *, name: str, term: str = "") -> Course:
    """Add a course (coordinators only) and commit."""
    require_coordinator(actor, "manage courses")
    name = _required(name, "name")
    if session.scalar(sa.select(Course.id).where(Course.name == name)) is not None:
        raise Conflict(f"a course named {name!r} exists already", field="name")
    course = Course(name=name, term=term.strip())
    session.add(course)
    session.commit()
    return course


def create_group(session: so.Session, actor: Person, *, name: str, course_id: int | None = None) -> Group:
    """Add a group (coordinators only) and commit."""
    require_coordinator(actor, "manage groups")
    name = _required(name, "name")
    if course_id is not None and session.get(Course, course_id) is None:
        raise Invalid(f"no course with id {course_id}", field="course_id")
    if session.scalar(sa.select(Group.id).where(Group.name == name)) is not None:
        raise Conflict(f"a group named {name!r} exists already", field="name")
    group = Group(name=name, course_id=course_id)
    session.add(group)
    session.commit()
    return group


def issue_token(session: so.Session, person: Person, label: str = "", scope: str = "write") -> tuple[ApiToken, str]:
    """Create an API token for ``person`` and commit; return it with its secret (shown once)."""
    secret = TOKEN_PREFIX + secrets.token_urlsafe(32)
    token = ApiToken(
        person=person,
        label=label.strip()[:120],
        prefix=secret[: len(TOKEN_PREFIX) + 6],
        token_hash=_digest(secret),
        scope=scope,
    )
    session.add(token)
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


def person_for_token(session: so.Session, secret: str) -> Person | None:
    """Return the active owner of an unrevoked token, or None."""
    token = token_for_secret(session, secret)
    return token.person if token is not None else None


def revoke_token(session: so.Session, person: Person, token_id: int) -> ApiToken:
    """Revoke one of ``person``'s tokens and commit."""
    token = session.get(ApiToken, token_id)
    if token is None or token.person_id != person.id:
        raise NotFound(f"you have no token with id {token_id}")
    if token.revoked_at is None:
        token.revoked_at = utcnow()
        session.commit()
    return token


def _digest(secret: str) -> str:
    # tokens are 256-bit random: a plain SHA-256 suffices (no salt or stretching needed)
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def _required(value: str, field: str) -> str:
    value = (value or "").strip()
    if not value:
        raise Invalid("must not be empty", field=field)
    return value
