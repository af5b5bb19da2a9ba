"""What the notebook's commands share: the app they work on and how a section is named on the command line."""

from __future__ import annotations

import click

__all__ = ["command_app", "find_section"]


def command_app():  # type: ignore[no-untyped-def]
    from webapp import create_app

    return create_app()


def find_section(session, text: str):  # type: ignore[no-untyped-def]
    """Return the section given as an id or as ``COURSE/SECTION``."""
    import sqlalchemy as sa

    from webapp.models import Course, Section

    text = text.strip()
    if text.isdigit():
        section = session.get(Section, int(text))
    else:
        course, _, name = text.rpartition("/")
        q = sa.select(Section).join(Course).where(Section.name == name.strip())
        if course:
            q = q.where(Course.name == course.strip())
        found = session.scalars(q).all()
        if len(found) > 1:
            raise click.BadParameter(
                f"{text!r} names {len(found)} sections; write COURSE/SECTION", param_hint="--section"
            )
        section = found[0] if found else None
    if section is None:
        raise click.BadParameter(f"no section {text!r} (give its id or COURSE/SECTION)", param_hint="--section")
    return section
