"""``cupcal users``: list people, set passwords and hand out sign-in links from the command line.

Works on the database :func:`webapp.create_app` configures.
Errors are one line with exit status 2. Passwords are read from a prompt (hidden) or from the first
line of standard input (``--password-stdin``), never from the command line, where they would end up
in the shell's history and the process list.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import click


class _Refused(click.ClickException):
    """A one-line error (exit status 2)."""

    exit_code = 2


@contextmanager
def _session() -> Iterator[tuple[Any, Any]]:
    from webapp import create_app
    from webapp.db import new_session

    app = create_app()
    session = new_session(app)
    try:
        yield app, session
    finally:
        session.close()


def _people(session: Any, keys: tuple[str, ...], section: int | None) -> list[Any]:
    from webapp.models import Section
    from webapp.services.accounts import find_person, section_people
    from webapp.services.errors import ServiceError

    people: list[Any] = []
    if section is not None:
        if session.get(Section, section) is None:
            raise _Refused(f"no section with id {section}")
        people += section_people(session, section)
    for key in keys:
        try:
            people.append(find_person(session, key))
        except ServiceError as exc:
            raise _Refused(exc.message) from None
    if not people:
        raise _Refused("name at least one person (e-mail address or id) or --section ID")
    return list({p.id: p for p in people}.values())


@click.group()
def users() -> None:
    """List people, set passwords and hand out one-time sign-in links."""


@users.command("list")
@click.option("--section", type=int, default=None, help="Only the people of this section's groups (its id).")
def list_people(section: int | None) -> None:
    """List people: e-mail, role, group and whether they still have to choose a password."""
    import sqlalchemy as sa

    from webapp.models import Person

    with _session() as (_app, session):
        people = (
            _people(session, (), section)
            if section is not None
            else session.scalars(sa.select(Person).order_by(Person.role, Person.email)).all()
        )
        for p in people:
            state = "to choose a password" if p.must_set_password else "password chosen"
            click.echo(f"{p.id:>5}  {p.role:<12} {p.email:<45} {(p.group.name if p.group else '—'):<16} {state}")


@users.command("set-password")
@click.argument("person")
@click.option("--password-stdin", is_flag=True, help="Read the password from the first line of standard input.")
@click.option("--keep", is_flag=True, help="Do not ask the person to choose their own at the next sign-in.")
def set_password(person: str, password_stdin: bool, keep: bool) -> None:
    """Set PERSON's password (an e-mail address or id); they choose their own at the next sign-in."""
    from webapp.services.accounts import find_person
    from webapp.services.accounts import set_password as do_set
    from webapp.services.errors import ServiceError

    if password_stdin:
        password = sys.stdin.readline().rstrip("\r\n")
    else:
        password = click.prompt("New password", hide_input=True, confirmation_prompt=True)
    with _session() as (app, session):
        try:
            p = find_person(session, person)
            do_set(session, None, p, password, must_change=not keep, method=app.config["PASSWORD_METHOD"])
        except ServiceError as exc:
            raise _Refused(exc.message) from None
        click.echo(f"password of {p.email} set" + ("" if keep else "; they choose their own at the next sign-in"))


@users.command("links")
@click.argument("people", nargs=-1)
@click.option("--section", type=int, default=None, help="Every person of this section's groups (its id).")
@click.option(
    "--base-url",
    default="http://127.0.0.1:5000",
    show_default=True,
    help="The notebook's address as the people will open it.",
)
@click.option("--days", type=click.IntRange(1, 90), default=14, show_default=True, help="Days a link stays valid.")
@click.option(
    "--csv",
    "csv_path",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Write the links to this CSV file (name, email, group, link, expires) instead of printing them.",
)
def links(people: tuple[str, ...], section: int | None, base_url: str, days: int, csv_path: Path | None) -> None:
    """Make one-time sign-in links for PEOPLE (e-mail addresses or ids) or a whole --section."""
    from webapp.services.accounts import issue_links, links_csv
    from webapp.services.errors import ServiceError

    with _session() as (_app, session):
        chosen = _people(session, people, section)
        try:
            issued = issue_links(session, None, chosen, days=days)
        except ServiceError as exc:
            raise _Refused(exc.message) from None
        text = links_csv(issued, base_url)
        if csv_path is not None:
            try:
                csv_path.write_text(text, encoding="utf-8")
            except OSError as exc:
                raise _Refused(f"{csv_path}: cannot write ({exc.strerror})") from None
            click.echo(
                f"{len(issued)} sign-in link(s) written to {csv_path}; each works once, until "
                f"{issued[0].expires_at:%Y-%m-%d}"
            )
        else:
            for link in issued:
                click.echo(f"{link.email:<45} {base_url.rstrip('/')}/auth/link/{link.secret}")
