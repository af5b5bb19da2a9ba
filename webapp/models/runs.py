"""Runs and their results: the files as uploaded, the inputs read from them, every analysis, and series of repeats."""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING, Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow

if TYPE_CHECKING:
    from webapp.models.calorimeters import Calibration, Calorimeter
    from webapp.models.classes import Group
    from webapp.models.people import Person
    from webapp.models.review import RunReview


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
