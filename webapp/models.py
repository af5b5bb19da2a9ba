"""The notebook's tables: people, groups, calorimeters, runs, results and the audit trail.

Typed SQLAlchemy 2 models with named constraints. Every stored magnitude is in one
canonical unit named in its column (``heat_capacity_j_k`` and ``heat_capacity_j_k_std``,
the standard uncertainty); :mod:`webapp.quantities` turns them back into quantities.
Models hold columns, relationships and small invariants only: no Flask, no calc logic.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.kinds import calibration_kinds

ROLES = ("coordinator", "technician", "student")
#: who may record or approve a calibration in force (staff)
STAFF_ROLES = ("coordinator", "technician")
#: a calibration's standing: in the pool of the value in force, a student's proposal, or withdrawn
CALIBRATION_STATUSES = ("approved", "proposed", "withdrawn")
CALIBRATION_KINDS = calibration_kinds()
#: the largest id an INTEGER column holds on both databases (a larger number names nothing)
MAX_ID = 2**31 - 1

#: Alembic's recommended naming convention ("The Importance of Naming Constraints").
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


def utcnow() -> dt.datetime:
    """Return the current time in UTC (naive, as stored)."""
    return dt.datetime.now(dt.UTC).replace(tzinfo=None)


class Base(so.DeclarativeBase):
    """The one declarative base of the notebook."""

    metadata = sa.MetaData(naming_convention=NAMING_CONVENTION)


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


class Person(Base):
    """Somebody who signs in: a coordinator, a technician or a student.

    Provides the four members Flask-Login expects without importing Flask here.
    """

    __tablename__ = "people"
    __table_args__ = (sa.CheckConstraint("role IN ('coordinator', 'technician', 'student')", name="role"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    email: so.Mapped[str] = so.mapped_column(sa.String(254), unique=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(120))
    role: so.Mapped[str] = so.mapped_column(sa.String(20))
    password_hash: so.Mapped[str] = so.mapped_column(sa.String(255))
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"), index=True)
    active: so.Mapped[bool] = so.mapped_column(default=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    #: the person chooses a password of their own at the next sign-in (new, reset or link accounts)
    must_set_password: so.Mapped[bool] = so.mapped_column(default=False, server_default=sa.false())

    group: so.Mapped[Group | None] = so.relationship(back_populates="members")
    tokens: so.Mapped[list[ApiToken]] = so.relationship(back_populates="person")

    is_authenticated = True
    is_anonymous = False

    @property
    def is_active(self) -> bool:
        """Return whether the person may sign in."""
        return bool(self.active)

    def get_id(self) -> str:
        """Return the id Flask-Login keeps in the session."""
        return str(self.id)

    def __repr__(self) -> str:
        return f"<Person {self.id} {self.email} {self.role}>"


class ApiToken(Base):
    """An API token of one person; only its SHA-256 hash is stored."""

    __tablename__ = "api_tokens"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    person_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    label: so.Mapped[str] = so.mapped_column(sa.String(120), default="")
    prefix: so.Mapped[str] = so.mapped_column(sa.String(16))
    token_hash: so.Mapped[str] = so.mapped_column(sa.String(64), unique=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    last_used_at: so.Mapped[dt.datetime | None]
    revoked_at: so.Mapped[dt.datetime | None]
    #: "read" (GET only) or "write" (everything the person may do); tokens made before scopes: "write"
    scope: so.Mapped[str] = so.mapped_column(sa.String(10), default="write", server_default="write")

    person: so.Mapped[Person] = so.relationship(back_populates="tokens")


class Calorimeter(Base):
    """A calorimeter (a cup assembly) with its heat-capacity history."""

    __tablename__ = "calorimeters"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(200), unique=True)
    parts: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    location: so.Mapped[str] = so.mapped_column(sa.String(200), default="")
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    #: days a calibration stays valid on this calorimeter (None: the notebook's CALIBRATION_DUE_DAYS)
    calibration_interval_days: so.Mapped[int | None]
    #: what the calorimeter is (calc.io.runfile.CALORIMETER_TYPES): its plausible heat capacities follow it
    vessel_type: so.Mapped[str] = so.mapped_column(sa.String(20), default="foam-cups", server_default="foam-cups")
    #: optimistic concurrency: every UPDATE checks and raises it (the ETag of the API)
    version: so.Mapped[int] = so.mapped_column(default=1, server_default="1")

    __mapper_args__ = {"version_id_col": version}

    calibrations: so.Mapped[list[Calibration]] = so.relationship(
        back_populates="calorimeter",
        order_by=lambda: [Calibration.taken_at, Calibration.id],
        foreign_keys="Calibration.calorimeter_id",
    )


class Calibration(Base):
    """One value of a calorimeter's heat capacity: from a calibration result or entered by hand."""

    __tablename__ = "calibrations"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    calorimeter_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("calorimeters.id"), index=True)
    heat_capacity_j_k: so.Mapped[float]
    heat_capacity_j_k_std: so.Mapped[float]
    #: when the value was measured (the calibration run's [info] date, or the date typed with it)
    taken_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    result_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("results.id"), index=True)
    note: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    #: "approved" (staff recorded or approved it), "proposed" (a student's, or one awaiting
    #: confirmation) or "withdrawn"; only approved measurements are pooled into the value in force
    status: so.Mapped[str] = so.mapped_column(sa.String(20), default="approved", server_default="approved")
    approved_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    approved_at: so.Mapped[dt.datetime | None]
    withdrawn_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    withdrawn_at: so.Mapped[dt.datetime | None]
    withdrawn_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="", server_default="")
    #: a confirmed change of the cup: the pool of the value in force starts again here
    restart: so.Mapped[bool] = so.mapped_column(default=False, server_default=sa.false())
    #: when this row became the cup's value in force (the newest such row is in force)
    in_force_at: so.Mapped[dt.datetime | None] = so.mapped_column(index=True)
    #: a pooled value: {"members": [ids], "excluded": [ids], "chi2", "dof", "birge", ...}; None for a measurement
    pool: so.Mapped[dict[str, Any] | None] = so.mapped_column(sa.JSON)

    calorimeter: so.Mapped[Calorimeter] = so.relationship(back_populates="calibrations", foreign_keys=[calorimeter_id])
    result: so.Mapped[Result | None] = so.relationship(foreign_keys=[result_id])
    created_by: so.Mapped[Person | None] = so.relationship(foreign_keys=[created_by_id])
    approved_by: so.Mapped[Person | None] = so.relationship(foreign_keys=[approved_by_id])
    withdrawn_by: so.Mapped[Person | None] = so.relationship(foreign_keys=[withdrawn_by_id])


