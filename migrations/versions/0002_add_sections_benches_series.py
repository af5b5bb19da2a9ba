"""Add sections, benches, series, calibration intervals and import content hashes

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "sections",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("course_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(["course_id"], ["courses.id"], name=op.f("fk_sections_course_id_courses")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_sections")),
        sa.UniqueConstraint("course_id", "name", name=op.f("uq_sections_course_id")),
    )
    with op.batch_alter_table("sections", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_sections_course_id"), ["course_id"], unique=False)

    op.create_table(
        "benches",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("section_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("calorimeter_id", sa.Integer(), nullable=True),
        sa.Column("thermometer", sa.String(length=120), nullable=False),
        sa.Column("thermometer_resolution_k", sa.Double(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["calorimeter_id"], ["calorimeters.id"], name=op.f("fk_benches_calorimeter_id_calorimeters")
        ),
        sa.ForeignKeyConstraint(["section_id"], ["sections.id"], name=op.f("fk_benches_section_id_sections")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_benches")),
        sa.UniqueConstraint("section_id", "name", name=op.f("uq_benches_section_id")),
    )
    with op.batch_alter_table("benches", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_benches_calorimeter_id"), ["calorimeter_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_benches_section_id"), ["section_id"], unique=False)

    op.create_table(
        "series",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("notes", sa.Text(), nullable=False),
        sa.Column("created_by_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(["created_by_id"], ["people.id"], name=op.f("fk_series_created_by_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_series")),
    )
    op.create_table(
        "series_runs",
        sa.Column("series_id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_series_runs_run_id_runs")),
        sa.ForeignKeyConstraint(["series_id"], ["series.id"], name=op.f("fk_series_runs_series_id_series")),
        sa.PrimaryKeyConstraint("series_id", "run_id", name=op.f("pk_series_runs")),
    )
    with op.batch_alter_table("series_runs", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_series_runs_run_id"), ["run_id"], unique=False)

    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.add_column(sa.Column("calibration_interval_days", sa.Integer(), nullable=True))

    with op.batch_alter_table("groups", schema=None) as batch_op:
        batch_op.add_column(sa.Column("section_id", sa.Integer(), nullable=True))
        batch_op.create_index(batch_op.f("ix_groups_section_id"), ["section_id"], unique=False)
        batch_op.create_foreign_key(batch_op.f("fk_groups_section_id_sections"), "sections", ["section_id"], ["id"])

    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.add_column(sa.Column("content_hash", sa.String(length=64), nullable=True))
        batch_op.add_column(sa.Column("bench_id", sa.Integer(), nullable=True))
        batch_op.create_index(batch_op.f("ix_runs_bench_id"), ["bench_id"], unique=False)
        batch_op.create_unique_constraint(batch_op.f("uq_runs_content_hash"), ["content_hash"])
        batch_op.create_foreign_key(batch_op.f("fk_runs_bench_id_benches"), "benches", ["bench_id"], ["id"])


def downgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_runs_bench_id_benches"), type_="foreignkey")
        batch_op.drop_constraint(batch_op.f("uq_runs_content_hash"), type_="unique")
        batch_op.drop_index(batch_op.f("ix_runs_bench_id"))
        batch_op.drop_column("bench_id")
        batch_op.drop_column("content_hash")

    with op.batch_alter_table("groups", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_groups_section_id_sections"), type_="foreignkey")
        batch_op.drop_index(batch_op.f("ix_groups_section_id"))
        batch_op.drop_column("section_id")

    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.drop_column("calibration_interval_days")

    with op.batch_alter_table("series_runs", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_series_runs_run_id"))

    op.drop_table("series_runs")
    op.drop_table("series")
    with op.batch_alter_table("benches", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_benches_section_id"))
        batch_op.drop_index(batch_op.f("ix_benches_calorimeter_id"))

    op.drop_table("benches")
    with op.batch_alter_table("sections", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_sections_course_id"))

    op.drop_table("sections")
