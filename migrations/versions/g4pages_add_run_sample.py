"""Add the run's sample (lot) from its file's [info] sample, for series of replicates

Revision ID: g4pages
Revises: f4review
Create Date: 2026-12-04
"""

from __future__ import annotations

import tomllib

import sqlalchemy as sa
from alembic import op

revision = "g4pages"
down_revision = "f4review"
branch_labels = None
depends_on = None


def _sample_of(text: str | None) -> str:
    try:
        info = tomllib.loads(text or "").get("info", {})
    except (tomllib.TOMLDecodeError, UnicodeError):
        return ""
    sample = info.get("sample") if isinstance(info, dict) else None
    return sample.strip()[:200] if isinstance(sample, str) else ""


def upgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.add_column(sa.Column("sample", sa.String(length=200), server_default="", nullable=False))
        batch_op.create_index(batch_op.f("ix_runs_sample"), ["sample"], unique=False)
    # existing runs: read the sample from the run file as stored
    bind = op.get_bind()
    runs = sa.table("runs", sa.column("id", sa.Integer), sa.column("run_toml", sa.Text), sa.column("sample", sa.String))
    found = [(rid, _sample_of(text)) for rid, text in bind.execute(sa.select(runs.c.id, runs.c.run_toml))]
    for rid, sample in found:
        if sample:
            bind.execute(runs.update().where(runs.c.id == rid).values(sample=sample))


def downgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_runs_sample"))
        batch_op.drop_column("sample")
