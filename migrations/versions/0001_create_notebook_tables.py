"""Create the notebook tables: people, groups, calorimeters, runs, results, audit

Revision ID: 0001
Revises:
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "calorimeters",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("parts", sa.Text(), nullable=False),
        sa.Column("location", sa.String(length=200), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_calorimeters")),
        sa.UniqueConstraint("name", name=op.f("uq_calorimeters_name")),
    )
    op.create_table(
        "courses",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("term", sa.String(length=60), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_courses")),
        sa.UniqueConstraint("name", name=op.f("uq_courses_name")),
    )
    op.create_table(
        "groups",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("course_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(["course_id"], ["courses.id"], name=op.f("fk_groups_course_id_courses")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_groups")),
        sa.UniqueConstraint("name", name=op.f("uq_groups_name")),
    )
    with op.batch_alter_table("groups", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_groups_course_id"), ["course_id"], unique=False)

    op.create_table(
        "people",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("email", sa.String(length=254), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("role", sa.String(length=20), nullable=False),
        sa.Column("password_hash", sa.String(length=255), nullable=False),
        sa.Column("group_id", sa.Integer(), nullable=True),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.CheckConstraint("role IN ('coordinator', 'technician', 'student')", name=op.f("ck_people_role")),
        sa.ForeignKeyConstraint(["group_id"], ["groups.id"], name=op.f("fk_people_group_id_groups")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_people")),
        sa.UniqueConstraint("email", name=op.f("uq_people_email")),
    )
    with op.batch_alter_table("people", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_people_group_id"), ["group_id"], unique=False)

    op.create_table(
        "api_tokens",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("person_id", sa.Integer(), nullable=False),
        sa.Column("label", sa.String(length=120), nullable=False),
        sa.Column("prefix", sa.String(length=16), nullable=False),
        sa.Column("token_hash", sa.String(length=64), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("last_used_at", sa.DateTime(), nullable=True),
        sa.Column("revoked_at", sa.DateTime(), nullable=True),
        sa.ForeignKeyConstraint(["person_id"], ["people.id"], name=op.f("fk_api_tokens_person_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_api_tokens")),
        sa.UniqueConstraint("token_hash", name=op.f("uq_api_tokens_token_hash")),
    )
    with op.batch_alter_table("api_tokens", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_api_tokens_person_id"), ["person_id"], unique=False)

    op.create_table(
        "audit_entries",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("person_id", sa.Integer(), nullable=True),
        sa.Column("entity", sa.String(length=40), nullable=False),
        sa.Column("entity_id", sa.Integer(), nullable=False),
        sa.Column("field", sa.String(length=80), nullable=False),
        sa.Column("old", sa.Text(), nullable=True),
        sa.Column("new", sa.Text(), nullable=True),
        sa.ForeignKeyConstraint(["person_id"], ["people.id"], name=op.f("fk_audit_entries_person_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_entries")),
    )
    with op.batch_alter_table("audit_entries", schema=None) as batch_op:
        batch_op.create_index("ix_audit_entries_entity", ["entity", "entity_id"], unique=False)

    op.create_table(
        "runs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("kind", sa.String(length=40), nullable=False),
        sa.Column("title", sa.String(length=300), nullable=False),
        sa.Column("run_file_name", sa.String(length=255), nullable=False),
        sa.Column("run_toml", sa.Text(), nullable=False),
        sa.Column("readings_name", sa.String(length=255), nullable=False),
        sa.Column("readings_raw", sa.LargeBinary(), nullable=False),
        sa.Column("series_time_s", sa.LargeBinary(), nullable=False),
        sa.Column("series_temperature_k", sa.LargeBinary(), nullable=False),
        sa.Column("points", sa.Integer(), nullable=False),
        sa.Column("author_id", sa.Integer(), nullable=False),
        sa.Column("operator", sa.String(length=200), nullable=False),
        sa.Column("group_id", sa.Integer(), nullable=True),
        sa.Column("bench", sa.String(length=120), nullable=False),
        sa.Column("performed_on", sa.String(length=40), nullable=False),
        sa.Column("notes", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("calorimeter_id", sa.Integer(), nullable=True),
        sa.Column("calibration_id", sa.Integer(), nullable=True),
        sa.Column("locked", sa.Boolean(), nullable=False),
        sa.Column("locked_by_id", sa.Integer(), nullable=True),
        sa.Column("locked_at", sa.DateTime(), nullable=True),
        sa.ForeignKeyConstraint(["author_id"], ["people.id"], name=op.f("fk_runs_author_id_people")),
        sa.ForeignKeyConstraint(
            ["calorimeter_id"], ["calorimeters.id"], name=op.f("fk_runs_calorimeter_id_calorimeters")
        ),
        sa.ForeignKeyConstraint(["group_id"], ["groups.id"], name=op.f("fk_runs_group_id_groups")),
        sa.ForeignKeyConstraint(["locked_by_id"], ["people.id"], name=op.f("fk_runs_locked_by_id_people")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_runs")),
    )
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_runs_author_id"), ["author_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_runs_calorimeter_id"), ["calorimeter_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_runs_created_at"), ["created_at"], unique=False)
        batch_op.create_index(batch_op.f("ix_runs_group_id"), ["group_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_runs_kind"), ["kind"], unique=False)

    op.create_table(
        "results",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("is_current", sa.Boolean(), nullable=False),
        sa.Column("method", sa.String(length=60), nullable=False),
        sa.Column("main", sa.String(length=60), nullable=False),
        sa.Column("fore_start_s", sa.Double(), nullable=False),
        sa.Column("fore_end_s", sa.Double(), nullable=False),
        sa.Column("after_start_s", sa.Double(), nullable=False),
        sa.Column("after_end_s", sa.Double(), nullable=False),
        sa.Column("mixing_time_s", sa.Double(), nullable=False),
        sa.Column("mixing_time_s_std", sa.Double(), nullable=False),
        sa.Column("mixing_time_detected", sa.Boolean(), nullable=False),
        sa.Column("periods_given", sa.Boolean(), nullable=False),
        sa.Column("corrected_delta_t_k", sa.Double(), nullable=False),
        sa.Column("corrected_delta_t_k_std", sa.Double(), nullable=False),
        sa.Column("heat_j", sa.Double(), nullable=False),
        sa.Column("heat_j_std", sa.Double(), nullable=False),
        sa.Column("molar_enthalpy_kj_mol", sa.Double(), nullable=True),
        sa.Column("molar_enthalpy_kj_mol_std", sa.Double(), nullable=True),
        sa.Column("calorimeter_heat_capacity_j_k", sa.Double(), nullable=True),
        sa.Column("calorimeter_heat_capacity_j_k_std", sa.Double(), nullable=True),
        sa.Column("expanded_uncertainty", sa.Double(), nullable=False),
        sa.Column("coverage_factor", sa.Double(), nullable=False),
        sa.Column("dof_eff", sa.Double(), nullable=True),
        sa.Column("budget", sa.JSON(), nullable=False),
        sa.Column("warnings", sa.JSON(), nullable=False),
        sa.Column("comparison", sa.JSON(), nullable=True),
        sa.Column("cautions", sa.JSON(), nullable=False),
        sa.Column("construction", sa.JSON(), nullable=False),
        sa.Column("properties", sa.JSON(), nullable=False),
        sa.Column("monte_carlo", sa.JSON(), nullable=True),
        sa.Column("record", sa.JSON(), nullable=False),
        sa.Column("software_version", sa.String(length=40), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("created_by_id", sa.Integer(), nullable=True),
        sa.ForeignKeyConstraint(["created_by_id"], ["people.id"], name=op.f("fk_results_created_by_id_people")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_results_run_id_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_results")),
    )
    with op.batch_alter_table("results", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_results_run_id"), ["run_id"], unique=False)

    op.create_table(
        "run_inputs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("field", sa.String(length=80), nullable=False),
        sa.Column("value", sa.Double(), nullable=True),
        sa.Column("std_uncertainty", sa.Double(), nullable=True),
        sa.Column("unit", sa.String(length=40), nullable=False),
        sa.Column("text", sa.String(length=300), nullable=False),
        sa.Column("origin", sa.String(length=120), nullable=False),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_run_inputs_run_id_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_run_inputs")),
    )
    with op.batch_alter_table("run_inputs", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_run_inputs_run_id"), ["run_id"], unique=False)

    op.create_table(
        "calibrations",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("calorimeter_id", sa.Integer(), nullable=False),
        sa.Column("heat_capacity_j_k", sa.Double(), nullable=False),
        sa.Column("heat_capacity_j_k_std", sa.Double(), nullable=False),
        sa.Column("taken_at", sa.DateTime(), nullable=False),
        sa.Column("result_id", sa.Integer(), nullable=True),
        sa.Column("note", sa.Text(), nullable=False),
        sa.Column("created_by_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["calorimeter_id"], ["calorimeters.id"], name=op.f("fk_calibrations_calorimeter_id_calorimeters")
        ),
        sa.ForeignKeyConstraint(["created_by_id"], ["people.id"], name=op.f("fk_calibrations_created_by_id_people")),
        sa.ForeignKeyConstraint(["result_id"], ["results.id"], name=op.f("fk_calibrations_result_id_results")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_calibrations")),
    )
    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_calibrations_calorimeter_id"), ["calorimeter_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_calibrations_result_id"), ["result_id"], unique=False)

    # runs → calibrations → results → runs is a cycle: this key comes last
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.create_foreign_key(
            batch_op.f("fk_runs_calibration_id_calibrations"), "calibrations", ["calibration_id"], ["id"]
        )


def downgrade() -> None:
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_runs_calibration_id_calibrations"), type_="foreignkey")

    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_calibrations_result_id"))
        batch_op.drop_index(batch_op.f("ix_calibrations_calorimeter_id"))

    op.drop_table("calibrations")
    with op.batch_alter_table("run_inputs", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_run_inputs_run_id"))

    op.drop_table("run_inputs")
    with op.batch_alter_table("results", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_results_run_id"))

    op.drop_table("results")
    with op.batch_alter_table("runs", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_runs_kind"))
        batch_op.drop_index(batch_op.f("ix_runs_group_id"))
        batch_op.drop_index(batch_op.f("ix_runs_created_at"))
        batch_op.drop_index(batch_op.f("ix_runs_calorimeter_id"))
        batch_op.drop_index(batch_op.f("ix_runs_author_id"))

    op.drop_table("runs")
    with op.batch_alter_table("audit_entries", schema=None) as batch_op:
        batch_op.drop_index("ix_audit_entries_entity")

    op.drop_table("audit_entries")
    with op.batch_alter_table("api_tokens", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_api_tokens_person_id"))

    op.drop_table("api_tokens")
    with op.batch_alter_table("people", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_people_group_id"))

    op.drop_table("people")
    with op.batch_alter_table("groups", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_groups_course_id"))

    op.drop_table("groups")
    op.drop_table("courses")
    op.drop_table("calorimeters")
