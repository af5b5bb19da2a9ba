"""Add live runs (recorded as the thermometer reads), their readings and sections' target U

Revision ID: h4live
Revises: c4limits
Create Date: 2026-12-05
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "h4live"
down_revision = "c4limits"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "live_runs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("owner_id", sa.Integer(), nullable=False),
        sa.Column("client_key", sa.String(length=64), nullable=False),
        sa.Column("title", sa.String(length=300), nullable=False),
        sa.Column("calorimeter_id", sa.Integer(), nullable=True),
        sa.Column("section_id", sa.Integer(), nullable=True),
        sa.Column("bench_id", sa.Integer(), nullable=True),
        sa.Column("bench", sa.String(length=120), nullable=False),
        sa.Column("group_id", sa.Integer(), nullable=True),
        sa.Column("run_file", sa.Text(), nullable=False),
        sa.Column("target_u", sa.Double(), nullable=True),
        sa.Column("state", sa.String(length=12), nullable=False),
        sa.Column("last_seq", sa.Integer(), nullable=False),
        sa.Column("advice_json", sa.Text(), nullable=False),
        sa.Column("advice_seq", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=True),
        sa.CheckConstraint("state IN ('recording', 'finished', 'abandoned')", name=op.f("ck_live_runs_state")),
        sa.ForeignKeyConstraint(["bench_id"], ["benches.id"], name=op.f("fk_live_runs_bench_id_benches")),
        sa.ForeignKeyConstraint(
            ["calorimeter_id"], ["calorimeters.id"], name=op.f("fk_live_runs_calorimeter_id_calorimeters")
        ),
        sa.ForeignKeyConstraint(["group_id"], ["groups.id"], name=op.f("fk_live_runs_group_id_groups")),
        sa.ForeignKeyConstraint(["owner_id"], ["people.id"], name=op.f("fk_live_runs_owner_id_people")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_live_runs_run_id_runs")),
        sa.ForeignKeyConstraint(["section_id"], ["sections.id"], name=op.f("fk_live_runs_section_id_sections")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_live_runs")),
        sa.UniqueConstraint("owner_id", "client_key", name=op.f("uq_live_runs_owner_id")),
    )
    with op.batch_alter_table("live_runs", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_live_runs_created_at"), ["created_at"], unique=False)
        batch_op.create_index(batch_op.f("ix_live_runs_owner_id"), ["owner_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_live_runs_section_id"), ["section_id"], unique=False)
    op.create_table(
        "live_readings",
        sa.Column("live_run_id", sa.Integer(), nullable=False),
        sa.Column("seq", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("time_s", sa.Double(), nullable=False),
        sa.Column("temperature_c", sa.Double(), nullable=False),
        sa.ForeignKeyConstraint(
            ["live_run_id"], ["live_runs.id"], name=op.f("fk_live_readings_live_run_id_live_runs"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("live_run_id", "seq", name=op.f("pk_live_readings")),
    )
    op.create_table(
        "live_section_targets",
        sa.Column("section_id", sa.Integer(), nullable=False),
        sa.Column("target_u", sa.Double(), nullable=False),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["section_id"], ["sections.id"], name=op.f("fk_live_section_targets_section_id_sections")
        ),
        sa.PrimaryKeyConstraint("section_id", name=op.f("pk_live_section_targets")),
    )


def downgrade() -> None:
    op.drop_table("live_section_targets")
    op.drop_table("live_readings")
    with op.batch_alter_table("live_runs", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_live_runs_section_id"))
        batch_op.drop_index(batch_op.f("ix_live_runs_owner_id"))
        batch_op.drop_index(batch_op.f("ix_live_runs_created_at"))
    op.drop_table("live_runs")
