"""Calorimeters and their calibrations (the heat-capacity history and the value in force)."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING, Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.kinds import calibration_kinds
from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.people import Person
    from webapp.models.runs import Result


#: a calibration's standing: in the pool of the value in force, a student's proposal, or withdrawn
CALIBRATION_STATUSES = ("approved", "proposed", "withdrawn")
CALIBRATION_KINDS = calibration_kinds()


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
