"""Add API token scopes, webhooks and their delivery log

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("api_tokens", schema=None) as batch_op:
        batch_op.add_column(sa.Column("scope", sa.String(length=10), server_default="write", nullable=False))

    op.create_table(
        "webhooks",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("url", sa.String(length=2000), nullable=False),
        sa.Column("secret", sa.String(length=128), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("created_by_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(["created_by_id"], ["people.id"], name=op.f("fk_webhooks_created_by_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhooks")),
    )
    op.create_table(
        "webhook_deliveries",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("webhook_id", sa.Integer(), nullable=False),
        sa.Column("event", sa.String(length=60), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=True),
        sa.Column("body", sa.Text(), nullable=False),
        sa.Column("status", sa.String(length=20), nullable=False),
        sa.Column("attempts", sa.Integer(), nullable=False),
        sa.Column("next_attempt_at", sa.DateTime(), nullable=True),
        sa.Column("last_attempt_at", sa.DateTime(), nullable=True),
        sa.Column("last_status_code", sa.Integer(), nullable=True),
        sa.Column("last_error", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_webhook_deliveries_run_id_runs")),
        sa.ForeignKeyConstraint(
            ["webhook_id"], ["webhooks.id"], name=op.f("fk_webhook_deliveries_webhook_id_webhooks")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhook_deliveries")),
    )
    with op.batch_alter_table("webhook_deliveries", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_webhook_deliveries_run_id"), ["run_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_webhook_deliveries_status"), ["status"], unique=False)
        batch_op.create_index(batch_op.f("ix_webhook_deliveries_webhook_id"), ["webhook_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("webhook_deliveries", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_webhook_deliveries_webhook_id"))
        batch_op.drop_index(batch_op.f("ix_webhook_deliveries_status"))
        batch_op.drop_index(batch_op.f("ix_webhook_deliveries_run_id"))
    op.drop_table("webhook_deliveries")
    op.drop_table("webhooks")
    with op.batch_alter_table("api_tokens", schema=None) as batch_op:
        batch_op.drop_column("scope")
