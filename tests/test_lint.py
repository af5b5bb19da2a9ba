"""Lint, format and type checks of the whole tree, run in every ``make test`` (DEVELOPERS.md "Lint, format, types").

Each tool reads its configuration from pyproject.toml; a failure shows the tool's own report.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
BIN = Path(sys.executable).parent


def _tool(name: str) -> str:
    """Return the venv's copy of ``name`` (the one pinned by the ``test`` extra), else the one on PATH."""
    here = BIN / name
    found = str(here) if here.exists() else shutil.which(name)
    if found is None:
        pytest.fail(f"{name} is not installed: pip install -e '.[test]'")
    return found


def _run(*args: str) -> None:
    proc = subprocess.run(args, cwd=ROOT, capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, f"{' '.join(args)} failed:\n{proc.stdout}\n{proc.stderr}"


def test_ruff_check() -> None:
    _run(_tool("ruff"), "check", "--no-cache", ".")


def test_ruff_format() -> None:
    _run(_tool("ruff"), "format", "--check", "--no-cache", ".")


def test_mypy_strict_on_calc() -> None:
    # files, strictness and the cache directory (.mypy_cache) come from [tool.mypy] in pyproject.toml
    _run(_tool("mypy"))
