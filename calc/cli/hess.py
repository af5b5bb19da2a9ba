"""The ``cupcal hess`` command: reaction enthalpy from the ΔfH° table by Hess's law."""

from __future__ import annotations

import json
import sys
from typing import Any

import click

from calc.errors import CupcalError, InputError
from calc.refdata.hess import HessResult, hess

__all__ = ["hess_command", "parse_temperature"]


def parse_temperature(text: str) -> float:
    """Return a temperature given as ``"310 K"``, ``"37 degC"`` or ``"310"`` (K) in kelvin.

    Raises
    ------
    InputError
        If the text is not a temperature.
    """
    from calc.io.units import Q_, DimensionalityError, UndefinedUnitError

    raw = text.strip()
    try:
        return float(raw)
    except ValueError:
        pass
    try:
        q: Any = Q_(raw)
        return float(q.to("kelvin").magnitude)
    except (DimensionalityError, UndefinedUnitError, AttributeError, ValueError, TypeError) as exc:
        raise InputError(
            f"cannot read temperature {text!r}: give e.g. '310 K' or '37 degC' ({exc})",
            field="--temperature",
        ) from None
    except Exception:  # pint raises assorted parser errors for odd text
        raise InputError(
            f"cannot read temperature {text!r}: give e.g. '310 K' or '37 degC'",
            field="--temperature",
        ) from None


def _fmt(x: float, u: float) -> str:
    return f"{x:.3f} ± {u:.3f}"


def _human(r: HessResult) -> str:
    lines = [r.equation, ""]
    width = max(len(t.species) for t in r.terms)
    for t in r.terms:
        side = "reactant" if t.coefficient < 0 else "product "
        lines.append(f"  {side} {abs(t.coefficient)!s:>5} × {t.species:<{width}}  ΔfH° = {_fmt(t.dfH, t.u)} kJ/mol")
    lines.append("")
    lines.append(f"ΔrH° ({r.temperature_K:.2f} K) = {_fmt(r.value, r.u)} kJ/mol  (standard uncertainty)")
    if r.delta_cp is not None:
        lines.append(f"ΔrCp° = {r.delta_cp * 1000:.1f} ± {(r.delta_cp_u or 0) * 1000:.1f} J/(mol K)")
    for note in r.notes:
        lines.append(f"note: {note}")
    lines.append(f"source: {r.source}")
    return "\n".join(lines)


@click.command("hess")
@click.argument("equation")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")
@click.option(
    "--temperature",
    default=None,
    metavar="TEMP",
    help="Temperature of the result, e.g. '310 K' or '37 degC' (Kirchhoff correction).",
)
def hess_command(equation: str, as_json: bool, temperature: str | None) -> None:
    """Compute the standard reaction enthalpy of EQUATION from the ΔfH° table.

    Example: cupcal hess "CaCl2(s) -> Ca2+(aq) + 2 Cl-(aq)"
    """
    try:
        T = parse_temperature(temperature) if temperature is not None else 298.15
        result = hess(equation, T)
    except CupcalError as exc:
        click.echo(f"cupcal hess: error: {exc}", err=True)
        sys.exit(2)
    if as_json:
        click.echo(json.dumps(result.to_json(), ensure_ascii=False))
    else:
        click.echo(_human(result))
