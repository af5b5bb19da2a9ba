"""Everything a user can name is described where a newcomer looks for it (issue 14, project rule).

* every ``cupcal`` command (the static table ``COMMANDS`` and the ``cupcal.commands`` entry points of
  pyproject.toml) has a row of its own in README.md's command table;
* every ΔT method of ``calc.METHODS`` has a paragraph starting "Method `name`" in docs/methods.md;
* every setting of the notebook (``webapp.DEFAULTS``, and any key the code reads with a default of its
  own, ``config.get("KEY", default)``) has a row in webapp/README.md's "Settings" table, and every
  ``CUPCAL_*`` environment variable that calc or webapp reads is named in webapp/README.md or README.md; the ones only the tests and benchmarks read are named
  in DEVELOPERS.md, README.md or webapp/README.md.

The code is read as text (``ast``), so the check needs neither flask nor a database.
"""

from __future__ import annotations

import ast
import re
import tomllib
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
WEB_README = ROOT / "webapp" / "README.md"
DEVELOPERS = ROOT / "DEVELOPERS.md"
METHODS_MD = ROOT / "docs" / "methods.md"

ENV_NAME = re.compile(r"CUPCAL_[A-Z0-9_]+")


def _text(*paths: Path) -> str:
    return "\n".join(p.read_text(encoding="utf-8") for p in paths)


def _named(name: str, text: str) -> bool:
    return re.search(r"(?<![A-Z0-9_])" + re.escape(name) + r"(?![A-Z0-9_])", text) is not None


# ------------------------------------------------------------------------------------ commands


def command_table_rows(readme: str) -> list[str]:
    """Return the first cell of every row of README.md's table of commands (the one headed "command")."""
    rows, inside = [], False
    for line in readme.splitlines():
        if line.startswith("| command |"):
            inside = True
        elif inside and line.startswith("|"):
            if not line.startswith("|-"):
                rows.append(line.split(" | ")[0])
        elif inside:
            break
    return rows


def commands() -> set[str]:
    from calc.cli.commands import COMMANDS

    with (ROOT / "pyproject.toml").open("rb") as fh:
        plugins = tomllib.load(fh)["project"].get("entry-points", {}).get("cupcal.commands", {})
    return set(COMMANDS) | set(plugins)


def test_the_command_table_is_found():
    rows = command_table_rows(_text(README))
    assert len(rows) >= 10 and all("`cupcal " in r for r in rows)


def test_command_table_parser_reads_only_the_first_cell():
    text = "x\n| command | what |\n|---|---|\n| `cupcal a X` · `cupcal b` | runs `cupcal c` |\n\nafter\n| `cupcal d` |"
    assert command_table_rows(text) == ["| `cupcal a X` · `cupcal b`"]


def test_every_command_has_a_row_in_the_readme_command_table():
    rows = command_table_rows(_text(README))
    names = commands()
    assert {"analyze", "methods", "serve", "db", "plan"} <= names
    missing = sorted(n for n in names if not any(re.search(r"`cupcal " + re.escape(n) + r"[` ]", r) for r in rows))
    assert missing == [], "commands without a row in README.md's command table: " + ", ".join(missing)


# ------------------------------------------------------------------------------------- methods


def test_every_delta_t_method_has_its_paragraph():
    import calc

    text = _text(METHODS_MD)
    assert len(calc.METHODS) >= 5
    missing = sorted(n for n in calc.METHODS if not re.search(r"^Method `" + re.escape(n) + "`", text, re.M))
    assert missing == [], "ΔT methods without a paragraph 'Method `name`' in docs/methods.md: " + ", ".join(missing)
    from calc.deltat.base import DEFAULT_METHOD

    assert f"Method `{DEFAULT_METHOD}`, the default" in text


# ---------------------------------------------------------------------- settings and environment


def _python_files(*folders: str) -> Iterator[tuple[str, ast.Module]]:
    for folder in folders:
        for path in sorted((ROOT / folder).rglob("*.py")):
            yield str(path.relative_to(ROOT)), ast.parse(path.read_text(encoding="utf-8"), str(path))


def _constant(node: ast.AST | None) -> str | None:
    return node.value if isinstance(node, ast.Constant) and isinstance(node.value, str) else None


def default_settings() -> set[str]:
    """Return the keys of ``DEFAULTS`` in webapp/__init__.py."""
    tree = ast.parse((ROOT / "webapp" / "__init__.py").read_text(encoding="utf-8"))
    for node in tree.body:
        target = node.target if isinstance(node, ast.AnnAssign) else None
        if isinstance(target, ast.Name) and target.id == "DEFAULTS" and isinstance(node.value, ast.Dict):
            return {k for k in map(_constant, node.value.keys) if k}
    raise AssertionError("webapp/__init__.py has no DEFAULTS dict")