class Run(Base):
    """One run: the files exactly as uploaded, the parsed series, who, where, when."""

    __tablename__ = "runs"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    kind: so.Mapped[str] = so.mapped_column(sa.String(40), index=True)
    title: so.Mapped[str] = so.mapped_column(sa.String(300), default="")
    run_file_name: so.Mapped[str] = so.mapped_column(sa.String(255))
    run_toml: so.Mapped[str] = so.mapped_column(sa.Text, deferred=True, deferred_group="files")
    readings_name: so.Mapped[str] = so.mapped_column(sa.String(255))
    readings_raw: so.Mapped[bytes] = so.mapped_column(sa.LargeBinary, deferred=True, deferred_group="files")
    #: parsed series, little-endian float64 (s and K); see webapp.quantities.series
    series_time_s: so.Mapped[bytes] = so.mapped_column(sa.LargeBinary, deferred=True, deferred_group="series")
    series_temperature_k: so.Mapped[bytes] = so.mapped_column(sa.LargeBinary, deferred=True, deferred_group="series")
    points: so.Mapped[int]
    author_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    operator: so.Mapped[str] = so.mapped_column(sa.String(200), default="")
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"), index=True)
    bench: so.Mapped[str] = so.mapped_column(sa.String(120), default="")
    performed_on: so.Mapped[str] = so.mapped_column(sa.String(40), default="")
    notes: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    #: the run file's ``[info] sample``: the sample or lot, for series of replicates
    sample: so.Mapped[str] = so.mapped_column(sa.String(200), default="", server_default="", index=True)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow, index=True)
    calorimeter_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("calorimeters.id"), index=True)
    #: the calibration that supplied C_cal (None when the run file gave it); added after
    #: both tables exist, since calibrations → results → runs → calibrations is a cycle
    calibration_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("calibrations.id", use_alter=True))
    locked: so.Mapped[bool] = so.mapped_column(default=False)
    locked_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    locked_at: so.Mapped[dt.datetime | None]
    #: SHA-256 of the run file and the readings as imported in bulk (re-import changes nothing)
    content_hash: so.Mapped[str | None] = so.mapped_column(sa.String(64), unique=True)
    #: the one-time token of the page form that saved the run (a double submit saves one run)
    submit_token: so.Mapped[str | None] = so.mapped_column(sa.String(64), unique=True)
    bench_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("benches.id"), index=True)
    #: optimistic concurrency: every UPDATE checks and raises it (the ETag of the API)
    version: so.Mapped[int] = so.mapped_column(default=1, server_default="1")
    #: what the lock signed: the current result then and the SHA-256 of the run's content
    locked_result_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("results.id", use_alter=True))
    locked_hash: so.Mapped[str | None] = so.mapped_column(sa.String(64))

    __mapper_args__ = {"version_id_col": version}

    author: so.Mapped[Person] = so.relationship(foreign_keys=[author_id])
    locked_by: so.Mapped[Person | None] = so.relationship(foreign_keys=[locked_by_id])
    group: so.Mapped[Group | None] = so.relationship()
    calorimeter: so.Mapped[Calorimeter | None] = so.relationship()
    calibration: so.Mapped[Calibration | None] = so.relationship(foreign_keys=[calibration_id])
    inputs: so.Mapped[list[RunInput]] = so.relationship(
        back_populates="run", order_by="RunInput.id", cascade="all, delete-orphan"
    )
    results: so.Mapped[list[Result]] = so.relationship(
        back_populates="run", order_by="Result.id", foreign_keys="Result.run_id"
    )
    #: staff's and the author's decisions (withdrawn, excluded, accepted, a mark by hand); None: none yet
    review: so.Mapped[RunReview | None] = so.relationship(viewonly=True, uselist=False)

    @property
    def current_result(self) -> Result | None:
        """Return the current result (re-analysis adds results and keeps the old ones)."""
        current = [r for r in self.results if r.is_current]
        return current[-1] if current else None


