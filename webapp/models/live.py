"""Live runs: runs recorded as they read, their readings, and each section's default target."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.classes import Group, Section
    from webapp.models.people import Person


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
