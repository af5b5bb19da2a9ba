"""Migrations are tested code: they build the schema, match the models, and go down and up again."""

from __future__ import annotations

import uuid
from pathlib import Path

import pytest
import sqlalchemy as sa
from alembic import command
from alembic.script import ScriptDirectory

from tests.webapp.conftest import create_database
from webapp.migrate import MIGRATIONS_DIR, alembic_config, current_revision, downgrade, head_revision, upgrade
from webapp.models import Base


@pytest.fixture(params=["sqlite", "postgresql"])
def fresh_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """Return the URL of a database with no schema at all."""
    if request.param == "sqlite":
        return f"sqlite:///{tmp_path / 'fresh.sqlite3'}"
    return create_database(request.getfixturevalue("pg_server"), f"cupcal_fresh_{uuid.uuid4().hex[:10]}")


def _tables(url: str) -> set[str]:
    engine = sa.create_engine(url)
    try:
        return set(sa.inspect(engine).get_table_names())
    finally:
        engine.dispose()


def test_upgrade_builds_every_table_then_check_finds_no_drift(fresh_url: str) -> None:
    upgrade(fresh_url)
    assert current_revision(fresh_url) == head_revision()
    assert _tables(fresh_url) >= set(Base.metadata.tables)
    command.check(alembic_config(fresh_url))  # raises when the models and migrations differ


def test_downgrade_to_base_and_upgrade_again(fresh_url: str) -> None:
    upgrade(fresh_url)
    downgrade(fresh_url, "base")
    assert _tables(fresh_url) <= {"alembic_version"}
    upgrade(fresh_url)
    assert _tables(fresh_url) >= set(Base.metadata.tables)


def test_revision_files_are_named_rev_imperative_slug() -> None:
    script = ScriptDirectory(str(MIGRATIONS_DIR))
    for rev in script.walk_revisions():
        name = Path(rev.path).name
        assert name.startswith(f"{rev.revision}_"), name
        assert rev.doc and rev.doc[0].isupper(), rev.doc


def test_constraints_follow_the_naming_convention(fresh_url: str) -> None:
    upgrade(fresh_url)
    engine = sa.create_engine(fresh_url)
    try:
        insp = sa.inspect(engine)
        for table in Base.metadata.tables:
            for fk in insp.get_foreign_keys(table):
                assert fk["name"] == f"fk_{table}_{fk['constrained_columns'][0]}_{fk['referred_table']}"
            for uq in insp.get_unique_constraints(table):
                assert uq["name"] == f"uq_{table}_{uq['column_names'][0]}"
    finally:
        engine.dispose()