class RunInput(Base):
    """One measured input of a run as read from its file: value ± u in the unit written."""

    __tablename__ = "run_inputs"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    field: so.Mapped[str] = so.mapped_column(sa.String(80))
    value: so.Mapped[float | None]
    std_uncertainty: so.Mapped[float | None]
    unit: so.Mapped[str] = so.mapped_column(sa.String(40), default="")
    text: so.Mapped[str] = so.mapped_column(sa.String(300), default="")
    #: "run file", or where a supplied value came from (a calibration)
    origin: so.Mapped[str] = so.mapped_column(sa.String(120), default="run file")

    run: so.Mapped[Run] = so.relationship(back_populates="inputs")


class Result(Base):
    """One analysis of a run: method, windows, every output ± u, budget and provenance."""

    __tablename__ = "results"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    is_current: so.Mapped[bool] = so.mapped_column(default=True)
    method: so.Mapped[str] = so.mapped_column(sa.String(60))
    main: so.Mapped[str] = so.mapped_column(sa.String(60))
    fore_start_s: so.Mapped[float]
    fore_end_s: so.Mapped[float]
    after_start_s: so.Mapped[float]
    after_end_s: so.Mapped[float]
    mixing_time_s: so.Mapped[float]
    mixing_time_s_std: so.Mapped[float]
    mixing_time_detected: so.Mapped[bool]
    periods_given: so.Mapped[bool] = so.mapped_column(default=False)
    corrected_delta_t_k: so.Mapped[float]
    corrected_delta_t_k_std: so.Mapped[float]
    heat_j: so.Mapped[float]
    heat_j_std: so.Mapped[float]
    molar_enthalpy_kj_mol: so.Mapped[float | None]
    molar_enthalpy_kj_mol_std: so.Mapped[float | None]
    calorimeter_heat_capacity_j_k: so.Mapped[float | None]
    calorimeter_heat_capacity_j_k_std: so.Mapped[float | None]
    #: expanded uncertainty of the main output, in its unit, and its coverage factor
    expanded_uncertainty: so.Mapped[float]
    coverage_factor: so.Mapped[float]
    dof_eff: so.Mapped[float | None]
    budget: so.Mapped[list[Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    warnings: so.Mapped[list[Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    comparison: so.Mapped[dict[str, Any] | None] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    cautions: so.Mapped[list[Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    construction: so.Mapped[dict[str, Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    properties: so.Mapped[dict[str, Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    monte_carlo: so.Mapped[dict[str, Any] | None] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    record: so.Mapped[dict[str, Any]] = so.mapped_column(sa.JSON, deferred=True, deferred_group="detail")
    #: plausibility checks of calc.checks ({"code", "severity", "message", "value"}); not deferred, since
    #: lists, dashboards and control charts leave out runs with warning checks (None: analyzed before them)
    checks: so.Mapped[list[Any] | None] = so.mapped_column(sa.JSON)
    software_version: so.Mapped[str] = so.mapped_column(sa.String(40))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))

    run: so.Mapped[Run] = so.relationship(back_populates="results", foreign_keys=[run_id])
    created_by: so.Mapped[Person | None] = so.relationship()


class AuditEntry(Base):
    """One change: who, when, which entity and field, old → new (as text)."""

    __tablename__ = "audit_entries"
    __table_args__ = (sa.Index("ix_audit_entries_entity", "entity", "entity_id"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    person_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    entity: so.Mapped[str] = so.mapped_column(sa.String(40))
    entity_id: so.Mapped[int]
    field: so.Mapped[str] = so.mapped_column(sa.String(80))
    old: so.Mapped[str | None] = so.mapped_column(sa.Text)
    new: so.Mapped[str | None] = so.mapped_column(sa.Text)

    person: so.Mapped[Person | None] = so.relationship()


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


class Series(Base):
    """A named series of repeat runs of one measurement (replicates, or check-standard runs)."""

    __tablename__ = "series"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    name: so.Mapped[str] = so.mapped_column(sa.String(200))
    notes: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    created_by: so.Mapped[Person | None] = so.relationship()
    members: so.Mapped[list[SeriesRun]] = so.relationship(
        back_populates="series", order_by="SeriesRun.run_id", cascade="all, delete-orphan"
    )


class SeriesRun(Base):
    """A run's membership of a series."""

    __tablename__ = "series_runs"

    series_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("series.id"), primary_key=True)
    run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("runs.id"), primary_key=True, index=True)

    series: so.Mapped[Series] = so.relationship(back_populates="members")
    run: so.Mapped[Run] = so.relationship()


class Webhook(Base):
    """A URL that receives a signed JSON POST when a result is finalised (its run is locked)."""

    __tablename__ = "webhooks"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    url: so.Mapped[str] = so.mapped_column(sa.String(2000))
    #: the HMAC-SHA256 key (kept in clear: it is needed to sign)
    secret: so.Mapped[str] = so.mapped_column(sa.String(128))
    active: so.Mapped[bool] = so.mapped_column(default=True)
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    deliveries: so.Mapped[list[WebhookDelivery]] = so.relationship(
        back_populates="webhook", order_by="WebhookDelivery.id"
    )


class WebhookDelivery(Base):
    """One event to send to one webhook: the body, attempts made, state and the next attempt."""

    __tablename__ = "webhook_deliveries"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    webhook_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("webhooks.id"), index=True)
    event: so.Mapped[str] = so.mapped_column(sa.String(60))
    run_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    body: so.Mapped[str] = so.mapped_column(sa.Text)
    #: "pending", "delivered" or "failed" (no attempts left)
    status: so.Mapped[str] = so.mapped_column(sa.String(20), default="pending", index=True)
    attempts: so.Mapped[int] = so.mapped_column(default=0)
    next_attempt_at: so.Mapped[dt.datetime | None]
    last_attempt_at: so.Mapped[dt.datetime | None]
    last_status_code: so.Mapped[int | None]
    last_error: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    webhook: so.Mapped[Webhook] = so.relationship(back_populates="deliveries")


class SignInLink(Base):
    """A one-time sign-in link handed to one person; only the SHA-256 of its secret is stored."""

    __tablename__ = "sign_in_links"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    person_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    token_hash: so.Mapped[str] = so.mapped_column(sa.String(64), unique=True)
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    expires_at: so.Mapped[dt.datetime]
    #: set when the link is used or replaced by a newer one; a link works once
    used_at: so.Mapped[dt.datetime | None]

    person: so.Mapped[Person] = so.relationship(foreign_keys=[person_id])


class RunReview(Base):
    """Staff's and the author's decisions on a run: withdrawn, excluded, accepted, a mark set by hand.

    Kept apart from the run so that a signed (locked) run can still be withdrawn or excluded by
    staff; every change is audited on the run (``services.review``).
    """

    __tablename__ = "run_reviews"

    run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("runs.id"), primary_key=True)
    withdrawn: so.Mapped[bool] = so.mapped_column(default=False)
    withdrawn_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    excluded: so.Mapped[bool] = so.mapped_column(default=False)
    excluded_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    #: a plausibility flag of the current result was looked at and the run accepted
    accepted: so.Mapped[bool] = so.mapped_column(default=False)
    accepted_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    #: a mark set by staff in place of the scheme's (None: the scheme's mark)
    mark_points: so.Mapped[float | None]
    mark_reason: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    updated_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))

    run: so.Mapped[Run] = so.relationship()


class Comment(Base):
    """A comment by staff on one run or on one group's work; the group's students read it."""

    __tablename__ = "comments"
    __table_args__ = (sa.CheckConstraint("(run_id IS NULL) <> (group_id IS NULL)", name="one_target"),)

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    run_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"), index=True)
    author_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"))
    body: so.Mapped[str] = so.mapped_column(sa.Text)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    author: so.Mapped[Person] = so.relationship()


class MarkingScheme(Base):
    """A section's marking scheme: bands of |E_n| and of relative error, each with points."""

    __tablename__ = "marking_schemes"

    section_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("sections.id"), primary_key=True)
    #: {"en": [[upper bound or null, points], ...], "relative": [[bound or null, points], ...]}
    bands: so.Mapped[dict[str, Any]] = so.mapped_column(sa.JSON)
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    updated_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))


class SignInFailure(Base):
    """A failed sign-in: the e-mail address tried and the client address (for throttling)."""

    __tablename__ = "sign_in_failures"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    email: so.Mapped[str] = so.mapped_column(sa.String(254), index=True)
    address: so.Mapped[str] = so.mapped_column(sa.String(64), index=True)
    at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow, index=True)


