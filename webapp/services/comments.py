"""Staff comments on a run or on a group's work; the group's students read them.

Coordinators and technicians write; whoever may see the run (or belongs to the group) reads.
Each comment is audited on its run or group (entity ``run`` or ``group``, field ``comment``).
"""

from __future__ import annotations

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Comment, Group, Person
from webapp.services.audit import record_change
from webapp.services.classes import require_staff
from webapp.services.errors import NotFound
from webapp.services.jsontext import required_text
from webapp.services.runs import get_run

MAX_COMMENT = 4000


def _body(text: object) -> str:
    return required_text(text, field="body", missing="write the comment first", what="the comment", limit=MAX_COMMENT)


def can_read_group(person: Person, group: Group) -> bool:
    """Return whether ``person`` may read a group's comments (staff, or a member of the group)."""
    return person.role in ("coordinator", "technician") or person.group_id == group.id


def get_group(session: so.Session, actor: Person, group_id: int) -> Group:
    """Return a group ``actor`` may read; :raise NotFound: otherwise (nothing is revealed)."""
    group = session.get(Group, group_id)
    if group is None or not can_read_group(actor, group):
        raise NotFound(f"no group with id {group_id}", field="group_id")
    return group


def add_run_comment(session: so.Session, actor: Person, run_id: int, body: object) -> Comment:
    """Add a staff comment to a run and commit (a signed run may still be commented on)."""
    require_staff(actor, "comment on runs")
    run = get_run(session, actor, run_id)
    return _add(session, actor, Comment(run_id=run.id, author_id=actor.id, body=_body(body)), "run", run.id)


def add_group_comment(session: so.Session, actor: Person, group_id: int, body: object) -> Comment:
    """Add a staff comment on a group's work and commit."""
    require_staff(actor, "comment on groups")
    group = get_group(session, actor, group_id)
    return _add(session, actor, Comment(group_id=group.id, author_id=actor.id, body=_body(body)), "group", group.id)


def _add(session: so.Session, actor: Person, comment: Comment, entity: str, entity_id: int) -> Comment:
    """Store a comment, audited on its run or group, and commit."""
    session.add(comment)
    record_change(session, actor, entity, entity_id, "comment", None, comment.body)
    session.commit()
    return comment


def run_comments(session: so.Session, actor: Person, run_id: int) -> list[Comment]:
    """Return the comments on a run ``actor`` may see, oldest first."""
    run = get_run(session, actor, run_id)
    return list(
        session.scalars(
            sa.select(Comment)
            .where(Comment.run_id == run.id)
            .options(so.joinedload(Comment.author))
            .order_by(Comment.created_at, Comment.id)
        )
    )


def group_comments(session: so.Session, actor: Person, group_ids: list[int]) -> dict[int, list[Comment]]:
    """Return the comments on each of these groups that ``actor`` may read, oldest first."""
    if not group_ids:
        return {}
    readable = [
        g.id for g in session.scalars(sa.select(Group).where(Group.id.in_(group_ids))) if can_read_group(actor, g)
    ]
    out: dict[int, list[Comment]] = {gid: [] for gid in readable}
    if readable:
        for c in session.scalars(
            sa.select(Comment)
            .where(Comment.group_id.in_(readable))
            .options(so.joinedload(Comment.author))
            .order_by(Comment.created_at, Comment.id)
        ):
            out[c.group_id].append(c)  # type: ignore[index]
    return out
