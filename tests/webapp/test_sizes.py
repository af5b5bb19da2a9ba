"""Sizes of the notebook's code: no module of ``webapp/`` over 400 lines, no function over 60.

A function's length runs from its ``def`` line to its last line (docstring and comments
included, decorators not). What is over the limit today is listed below with the reason it is
and the size it has now: it may shrink but not grow, and an entry that is back under the limit
fails the test until it is removed from the list (so the list stays true).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import webapp

ROOT = Path(webapp.__file__).resolve().parent
MAX_MODULE_LINES = 400
MAX_FUNCTION_LINES = 60

#: module (relative to webapp/) → (lines now, why it is longer)
LONG_MODULES: dict[str, tuple[int, str]] = {}

#: "module::function" → (lines now, why it is longer)
LONG_FUNCTIONS: dict[str, tuple[int, str]] = {}


def _modules() -> list[Path]:
    return sorted(p for p in ROOT.rglob("*.py") if "_migrations" not in p.parts)


def _name(path: Path) -> str:
    return path.relative_to(ROOT).as_posix()


def function_lengths(source: str) -> dict[str, int]:
    """Return the length in lines of every function and method of ``source`` (nested ones too), by name."""
    out: dict[str, int] = {}
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            n = node.end_lineno - node.lineno + 1
            out[node.name] = max(out.get(node.name, 0), n)
    return out


def test_function_lengths_are_measured_from_def_to_the_last_line() -> None:
    src = (
        "@decorator\ndef f():\n    '''doc'''\n    x = 1\n\n    return x\n\n\nclass C:\n    def m(self):\n        pass\n"
    )
    assert function_lengths(src) == {"f": 5, "m": 2}


def _assert_within(
    sizes: dict[str, int], limit: int, listed: dict[str, tuple[int, str]], what: str, table: str
) -> None:
    """Nothing over ``limit`` lines but what ``listed`` names; nothing listed grown or back under the limit."""
    over = {k: n for k, n in sizes.items() if n > limit}
    new = {k: n for k, n in over.items() if k not in listed}
    grown = {k: n for k, n in over.items() if k in listed and n > listed[k][0]}
    back = sorted(k for k in listed if sizes.get(k, 0) <= limit)
    assert new == {}, f"{what} over {limit} lines: split them ({new})"
    assert grown == {}, f"listed long {what} grew: {grown}"
    assert back == [], f"under the limit now (or gone): remove from {table}: {back}"


def test_no_module_over_400_lines() -> None:
    modules = _modules()
    assert len(modules) > 80  # the walk found the package
    sizes = {_name(p): len(p.read_text(encoding="utf-8").splitlines()) for p in modules}
    _assert_within(sizes, MAX_MODULE_LINES, LONG_MODULES, "modules", "LONG_MODULES")


def test_no_function_over_60_lines() -> None:
    lengths = {
        f"{_name(p)}::{name}": n
        for p in _modules()
        for name, n in function_lengths(p.read_text(encoding="utf-8")).items()
    }
    _assert_within(lengths, MAX_FUNCTION_LINES, LONG_FUNCTIONS, "functions", "LONG_FUNCTIONS")


@pytest.mark.parametrize("table", [LONG_MODULES, LONG_FUNCTIONS])
def test_every_allowed_entry_says_why(table: dict[str, tuple[int, str]]) -> None:
    assert all(len(reason.split()) >= 5 for _n, reason in table.values())
