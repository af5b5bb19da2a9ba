"""Classes: courses → sections → groups and benches, rosters from CSV, and who may see a section.

Coordinators manage all of it. Every operation checks everything first and commits once;
a roster is stored all-or-nothing (every row is validated, errors carry the CSV line).

The access rules of sections live here beside the operations they guard (they extend
:mod:`webapp.services.access`): coordinators and technicians see every section; a student
sees only the section of their own group.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import math
import re
import secrets

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import InputError
from calc.io.quantities import parse_measured
from webapp.models import ROLES, Bench, Calorimeter, Course, Group, Person, Section
from webapp.services.access import require_coordinator
from webapp.services.errors import Conflict, Forbidden, Invalid, NotFound, get_or_not_found
from webapp.services.people import DEFAULT_PASSWORD_METHOD, hash_password

ROSTER_COLUMNS = ("course", "section", "group", "name", "email", "role")
_EMAIL_RE = re.compile(r"[^@\s]+@[^@\s]+\.[^@\s]+")
MAX_ROSTER_ROWS = 5000


# ----------------------------------------------------------------- access


def can_view_section(person: Person, section: Section) -> bool:
    """Return whether ``person`` may see a section's dashboard (students: their own section only)."""
    if person.role in ("coordinator", "technician"):
        return True
    return person.group is not None and person.group.section_id == section.id


def require_staff(person: Person, what: str) -> None:
    """Raise :class:`Forbidden` unless ``person`` is a coordinator or a technician."""
    if person.role not in ("coordinator", "technician"):
        raise Forbidden(f"only a coordinator or a technician may {what}")


# ----------------------------------------------------------------- queries


def get_course(session: so.Session, course_id: int) -> Course:
    """Return a course.

    :raise NotFound: when there is none
    """
    return get_or_not_found(session, Course, course_id, "course", "course_id")


def get_section(session: so.Session, actor: Person, section_id: int) -> Section:
    """Return a section ``actor`` may see.

    :raise NotFound: when there is none, or it is another section (for a student)
    """
    section = session.get(Section, section_id)
    if section is None or not can_view_section(actor, section):
        raise NotFound(f"no section with id {section_id}", field="section_id")
    return section


def sections_query(course_id: int | None = None) -> sa.Select[tuple[Section]]:
    """Return the query of the sections (of one course), by course and name."""
    q = sa.select(Section).join(Course).order_by(Course.name, Section.name).options(so.joinedload(Section.course))
    if course_id is not None:
        q = q.where(Section.course_id == course_id)
    return q


def visible_sections(session: so.Session, actor: Person) -> list[Section]:
    """Return the sections ``actor`` may see."""
    return [s for s in session.scalars(sections_query()).unique() if can_view_section(actor, s)]


def courses_query() -> sa.Select[tuple[Course]]:
    """Return the query of the courses by name."""
    return sa.select(Course).order_by(Course.name)


def groups_query() -> sa.Select[tuple[Group]]:
    """Return the query of every group by name (the API's list of groups)."""
    return sa.select(Group).order_by(Group.name)


# ----------------------------------------------------------------- operations


def _text(value: object, field: str, limit: int, *, required: bool = True) -> str:
    if value is None:
        value = ""
    if not isinstance(value, str):
        raise Invalid("expected text", field=field)
    value = value.strip()
    if required and not value:
        raise Invalid("must not be empty", field=field)
    if len(value) > limit:
        raise Invalid(f"at most {limit} characters", field=field)
    return value


def create_section(session: so.Session, actor: Person, *, course_id: int, name: str) -> Section:
    """Add a section to a course (coordinators only) and commit."""
    require_coordinator(actor, "manage sections")
    name = _text(name, "name", 120)
    course = get_course(session, course_id)
    if session.scalar(sa.select(Section.id).where(Section.course_id == course.id, Section.name == name)):
        raise Conflict(f"course {course.name!r} has a section named {name!r} already", field="name")
    section = Section(course=course, name=name)
    session.add(section)
    session.commit()
    return section


def parse_resolution(text: str | float | None, field: str = "thermometer_resolution") -> float | None:
    """Return a thermometer resolution in K from ``"0.01 K"`` (or a number of kelvins); None for empty."""
    if text is None or (isinstance(text, str) and not text.strip()):
        return None
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value = float(text)
    else:
        try:
            value = parse_measured(str(text), field=field, expected="K").m_as("K")
        except InputError as exc:
            raise Invalid(str(exc), field=field) from None
    if not (math.isfinite(value) and value > 0):
        raise Invalid(f"expected a positive resolution in K, got {text!r}", field=field)
    return value


