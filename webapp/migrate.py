"""Alembic, configured in code: the migrations live in the repository's ``migrations/`` (a wheel
carries a copy inside the package).

:func:`alembic_config` builds the configuration for a database URL (or an open
connection, which tests use); :func:`upgrade` is what ``cupcal db upgrade`` and
``cupcal serve`` call.
"""

from __future__ import annotations

from pathlib import Path

import sqlalchemy as sa
from alembic import command
from alembic.config import Config

from webapp.db import normalize_url


def _migrations_dir() -> Path:
    """Return the folder of the Alembic migrations: the copy a wheel carries inside the package
    (``webapp/_migrations``, made by setup.py), else the repository's ``migrations/`` (editable)."""
    here = Path(__file__).resolve().parent
    for folder in (here / "_migrations", here.parent / "migrations"):
        if (folder / "env.py").is_file():
            return folder
    raise RuntimeError(
        f"the migrations are missing: neither {here / '_migrations'} nor {here.parent / 'migrations'} "
        "holds env.py; reinstall cupcal"
    )


MIGRATIONS_DIR = _migrations_dir()


def alembic_config(url: str | None = None, *, connection: sa.Connection | None = None) -> Config:
    """Return an Alembic configuration for ``url`` or an open ``connection``."""
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    cfg.set_main_option("path_separator", "os")
    if url is not None:
        # ConfigParser interpolation: a literal % must be doubled
        cfg.set_main_option("sqlalchemy.url", normalize_url(url).replace("%", "%%"))
    if connection is not None:
        cfg.attributes["connection"] = connection
    return cfg


def upgrade(url: str, revision: str = "head") -> None:
    """Apply the migrations up to ``revision``."""
    command.upgrade(alembic_config(url), revision)


def downgrade(url: str, revision: str) -> None:
    """Revert the migrations down to ``revision``."""
    command.downgrade(alembic_config(url), revision)


def current_revision(url: str) -> str | None:
    """Return the revision the database is at (None when it has no schema yet)."""
    from alembic.runtime.migration import MigrationContext

    from webapp.db import make_engine

    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return MigrationContext.configure(conn).get_current_revision()
    finally:
        engine.dispose()


def head_revision() -> str | None:
    """Return the newest revision of the migration scripts."""
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(alembic_config()).get_current_head()
