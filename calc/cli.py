"""The ``cupcal`` command line: a thin shell around :mod:`calc.analysis`.

Exit status: 0 when every input was analysed, 2 when any input failed or the
command was used wrongly. Errors are one line per problem, never a traceback.
"""

from __future__ import annotations

import json
import sys
from typing import Any

import click

from calc import __version__
from calc.deltat import DEFAULT_METHOD, METHODS
from calc.errors import CupcalError

__all__ = ["main", "cli"]


class _Group(click.Group):
    """The top-level group: built-in commands plus plugin commands found lazily.

    Other packages (the web notebook) add commands through the ``cupcal.commands``
    entry-point group; they are imported only when one of them is invoked or listed,
    so ``calc`` itself never imports them.
    """

    def _plugins(self) -> dict[str, Any]:
        from importlib.metadata import entry_points

        return {ep.name: ep for ep in entry_points(group="cupcal.commands")}

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(set(super().list_commands(ctx)) | set(self._plugins()))

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        cmd = super().get_command(ctx, name)
        if cmd is not None:
            return cmd
        ep = self._plugins().get(name)
        if ep is None:
            return None
        try:
            return ep.load()
        except ImportError as exc:  # a plugin whose package is missing or broken
            click.echo(f"cupcal: the '{name}' command is unavailable ({exc})", err=True)
            return None

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


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="cupcal")
def cli() -> None:
    """Coffee-cup solution calorimetry with honest measurement uncertainty."""


@cli.command()
@click.argument("runs", nargs=-1, required=True)  # plain text: load_run names every unreadable path
@click.option(
    "--method",
    type=click.Choice(sorted(METHODS)),
    default=None,
    help=f"Corrected-ΔT method (default: the run file's, else {DEFAULT_METHOD}).",
)
@click.option(
    "--monte-carlo",
    "trials",
    type=int,
    default=100_000,
    show_default=True,
    help="Monte Carlo trials for the JCGM 101 check; 0 turns it off (at most the limit monte_carlo_trials).",
)
@click.option("--seed", type=int, default=None, help="Seed of the Monte Carlo generator.")
@click.option("--json", "as_json", is_flag=True, help="One JSON object per line and per input.")
def analyze(runs: tuple[str, ...], method: str | None, trials: int, seed: int | None, as_json: bool) -> None:
    """Analyse run files: corrected ΔT, heat, ΔH (or C_cal) ± U and the budget."""
    from calc.analysis import analyze_run, check_options
    from calc.report import error_record, format_report, to_record

    try:
        check_options(trials, seed)  # once, as one line, before any file
    except CupcalError as exc:
        option = {"monte_carlo": "--monte-carlo", "seed": "--seed"}.get(getattr(exc, "field", None) or "", "option")
        click.echo(f"cupcal analyze: error: {option}: {exc.message}", err=True)
        sys.exit(2)

    failed = 0
    out = sys.stdout
    first = True
    for path in runs:
        try:
            a = analyze_run(path, method=method, monte_carlo_trials=trials, seed=seed, source=path,
                            with_reference=not as_json)
        except CupcalError as exc:
            failed += 1
            if as_json:
                out.write(json.dumps(error_record(path, str(exc)), ensure_ascii=False) + "\n")
            else:
                click.echo(f"{path}: error: {exc}" if not str(exc).startswith(path) else f"error: {exc}", err=True)
            out.flush()
            continue
        except Exception as exc:  # a bug must not stop the batch or show a traceback
            failed += 1
            msg = f"internal error while analysing ({exc.__class__.__name__}: {exc})"
            if as_json:
                out.write(json.dumps(error_record(path, msg), ensure_ascii=False) + "\n")
            else:
                click.echo(f"{path}: {msg}", err=True)
            out.flush()
            continue
        if as_json:
            out.write(json.dumps(to_record(a, path), ensure_ascii=False) + "\n")
        else:
            if not first:
                out.write("\n")
            out.write(format_report(a, path) + "\n")
        first = False
        out.flush()
    if failed:
        sys.exit(2)


@cli.command()
def methods() -> None:
    """List the corrected-ΔT methods."""
    from calc.deltat import METHOD_TERMS

    for name in sorted(METHODS):
        mark = " (default)" if name == DEFAULT_METHOD else ""
        doc = (METHODS[name].__doc__ or "").strip().splitlines()
        click.echo(f"{name}{mark}: {doc[0] if doc else ''} (method term ±{100 * METHOD_TERMS.get(name, 0.01):.1f} % of |ΔT|)")


def _register_optional() -> None:
    try:
        from calc.cli_reference import hess_command as hess
    except ImportError:  # reference data not installed
        return
    cli.add_command(hess)
    from calc.cli_plan import plan_command

    cli.add_command(plan_command)


_register_optional()


def main() -> None:
    """Run the ``cupcal`` command line."""
    cli(prog_name="cupcal")


if __name__ == "__main__":  # pragma: no cover
    main()
