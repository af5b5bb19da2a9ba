"""Versions for optimistic concurrency, what a lock signed, and calibration authority and pooling

Revision ID: b4lockcal
Revises: e4checks
Create Date: 2026-12-04
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "b4lockcal"
down_revision = "e4checks"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.add_column(sa.Column("version", sa.Integer(), server_default="1", nullable=False))
        batch_op.add_column(sa.Column("locked_result_id", sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column("locked_hash", sa.String(length=64), nullable=True))
        batch_op.create_foreign_key(
            batch_op.f("fk_runs_locked_result_id_results"), "results", ["locked_result_id"], ["id"]
        )
    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.add_column(sa.Column("version", sa.Integer(), server_default="1", nullable=False))
    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.add_column(sa.Column("status", sa.String(length=20), server_default="approved", nullable=False))
        batch_op.add_column(sa.Column("approved_by_id", sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column("approved_at", sa.DateTime(), nullable=True))
        batch_op.add_column(sa.Column("withdrawn_by_id", sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column("withdrawn_at", sa.DateTime(), nullable=True))
        batch_op.add_column(sa.Column("withdrawn_reason", sa.Text(), server_default="", nullable=False))
        batch_op.add_column(sa.Column("restart", sa.Boolean(), server_default=sa.false(), nullable=False))
        batch_op.add_column(sa.Column("in_force_at", sa.DateTime(), nullable=True))
        batch_op.add_column(sa.Column("pool", sa.JSON(), nullable=True))
        batch_op.create_index(batch_op.f("ix_calibrations_in_force_at"), ["in_force_at"], unique=False)
        batch_op.create_foreign_key(
            batch_op.f("fk_calibrations_approved_by_id_people"), "people", ["approved_by_id"], ["id"]
        )
        batch_op.create_foreign_key(
            batch_op.f("fk_calibrations_withdrawn_by_id_people"), "people", ["withdrawn_by_id"], ["id"]
        )
    # the calibrations made before: recorded (so approved) by whoever made them; the one that was in
    # force (the latest by measurement time) stays in force
    op.execute("UPDATE calibrations SET approved_by_id = created_by_id, approved_at = created_at")
    op.execute(
        "UPDATE calibrations SET in_force_at = created_at WHERE id IN ("
        " SELECT c.id FROM calibrations c WHERE NOT EXISTS ("
        "  SELECT 1 FROM calibrations d WHERE d.calorimeter_id = c.calorimeter_id"
        "   AND (d.taken_at > c.taken_at OR (d.taken_at = c.taken_at AND d.id > c.id))))"
    )


def downgrade() -> None:
    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_calibrations_withdrawn_by_id_people"), type_="foreignkey")
        batch_op.drop_constraint(batch_op.f("fk_calibrations_approved_by_id_people"), type_="foreignkey")
        batch_op.drop_index(batch_op.f("ix_calibrations_in_force_at"))
        for name in (
            "pool",
            "in_force_at",
            "restart",
            "withdrawn_reason",
            "withdrawn_at",
            "withdrawn_by_id",
            "approved_at",
            "approved_by_id",
            "status",
        ):
            batch_op.drop_column(name)
    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.drop_column("version")
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_runs_locked_result_id_results"), type_="foreignkey")
        batch_op.drop_column("locked_hash")
        batch_op.drop_column("locked_result_id")
        batch_op.drop_column("version")
