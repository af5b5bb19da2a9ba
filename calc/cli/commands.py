"""The ``cupcal`` command group: a static table of commands, each imported only when it runs.

``cupcal --help`` must answer fast, so listing the commands imports nothing but click: each entry
of :data:`COMMANDS` names where its command lives and its one-line help. The web notebook's
commands are listed here by name only (calc never imports the web layer); they load when invoked,
and say which extra to install when the notebook is not installed (``pip install 'cupcal[web]'``).
Commands of other packages can still be added through the ``cupcal.commands`` entry-point group.

Exit status: 0 when the command succeeded, 2 when it failed or was used wrongly. Errors are one line
per problem, never a traceback.
"""

from __future__ import annotations

import importlib
import importlib.util
import os
from collections.abc import MutableMapping
from typing import Any, NamedTuple

import click

from calc import __version__
from calc.errors import CupcalError

__all__ = ["COMMANDS", "cli", "main"]


class CommandEntry(NamedTuple):
    """Where a command lives (``module:attribute``), its one-line help, and a module it needs."""

    target: str
    help: str
    #: a module that must be importable for the command to work (the web notebook needs flask)
    needs: str = ""


#: Every built-in command: name → where it lives and its one-line help (kept in step with the
#: commands' own docstrings by tests/calc/test_cli.py).
COMMANDS: dict[str, CommandEntry] = {
    "analyze": CommandEntry(
        "calc.cli.analyze:analyze", "Analyze run files: corrected ΔT, heat, ΔH (or C_cal) ± U and the budget."
    ),
    "methods": CommandEntry("calc.cli.analyze:methods", "List the corrected-ΔT methods."),
    "hess": CommandEntry(
        "calc.cli.hess:hess_command", "Compute the standard reaction enthalpy of EQUATION from the ΔfH° table."
    ),
    "plan": CommandEntry(
        "calc.cli.plan:plan_command",
        "Predict ΔT and the uncertainty of ΔH for a planned KIND run, and suggest amounts.",
    ),
    "record": CommandEntry(
        "calc.cli.record:record_command",
        "Record a thermometer to a CSV log as it reads, and stream the readings to the notebook.",
    ),
    "serve": CommandEntry(
        "webapp.commands:serve",
        "Apply migrations, load the demo into an empty database, and serve the notebook.",
        needs="flask",
    ),
    "db": CommandEntry("webapp.commands:db", "Manage the notebook's database (Alembic migrations).", needs="flask"),
    "load-demo": CommandEntry(
        "webapp.commands:load_demo_command",
        "Load the invented demo lab into an empty database (after `cupcal db upgrade`).",
        needs="flask",
    ),
    "import": CommandEntry(
        "webapp.commands:import_command",
        "Import a section's runs from a zip or a folder of run files (.toml) and logs (.csv), or an .eln archive.",
        needs="flask",
    ),
    "backup": CommandEntry(
        "webapp.commands:backup_command",
        "Back up the database to the file OUT (safe while the notebook is serving).",
        needs="flask",
    ),
    "restore": CommandEntry(
        "webapp.commands:restore_command",
        "Restore the database from IN, a file made by `cupcal backup`.",
        needs="flask",
    ),
    "export": CommandEntry(
        "webapp.eln_commands:export_command",
        "Write an .eln archive of runs, a section, a calorimeter or the whole notebook.",
        needs="flask",
    ),
    "users": CommandEntry(
        "webapp.user_commands:users", "List people, set passwords and hand out one-time sign-in links.", needs="flask"
    ),
    "webhooks": CommandEntry(
        "webapp.webhook_commands:webhooks", "Send the notebook's webhook deliveries.", needs="flask"
    ),
}


def _available(entry: CommandEntry) -> bool:
    return not entry.needs or importlib.util.find_spec(entry.needs) is not None


def _load(ctx: click.Context, name: str, target: str) -> click.Command | None:
    module_name, _, attribute = target.partition(":")
    try:
        command = getattr(importlib.import_module(module_name), attribute)
    except ImportError as exc:
        extra = " (install 'cupcal[web]')" if module_name.startswith("webapp") else ""
        click.echo(f"cupcal: the '{name}' command is unavailable{extra}: {exc}", err=True)
        ctx.exit(2)
    return command if isinstance(command, click.Command) else None


class LazyGroup(click.Group):
    """The top-level group: the static table first, then the ``cupcal.commands`` entry points."""

    def _plugins(self) -> dict[str, str]:
        from importlib.metadata import entry_points

        return {ep.name: ep.value for ep in entry_points(group="cupcal.commands") if ep.name not in COMMANDS}

    def list_commands(self, ctx: click.Context) -> list[str]:
        names = {name for name, entry in COMMANDS.items() if _available(entry)}
        return sorted(names | set(self._plugins()))

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        entry = COMMANDS.get(name)
        target = entry.target if entry is not None else self._plugins().get(name)
        return _load(ctx, name, target) if target else None

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        """List every command with its one-line help from the table, importing none of them."""
        plugins = self._plugins()
        rows = [(name, entry.help) for name, entry in COMMANDS.items() if _available(entry)]
        rows += [(name, f"(from {target.split(':')[0]})") for name, target in plugins.items()]
        if rows:
            with formatter.section("Commands"):
                formatter.write_dl(sorted(rows))

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except (click.exceptions.Exit, click.exceptions.Abort, click.ClickException):
            raise
        except CupcalError as exc:
            click.echo(f"cupcal: {exc}", err=True)
            ctx.exit(2)
        except Exception as exc:  # never show a traceback to a user
            click.echo(f"cupcal: internal error ({exc.__class__.__name__}: {exc})", err=True)
            ctx.exit(2)


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="cupcal")
def cli() -> None:
    """Coffee-cup solution calorimetry with honest measurement uncertainty."""


#: What OpenBLAS (numpy's and scipy's BLAS) reads for its thread count, in its order of precedence.
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "GOTO_NUM_THREADS", "OMP_NUM_THREADS")


def single_threaded_blas(environ: MutableMapping[str, str]) -> None:
    """Ask for one BLAS thread unless the user chose a number (any of :data:`BLAS_THREAD_VARIABLES`).

    Every matrix cupcal builds is small, so BLAS's thread pools never share work; but each library
    starts its pool when it loads and the threads spin for a while: 0.1–0.2 s of CPU per
    `cupcal analyze`, and as much wall time when the other cores are busy (issue 14, measured with
    tests/benchmarks/test_startup.py). Must run before numpy or scipy is imported.
    """
    if not any(name in environ for name in BLAS_THREAD_VARIABLES):
        environ["OPENBLAS_NUM_THREADS"] = "1"


def main() -> None:
    """Run the ``cupcal`` command line."""
    single_threaded_blas(os.environ)
    cli(prog_name="cupcal")


if __name__ == "__main__":  # pragma: no cover
    main()
