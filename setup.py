"""Build hook only (everything else is in pyproject.toml): ship ``migrations/`` inside the wheel.

The Alembic migrations live at the top of the repository. An editable install (``make run``,
``make test``) reads them there; a wheel gets a copy as ``webapp/_migrations/``, which
``webapp/migrate.py`` looks for first.
"""

import shutil
from pathlib import Path

from setuptools import setup
from setuptools.command.build_py import build_py


class BuildWithMigrations(build_py):
    """``build_py`` that also copies ``migrations/`` into the built ``webapp`` package."""

    def run(self) -> None:
        super().run()
        if getattr(self, "editable_mode", False):
            return  # the editable install reads migrations/ in place
        source = Path(__file__).resolve().parent / "migrations"
        target = Path(self.build_lib) / "webapp" / "_migrations"
        shutil.copytree(source, target, dirs_exist_ok=True, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))


setup(cmdclass={"build_py": BuildWithMigrations})
