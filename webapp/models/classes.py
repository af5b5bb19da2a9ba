"""Classes: courses, their sections and groups, the sections' benches and marking schemes."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING, Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.calorimeters import Calorimeter
    from webapp.models.people import Person


class Course(Base):
    """A course (a term of a teaching lab); groups belong to one."""

    __tablename__ = "courses"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120), unique=True)
    term: so.Mapped[str] = so.mapped_column(sa.String(60), default="")
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    groups: so.Mapped[list[Group]] = so.relationship(back_populates="course")


class Group(Base):
    """A group of people who work together (students see their own group's runs)."""

    __tablename__ = "groups"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120), unique=True)
    course_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("courses.id"), index=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    #: the section the group works in (classes); None for groups made before sections existed
    section_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("sections.id"), index=True)

    course: so.Mapped[Course | None] = so.relationship(back_populates="groups")
    members: so.Mapped[list[Person]] = so.relationship(back_populates="group")
    section: so.Mapped[Section | None] = so.relationship(back_populates="groups")


class Section(Base):
    """A section of a course: the groups that meet in one lab slot, with their benches."""

    __tablename__ = "sections"
    __table_args__ = (sa.UniqueConstraint("course_id", "name"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    course_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("courses.id"), index=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    course: so.Mapped[Course] = so.relationship()
    groups: so.Mapped[list[Group]] = so.relationship(back_populates="section", order_by="Group.name")
    benches: so.Mapped[list[Bench]] = so.relationship(back_populates="section", order_by="Bench.name")


class Bench(Base):
    """A bench of a section: its calorimeter and its thermometer (name and resolution)."""

    __tablename__ = "benches"
    __table_args__ = (sa.UniqueConstraint("section_id", "name"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    section_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("sections.id"), index=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120))
    calorimeter_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("calorimeters.id"), index=True)
    thermometer: so.Mapped[str] = so.mapped_column(sa.String(120), default="")
    thermometer_resolution_k: so.Mapped[float | None]
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    section: so.Mapped[Section] = so.relationship(back_populates="benches")
    calorimeter: so.Mapped[Calorimeter | None] = so.relationship()


class MarkingScheme(Base):
    """A section's marking scheme: bands of |E_n| and of relative error, each with points."""

    __tablename__ = "marking_schemes"

    section_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("sections.id"), primary_key=True)
    #: {"en": [[upper bound or null, points], ...], "relative": [[bound or null, points], ...]}
    bands: so.Mapped[dict[str, Any]] = so.mapped_column(sa.JSON)
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    updated_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