# ----------------------------------------------------------------- live runs (recorded as they read)

LIVE_STATES = ("recording", "finished", "abandoned")


class LiveRun(Base):
    """A run being recorded: its run file, the readings streamed so far, the latest advice.

    When finished it is analyzed and stored as an ordinary :class:`Run` (``run_id``).
    """

    __tablename__ = "live_runs"
    __table_args__ = (
        sa.UniqueConstraint("owner_id", "client_key"),
        sa.CheckConstraint("state IN ('recording', 'finished', 'abandoned')", name="state"),
    )

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    owner_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("people.id"), index=True)
    #: chosen by the recorder (a UUID): a second create with it resumes the same live run
    client_key: so.Mapped[str] = so.mapped_column(sa.String(64))
    title: so.Mapped[str] = so.mapped_column(sa.String(300), default="")
    calorimeter_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("calorimeters.id"))
    section_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("sections.id"), index=True)
    bench_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("benches.id"))
    bench: so.Mapped[str] = so.mapped_column(sa.String(120), default="")
    group_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("groups.id"))
    #: the run file (TOML) exactly as sent
    run_file: so.Mapped[str] = so.mapped_column(sa.Text)
    #: the target expanded uncertainty of the main output, in its own unit (None: the section's, else the default)
    target_u: so.Mapped[float | None]
    state: so.Mapped[str] = so.mapped_column(sa.String(12), default="recording")
    #: the highest reading sequence number stored (-1: none yet)
    last_seq: so.Mapped[int] = so.mapped_column(default=-1)
    #: the advisor's latest answer (JSON text) and the last_seq it saw
    advice_json: so.Mapped[str] = so.mapped_column(sa.Text, default="{}")
    advice_seq: so.Mapped[int] = so.mapped_column(default=-1)
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow, index=True)
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
    run_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("runs.id"))

    owner: so.Mapped[Person] = so.relationship()
    group: so.Mapped[Group | None] = so.relationship()
    section: so.Mapped[Section | None] = so.relationship()


class LiveReading(Base):
    """One reading of a live run: its sequence number (0-based), time (s) and temperature (°C)."""

    __tablename__ = "live_readings"

    live_run_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("live_runs.id", ondelete="CASCADE"), primary_key=True)
    seq: so.Mapped[int] = so.mapped_column(primary_key=True, autoincrement=False)
    time_s: so.Mapped[float]
    temperature_c: so.Mapped[float]


class LiveSectionTarget(Base):
    """A section's default target expanded uncertainty for its live runs (set by its coordinator)."""

    __tablename__ = "live_section_targets"

    section_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("sections.id"), primary_key=True)
    target_u: so.Mapped[float]
    updated_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)
