"""No module under ``tests/`` imports a test module (``test_*.py``).

Shared helpers live in modules that pytest does not collect (``conftest.py``, ``*_helpers.py``,
``class_fixtures.py``, …). A test module imported by another runs its module-level code twice,
ties two files' fixtures together and makes moving a test break an unrelated one.
"""

from __future__ import annotations

import ast
from pathlib import Path

TESTS = Path(__file__).resolve().parent


def _module_name(path: Path) -> str:
    return ".".join(("tests",) + path.relative_to(TESTS).with_suffix("").parts)


def _is_test_module(name: str) -> bool:
    return name.rsplit(".", 1)[-1].startswith("test_")


def imported_test_modules(source: str, module: str) -> list[str]:
    """Return the test modules (``…test_*``) that ``source``, the text of ``module``, imports."""
    package = module.rsplit(".", 1)[0]
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found += [a.name for a in node.names if any(_is_test_module(p) for p in a.name.split("."))]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                parent = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(parent + ([base] if base else []))
            if any(_is_test_module(p) for p in base.split(".")):
                found.append(base)
            # `from tests.webapp import test_x` names a module too; `from tests.webapp.conftest import test_x`
            # (a function named test_…) is caught only when such a module file exists
            found += [
                f"{base}.{a.name}"
                for a in node.names
                if _is_test_module(a.name) and (TESTS.parent / (f"{base}.{a.name}".replace(".", "/") + ".py")).is_file()
            ]
    return sorted(set(found))


def test_the_check_finds_every_form_of_import() -> None:
    here = "tests.webapp.page_helpers"
    assert imported_test_modules("import tests.webapp.test_pages\n", here) == ["tests.webapp.test_pages"]
    assert imported_test_modules("from tests.webapp.test_pages import x\n", here) == ["tests.webapp.test_pages"]
    assert imported_test_modules("from tests.webapp import test_pages\n", here) == ["tests.webapp.test_pages"]
    assert imported_test_modules("from .test_pages import x\n", here) == ["tests.webapp.test_pages"]
    assert imported_test_modules("def f():\n    from tests.calc.test_cli import y\n", here) == ["tests.calc.test_cli"]
    assert imported_test_modules("from tests.webapp.conftest import sign_in\nimport pytest\n", here) == []
    assert imported_test_modules("from tests.webapp.page_helpers import counts\n", here) == []


def test_no_module_under_tests_imports_a_test_module() -> None:
    files = sorted(p for p in TESTS.rglob("*.py") if "vendor" not in p.parts)
    assert len(files) > 50  # the walk found the tests (over 100 modules when this was written)
    bad = {}
    for path in files:
        if found := imported_test_modules(path.read_text(encoding="utf-8"), _module_name(path)):
            bad[str(path.relative_to(TESTS.parent))] = found
    assert bad == {}, "move what these share into a helper module (not test_*.py): " + repr(bad)
