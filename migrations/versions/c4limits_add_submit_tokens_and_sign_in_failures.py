"""Add one-time form tokens on runs and the log of failed sign-ins (throttling)

Revision ID: c4limits
Revises: g4pages
Create Date: 2026-12-04
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "c4limits"
down_revision = "g4pages"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.add_column(sa.Column("submit_token", sa.String(length=64), nullable=True))
        batch_op.create_unique_constraint(batch_op.f("uq_runs_submit_token"), ["submit_token"])

    op.create_table(
        "sign_in_failures",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("email", sa.String(length=254), nullable=False),
        sa.Column("address", sa.String(length=64), nullable=False),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_sign_in_failures")),
    )
    with op.batch_alter_table("sign_in_failures", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_sign_in_failures_address"), ["address"], unique=False)
        batch_op.create_index(batch_op.f("ix_sign_in_failures_at"), ["at"], unique=False)
        batch_op.create_index(batch_op.f("ix_sign_in_failures_email"), ["email"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("sign_in_failures", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_sign_in_failures_email"))
        batch_op.drop_index(batch_op.f("ix_sign_in_failures_at"))
        batch_op.drop_index(batch_op.f("ix_sign_in_failures_address"))
    op.drop_table("sign_in_failures")

    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("uq_runs_submit_token"), type_="unique")
        batch_op.drop_column("submit_token")
