"""Layering: calc is a leaf package, the import graph has no cycles, the contracts in pyproject hold.

The contracts themselves (which layer may import which) are declared for import-linter in
``pyproject.toml`` (``[tool.importlinter]``); this file runs them, walks every calc module, and
looks for cycles with grimp (the graph library import-linter is built on).
"""

from __future__ import annotations

import pkgutil
import shutil
import subprocess
import sys
from pathlib import Path

import grimp
import pytest

import calc

ROOT = Path(__file__).resolve().parents[2]
WEB_AND_DATABASE = ("flask", "sqlalchemy", "alembic", "flask_login", "flask_wtf", "psycopg", "matplotlib", "webapp")


def _calc_modules() -> list[str]:
    return sorted(m.name for m in pkgutil.walk_packages(calc.__path__, "calc.") if not m.name.endswith("__main__"))


def test_every_calc_module_imports_without_web_or_database_code():
    modules = _calc_modules()
    assert len(modules) > 40  # the walk really found the package (41 modules when this was written)
    code = (
        "import importlib, sys\n"
        f"for name in {modules!r}:\n"
        "    importlib.import_module(name)\n"
        f"bad = [m for m in {WEB_AND_DATABASE!r} if m in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_import_calc_alone_loads_nothing_heavy():
    code = "import sys, calc\nprint(','.join(m for m in ('numpy', 'scipy', 'pint', 'click') if m in sys.modules))\n"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def _cycles(graph: grimp.ImportGraph) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan, iterative)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []
    counter = 0
    for root in sorted(graph.modules):
        if root in index:
            continue
        work = [(root, iter(sorted(graph.find_modules_directly_imported_by(root))))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.find_modules_directly_imported_by(child)))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    top = stack.pop()
                    on_stack.discard(top)
                    component.append(top)
                    if top == node:
                        break
                if len(component) > 1:
                    found.append(sorted(component))
    return found


def test_tarjan_finds_a_known_cycle():
    graph = grimp.ImportGraph()
    for name in ("a", "a.x", "a.y", "a.z"):
        graph.add_module(name)
    graph.add_import(importer="a.x", imported="a.y")
    graph.add_import(importer="a.y", imported="a.x")
    graph.add_import(importer="a.z", imported="a.x")
    assert _cycles(graph) == [["a.x", "a.y"]]


#: Cycles that exist and are being taken apart; a new cycle fails the test, and so does one of these
#: once it is gone (then delete it here).
KNOWN_CYCLES: set[tuple[str, str]] = set()


@pytest.mark.parametrize("package", ["calc", "webapp"])
def test_no_new_import_cycles(package):
    # imports under `if TYPE_CHECKING:` are for annotations only and do not run: not part of a cycle
    graph = grimp.build_graph(
        package, include_external_packages=False, exclude_type_checking_imports=True, cache_dir=None
    )
    cycles = {tuple(c) for c in _cycles(graph)}
    known = {c for c in KNOWN_CYCLES if c[0].split(".")[0] == package}
    assert cycles - known == set(), "new import cycles: " + "; ".join(" ↔ ".join(c) for c in cycles - known)
    assert known - cycles == set(), "cycles gone (remove them from KNOWN_CYCLES): " + repr(known - cycles)


def test_import_linter_contracts_hold():
    exe = shutil.which("lint-imports", path=str(Path(sys.executable).parent))
    assert exe, "import-linter is a test dependency (pyproject.toml)"
    out = subprocess.run([exe, "--no-cache"], cwd=ROOT, capture_output=True, text=True)
    assert out.returncode == 0, out.stdout[-3000:] + out.stderr[-2000:]


def test_demo_runs_analyze_without_error():
    # `make run` analyses these; they must all work (invented demo data, see fixtures/demo/README.md)
    from calc.analysis import analyze_run

    runs = sorted(ROOT.joinpath("fixtures", "demo").glob("*.toml"))
    assert len(runs) >= 6
    for path in runs:
        a = analyze_run(path)
        assert a.gum.expanded_uncertainty > 0