def settings_read_with_a_default(tree: ast.AST) -> set[str]:
    """Return the keys read as ``….config.get("KEY", default)``: settings whose default lives elsewhere."""
    return {
        key
        for node in ast.walk(tree)
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Attribute)
        and node.func.attr == "get"
        and isinstance(node.func.value, ast.Attribute)
        and node.func.value.attr == "config"
        and len(node.args) == 2
        and (key := _constant(node.args[0]))
    }


def environment_reads(tree: ast.AST) -> set[str]:
    """Return the ``CUPCAL_*`` names read from the environment: ``os.environ.get``, ``os.getenv``,
    ``os.environ[…]``, ``… in os.environ`` and click's ``envvar=``."""

    def is_environ(node: ast.AST) -> bool:
        return (
            isinstance(node, ast.Attribute)
            and node.attr == "environ"
            or (isinstance(node, ast.Name) and node.id == "environ")
        )

    found = set()
    for node in ast.walk(tree):
        names: list[str | None] = []
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
            if (node.func.attr == "get" and is_environ(node.func.value)) or node.func.attr == "getenv":
                names.append(_constant(node.args[0]) if node.args else None)
        if isinstance(node, ast.Call):
            names += [_constant(k.value) for k in node.keywords if k.arg == "envvar"]
        if isinstance(node, ast.Subscript) and isinstance(node.ctx, ast.Load) and is_environ(node.value):
            names.append(_constant(node.slice))
        if (
            isinstance(node, ast.Compare)
            and any(isinstance(o, ast.In) for o in node.ops)
            and any(is_environ(c) for c in node.comparators)
        ):
            names.append(_constant(node.left))
        found |= {n for n in names if n and ENV_NAME.fullmatch(n)}
    return found


def test_the_readers_find_what_they_look_for():
    tree = ast.parse(
        "import os\nos.environ.get('CUPCAL_A'); os.getenv('CUPCAL_B', 1); x = os.environ['CUPCAL_C']\n"
        "os.environ['CUPCAL_SET'] = '1'; 'CUPCAL_D' in os.environ; click.option('--t', envvar='CUPCAL_E')\n"
        "os.environ.get('HOME'); app.config.get('PLOT_BYTES', 5); app.config.get('NO_DEFAULT')\n"
    )
    assert environment_reads(tree) == {"CUPCAL_A", "CUPCAL_B", "CUPCAL_C", "CUPCAL_D", "CUPCAL_E"}
    assert settings_read_with_a_default(tree) == {"PLOT_BYTES"}


def settings_table(text: str) -> set[str]:
    """Return the names in the first cells of the table under webapp/README.md's "## Settings"."""
    section = text.split("\n## Settings\n", 1)[1].split("\n## ", 1)[0] if "\n## Settings\n" in text else ""
    return {
        name
        for line in section.splitlines()
        if line.startswith("| `")
        for name in re.findall(r"`([A-Z][A-Z0-9_]+)`", line.split(" | ")[0])
    }


def test_the_settings_table_is_read():
    text = "x\n## Settings\n| setting | default |\n|---|---|\n| `A_B`, `CC` | 1 `DD` |\n\n## Next\n| `EE` | 2 |\n"
    assert settings_table(text) == {"A_B", "CC"}


def test_every_setting_of_the_notebook_has_a_row():
    trees = [tree for _, tree in _python_files("webapp")]
    settings = default_settings().union(*(settings_read_with_a_default(t) for t in trees))
    assert {"LIVE_STREAM_SECONDS", "DATABASE_URL", "LIMITS"} <= settings
    missing = sorted(settings - settings_table(_text(WEB_README)))
    assert missing == [], "settings without a row in webapp/README.md's Settings table: " + ", ".join(missing)


def test_every_environment_variable_is_documented():
    used = set().union(*(environment_reads(t) for _, t in _python_files("calc", "webapp")))
    assert {"CUPCAL_LIMITS", "CUPCAL_SECRET_KEY"} <= used
    docs = _text(WEB_README, README)
    missing = sorted(n for n in used if not _named(n, docs))
    assert missing == [], "CUPCAL_* variables named in neither webapp/README.md nor README.md: " + ", ".join(missing)


def test_every_environment_switch_of_the_tests_is_documented():
    used = set().union(*(environment_reads(t) for _, t in _python_files("tests")))
    assert "CUPCAL_REQUIRE_BROWSER" in used
    docs = _text(WEB_README, README, DEVELOPERS)
    missing = sorted(n for n in used if not _named(n, docs))
    assert missing == [], "CUPCAL_* variables of the tests not named in DEVELOPERS.md or the READMEs: " + ", ".join(
        missing
    )


# ------------------------------------------------------------------------------ package guides


def test_the_statistics_package_says_what_each_module_is_for():
    import calc.statistics

    modules = sorted(p.stem for p in (ROOT / "calc" / "statistics").glob("*.py") if p.stem != "__init__")
    lines = (calc.statistics.__doc__ or "").splitlines()
    assert len(modules) >= 4
    missing = [m for m in modules if not any(line.startswith(f"- ``{m}``: ") for line in lines)]
    assert missing == [], "modules of calc/statistics without their line in the package docstring: " + ", ".join(
        missing
    )
