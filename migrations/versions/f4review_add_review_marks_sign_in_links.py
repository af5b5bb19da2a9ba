"""Add run reviews (withdraw, exclude, accept, marks), comments, marking schemes and sign-in links

Revision ID: f4review
Revises: b4lockcal
Create Date: 2026-12-04
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "f4review"
down_revision = "b4lockcal"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "marking_schemes",
        sa.Column("section_id", sa.Integer(), nullable=False),
        sa.Column("bands", sa.JSON(), nullable=False),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.Column("updated_by_id", sa.Integer(), nullable=True),
        sa.ForeignKeyConstraint(["section_id"], ["sections.id"], name=op.f("fk_marking_schemes_section_id_sections")),
        sa.ForeignKeyConstraint(["updated_by_id"], ["people.id"], name=op.f("fk_marking_schemes_updated_by_id_people")),
        sa.PrimaryKeyConstraint("section_id", name=op.f("pk_marking_schemes")),
    )
    op.create_table(
        "sign_in_links",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("person_id", sa.Integer(), nullable=False),
        sa.Column("token_hash", sa.String(length=64), nullable=False),
        sa.Column("created_by_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("expires_at", sa.DateTime(), nullable=False),
        sa.Column("used_at", sa.DateTime(), nullable=True),
        sa.ForeignKeyConstraint(["created_by_id"], ["people.id"], name=op.f("fk_sign_in_links_created_by_id_people")),
        sa.ForeignKeyConstraint(["person_id"], ["people.id"], name=op.f("fk_sign_in_links_person_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_sign_in_links")),
        sa.UniqueConstraint("token_hash", name=op.f("uq_sign_in_links_token_hash")),
    )
    with op.batch_alter_table("sign_in_links", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_sign_in_links_person_id"), ["person_id"], unique=False)

    op.create_table(
        "comments",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=True),
        sa.Column("group_id", sa.Integer(), nullable=True),
        sa.Column("author_id", sa.Integer(), nullable=False),
        sa.Column("body", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.CheckConstraint("(run_id IS NULL) <> (group_id IS NULL)", name=op.f("ck_comments_one_target")),
        sa.ForeignKeyConstraint(["author_id"], ["people.id"], name=op.f("fk_comments_author_id_people")),
        sa.ForeignKeyConstraint(["group_id"], ["groups.id"], name=op.f("fk_comments_group_id_groups")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_comments_run_id_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_comments")),
    )
    with op.batch_alter_table("comments", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_comments_group_id"), ["group_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_comments_run_id"), ["run_id"], unique=False)

    op.create_table(
        "run_reviews",
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("withdrawn", sa.Boolean(), nullable=False),
        sa.Column("withdrawn_reason", sa.Text(), nullable=False),
        sa.Column("excluded", sa.Boolean(), nullable=False),
        sa.Column("excluded_reason", sa.Text(), nullable=False),
        sa.Column("accepted", sa.Boolean(), nullable=False),
        sa.Column("accepted_reason", sa.Text(), nullable=False),
        sa.Column("mark_points", sa.Double(), nullable=True),
        sa.Column("mark_reason", sa.Text(), nullable=False),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.Column("updated_by_id", sa.Integer(), nullable=True),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_run_reviews_run_id_runs")),
        sa.ForeignKeyConstraint(["updated_by_id"], ["people.id"], name=op.f("fk_run_reviews_updated_by_id_people")),
        sa.PrimaryKeyConstraint("run_id", name=op.f("pk_run_reviews")),
    )
    with op.batch_alter_table("people", schema=None) as batch_op:
        batch_op.add_column(sa.Column("must_set_password", sa.Boolean(), server_default=sa.false(), nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("people", schema=None) as batch_op:
        batch_op.drop_column("must_set_password")

    op.drop_table("run_reviews")
    with op.batch_alter_table("comments", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_comments_run_id"))
        batch_op.drop_index(batch_op.f("ix_comments_group_id"))

    op.drop_table("comments")
    with op.batch_alter_table("sign_in_links", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_sign_in_links_person_id"))

    op.drop_table("sign_in_links")
    op.drop_table("marking_schemes")