def create_bench(
    session: so.Session,
    actor: Person,
    *,
    section_id: int,
    name: str,
    calorimeter_id: int | None = None,
    thermometer: str = "",
    thermometer_resolution: str | float | None = None,
) -> Bench:
    """Add a bench (calorimeter + thermometer) to a section (coordinators only) and commit."""
    require_coordinator(actor, "manage benches")
    name = _text(name, "name", 120)
    thermometer = _text(thermometer, "thermometer", 120, required=False)
    section = get_section(session, actor, section_id)
    if calorimeter_id is not None and session.get(Calorimeter, calorimeter_id) is None:
        raise Invalid(f"no calorimeter with id {calorimeter_id}", field="calorimeter_id")
    resolution = parse_resolution(thermometer_resolution)
    if session.scalar(sa.select(Bench.id).where(Bench.section_id == section.id, Bench.name == name)):
        raise Conflict(f"section {section.name!r} has a bench named {name!r} already", field="name")
    bench = Bench(
        section=section,
        name=name,
        calorimeter_id=calorimeter_id,
        thermometer=thermometer,
        thermometer_resolution_k=resolution,
    )
    session.add(bench)
    session.commit()
    return bench


# ----------------------------------------------------------------- rosters


@dataclasses.dataclass
class RosterReport:
    """What a roster import did: people created and updated, courses, sections and groups created."""

    people_created: list[str] = dataclasses.field(default_factory=list)
    people_updated: list[str] = dataclasses.field(default_factory=list)
    courses_created: list[str] = dataclasses.field(default_factory=list)
    sections_created: list[str] = dataclasses.field(default_factory=list)
    groups_created: list[str] = dataclasses.field(default_factory=list)


class RosterInvalid(Invalid):
    """A roster with errors; ``errors`` lists every one with its CSV line (nothing was stored)."""

    def __init__(self, errors: list[str]) -> None:
        shown = "; ".join(errors[:20]) + (f"; … and {len(errors) - 20} more" if len(errors) > 20 else "")
        super().__init__(f"the roster was not imported ({len(errors)} error(s)): {shown}", field="roster")
        self.errors = errors


@dataclasses.dataclass
class _Row:
    line: int
    course: str
    section: str
    group: str
    name: str
    email: str
    role: str


def _roster_rows(text: str, source: str) -> tuple[list[_Row], list[str]]:
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    if not header:
        raise RosterInvalid([f"{source}, line 1: empty file; expected the columns {', '.join(ROSTER_COLUMNS)}"])
    missing = [c for c in ("name", "email", "role") if c not in header]
    if missing:
        raise RosterInvalid(
            [f"{source}, line 1: missing column(s) {', '.join(missing)}; expected {', '.join(ROSTER_COLUMNS)}"]
        )
    reader.fieldnames = header
    rows: list[_Row] = []
    errors: list[str] = []
    for raw in reader:
        line = reader.line_num
        if len(rows) >= MAX_ROSTER_ROWS:
            errors.append(f"{source}: more than {MAX_ROSTER_ROWS} rows; split the roster")
            break
        if None in raw:
            errors.append(f"{source}, line {line}: more cells than columns")
            continue
        vals = {k: (raw.get(k) or "").strip() for k in ROSTER_COLUMNS}
        if not any(vals.values()):
            continue
        rows.append(
            _Row(
                line,
                vals["course"],
                vals["section"],
                vals["group"],
                vals["name"],
                vals["email"].lower(),
                vals["role"].lower(),
            )
        )
    return rows, errors


def import_roster(
    session: so.Session,
    actor: Person,
    text: str,
    *,
    source: str = "roster.csv",
    password_method: str = DEFAULT_PASSWORD_METHOD,
) -> RosterReport:
    """Import a roster CSV (coordinators only): people, and the courses, sections and groups they name.

    Columns ``course, section, group, name, email, role`` (``course``/``section``/``group`` may be
    empty for staff). Every row is validated first; any error stores nothing and raises
    :class:`RosterInvalid` listing each error with its line. A person already known by e-mail is
    moved to the row's group. New accounts get a random password (a coordinator sets a real one).
    """
    require_coordinator(actor, "import rosters")
    rows, errors = _roster_rows(text, source)
    known = _Known(
        courses={c.name: c for c in session.scalars(sa.select(Course))},
        sections={
            (s.course.name, s.name): s
            for s in session.scalars(sa.select(Section).options(so.joinedload(Section.course)))
        },
        groups={g.name: g for g in session.scalars(sa.select(Group).options(so.joinedload(Group.section)))},
        people={
            p.email: p for p in session.scalars(sa.select(Person).where(Person.email.in_([r.email for r in rows])))
        },
    )
    seen: dict[str, int] = {}
    planned_groups: dict[str, tuple[str, str]] = {}
    for r in rows:
        errors += _row_errors(r, f"{source}, line {r.line}", known, seen, planned_groups)
    if not rows and not errors:
        errors.append(f"{source}: no rows")
    if errors:
        raise RosterInvalid(errors)
    report = _store_roster(session, rows, known, password_method)
    session.commit()
    return report


