"""Size limits of the calculation library: every module ≤ 400 lines, every function ≤ 60 lines.

A long function hides the steps a reader has to check one by one (ΔT methods, period finding,
the fits); a long module mixes jobs. The limits are common practice, no source. What is over the
limit today is named below with its reason; the list only ever shrinks: an entry that is back
within the limit fails the test until it is removed, and nothing new may be added to it without
a reason. Data tables are not Python here (``calc/refdata/data/``), so they are not counted.
``calc/deltat/`` has no allowance at all.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
CALC = ROOT / "calc"
MAX_MODULE_LINES = 400
MAX_FUNCTION_LINES = 60

#: Modules over MAX_MODULE_LINES: path → reason (not yet split; to be taken apart).
LONG_MODULES: dict[str, str] = {}

#: Functions over MAX_FUNCTION_LINES: "path::qualified name" → reason.
LONG_FUNCTIONS: dict[str, str] = {
    "calc/simulation/insitu.py::simulate_dissolution_with_calibration": "one simulated scenario written out in full",
    "calc/simulation/kinds.py::simulate_neutralization": "one simulated scenario written out in full",
}


def _modules() -> list[Path]:
    return sorted(CALC.rglob("*.py"))


def _rel(path: Path) -> str:
    return path.relative_to(ROOT).as_posix()


def _functions(tree: ast.AST, prefix: str = ""):
    """Yield (qualified name, number of lines) of every function, methods and nested functions included."""
    for node in ast.iter_child_nodes(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            yield prefix + node.name, node.end_lineno - node.lineno + 1
            yield from _functions(node, prefix + node.name + ".")
        elif isinstance(node, ast.ClassDef):
            yield from _functions(node, prefix + node.name + ".")
        else:
            yield from _functions(node, prefix)


def _measure() -> tuple[dict[str, int], dict[str, int]]:
    long_modules, long_functions = {}, {}
    for path in _modules():
        text = path.read_text(encoding="utf-8")
        n = len(text.splitlines())
        if n > MAX_MODULE_LINES:
            long_modules[_rel(path)] = n
        for name, lines in _functions(ast.parse(text)):
            if lines > MAX_FUNCTION_LINES:
                long_functions[f"{_rel(path)}::{name}"] = lines
    return long_modules, long_functions


def test_the_walk_sees_the_library():
    paths = {_rel(p) for p in _modules()}
    assert {"calc/analysis.py", "calc/deltat/base.py", "calc/deltat/regnault_pfaundler.py"} <= paths


def test_the_function_walk_measures_nested_and_class_functions():
    src = "class A:\n    def f(self):\n        def g():\n            pass\n        return g\n"
    assert dict(_functions(ast.parse(src))) == {"A.f": 4, "A.f.g": 2}


@pytest.mark.parametrize("kind", ["modules", "functions"])
def test_sizes_within_limits_or_named(kind):
    long_modules, long_functions = _measure()
    found, allowed, limit = (
        (long_modules, LONG_MODULES, MAX_MODULE_LINES)
        if kind == "modules"
        else (long_functions, LONG_FUNCTIONS, MAX_FUNCTION_LINES)
    )
    new = {k: v for k, v in found.items() if k not in allowed}
    assert not new, f"over {limit} lines (split them): " + ", ".join(f"{k} ({v})" for k, v in sorted(new.items()))
    gone = sorted(set(allowed) - set(found))
    assert not gone, "within the limit now, remove from the allow-list: " + ", ".join(gone)


def test_deltat_has_no_allowance():
    named = list(LONG_MODULES) + [k.split("::")[0] for k in LONG_FUNCTIONS]
    assert not [p for p in named if p.startswith("calc/deltat/")]
    assert all(reason.strip() for reason in [*LONG_MODULES.values(), *LONG_FUNCTIONS.values()])
