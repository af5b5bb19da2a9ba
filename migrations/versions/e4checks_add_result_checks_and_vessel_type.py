"""Add the plausibility checks of each result and the type of each calorimeter

Revision ID: e4checks
Revises: 0003
Create Date: 2026-12-04
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "e4checks"
down_revision = "0003"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("results", schema=None) as batch_op:
        batch_op.add_column(sa.Column("checks", sa.JSON(), nullable=True))
    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.add_column(sa.Column("vessel_type", sa.String(length=20), server_default="foam-cups", nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("calorimeters", schema=None) as batch_op:
        batch_op.drop_column("vessel_type")
    with op.batch_alter_table("results", schema=None) as batch_op:
        batch_op.drop_column("checks")