@dataclasses.dataclass
class _Known:
    """What the notebook holds already of the names a roster uses (added to as the roster is stored)."""

    courses: dict[str, Course]
    sections: dict[tuple[str, str], Section]
    groups: dict[str, Group]
    people: dict[str, Person]


def _row_errors(
    r: _Row, where: str, known: _Known, seen: dict[str, int], planned_groups: dict[str, tuple[str, str]]
) -> list[str]:
    """Return the errors of one roster row (``seen`` and ``planned_groups`` carry earlier rows)."""
    errors = []
    if not _EMAIL_RE.fullmatch(r.email):
        errors.append(f"{where}, column email: expected an e-mail address, got {r.email!r}")
    elif r.email in seen:
        errors.append(f"{where}, column email: {r.email} is on line {seen[r.email]} already")
    else:
        seen[r.email] = r.line
    if r.role not in ROLES:
        errors.append(f"{where}, column role: expected one of {', '.join(ROLES)}, got {r.role!r}")
    if not r.name:
        errors.append(f"{where}, column name: must not be empty")
    for col, val, lim in (
        ("course", r.course, 120),
        ("section", r.section, 120),
        ("group", r.group, 120),
        ("name", r.name, 120),
    ):
        if len(val) > lim:
            errors.append(f"{where}, column {col}: at most {lim} characters")
    if r.group and not (r.course and r.section):
        errors.append(f"{where}: a group needs its course and section")
    elif r.section and not r.course:
        errors.append(f"{where}: a section needs its course")
    if r.role == "student" and not r.group:
        errors.append(f"{where}, column group: a student needs a group")
    if r.group:
        key = (r.course, r.section)
        g = known.groups.get(r.group)
        if g is not None and (g.section is None or (g.section.course.name, g.section.name) != key):
            other = f"section {g.section.name!r}" if g.section else "no section"
            errors.append(
                f"{where}, column group: group {r.group!r} exists already in {other}; "
                "group names are unique in the notebook"
            )
        elif planned_groups.setdefault(r.group, key) != key:
            errors.append(f"{where}, column group: group {r.group!r} is given another section on an earlier line")
    p = known.people.get(r.email)
    if p is not None and r.role in ROLES and p.role != r.role:
        errors.append(f"{where}, column role: {r.email} is a {p.role} already, not a {r.role}")
    return errors


def _store_roster(session: so.Session, rows: list[_Row], known: _Known, password_method: str) -> RosterReport:
    """Add the courses, sections, groups and people of checked roster rows (the caller commits)."""
    report = RosterReport()
    for r in rows:
        course = None
        if r.course:
            course = known.courses.get(r.course)
            if course is None:
                course = known.courses[r.course] = Course(name=r.course)
                session.add(course)
                report.courses_created.append(r.course)
        section = None
        if r.section and course is not None:
            section = known.sections.get((r.course, r.section))
            if section is None:
                section = known.sections[(r.course, r.section)] = Section(course=course, name=r.section)
                session.add(section)
                report.sections_created.append(f"{r.course} / {r.section}")
        group = None
        if r.group and section is not None:
            group = known.groups.get(r.group)
            if group is None:
                group = known.groups[r.group] = Group(name=r.group, course=course, section=section)
                session.add(group)
                report.groups_created.append(r.group)
        p = known.people.get(r.email)
        if p is None:
            session.add(
                Person(
                    email=r.email,
                    name=r.name,
                    role=r.role,
                    group=group,
                    password_hash=hash_password(secrets.token_urlsafe(24), password_method),
                )
            )
            report.people_created.append(r.email)
        elif group is not None and p.group_id != getattr(group, "id", None):
            p.group = group
            report.people_updated.append(r.email)
    return report
