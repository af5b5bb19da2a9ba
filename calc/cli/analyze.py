"""``cupcal analyze`` and ``cupcal methods``: a thin shell around :mod:`calc.analysis`.

Exit status: 0 when every input was analyzed, 2 when any input failed or the
command was used wrongly. Errors are one line per problem, never a traceback.
"""

from __future__ import annotations

import json
import sys

import click

from calc.deltat.base import DEFAULT_METHOD
from calc.deltat.registry import METHODS
from calc.errors import CupcalError, InputError

__all__ = ["analyze", "methods"]


@click.command()
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
    """Analyze run files: corrected ΔT, heat, ΔH (or C_cal) ± U and the budget."""
    from calc.analysis import analyze_run, check_options
    from calc.report import error_record, format_report, to_record

    try:
        check_options(trials, seed)  # once, as one line, before any file
    except InputError as exc:  # check_options raises only InputError, which carries .message
        option = {"monte_carlo": "--monte-carlo", "seed": "--seed"}.get(getattr(exc, "field", None) or "", "option")
        click.echo(f"cupcal analyze: error: {option}: {exc.message}", err=True)
        sys.exit(2)

    failed = 0
    out = sys.stdout
    first = True
    for path in runs:
        try:
            # with the reference in JSON too: its "comparison" carries the same verdict as the text
            a = analyze_run(path, method=method, monte_carlo_trials=trials, seed=seed, source=path)
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
            msg = f"internal error while analyzing ({exc.__class__.__name__}: {exc})"
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


@click.command()
def methods() -> None:
    """List the corrected-ΔT methods."""
    from calc.deltat.base import METHOD_TERMS

    for name in sorted(METHODS):
        mark = " (default)" if name == DEFAULT_METHOD else ""
        doc = (METHODS[name].__doc__ or "").strip().splitlines()
        click.echo(
            f"{name}{mark}: {doc[0] if doc else ''} (method term ±{100 * METHOD_TERMS.get(name, 0.01):.1f} % of |ΔT|)"
        )
