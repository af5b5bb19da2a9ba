"""The ``cupcal plan`` command: predict a run's ΔT and u(ΔH) before it is made (see :mod:`calc.plan`)."""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Callable
from typing import TYPE_CHECKING, Any, TypeVar

import click

from calc.errors import CupcalError, InputError
from calc.kinds import plannable_kinds

if TYPE_CHECKING:  # imported on use, so that `cupcal --help` stays fast
    from calc.plan import Plan

_Command = TypeVar("_Command", bound=Callable[..., Any])

__all__ = ["plan_command", "plan_record", "format_plan"]

#: The options that give the planned run's amounts, passed on to :func:`calc.plan.plan_run` as written:
#: (option, parameter of plan_run it sets, help), in the order of ``--help``.
_AMOUNT_OPTIONS = (
    ("--formula", "formula", "Solute to dissolve, e.g. KCl (dissolution); the limiting reagent, e.g. Mg (reaction)."),
    ("--mass", "mass", 'Mass of solute or limiting reagent, e.g. "3.00 g" (dissolution, reaction).'),
    ("--water", "water_volume", 'Water (or solution) in the cup, e.g. "100.0 mL" (all kinds but neutralization).'),
    ("--heater-voltage", "heater_voltage", 'Heater voltage, e.g. "5.00 ± 0.01 V" (electrical-calibration).'),
    ("--heater-current", "heater_current", 'Heater current, e.g. "1.000 ± 0.002 A" (electrical-calibration).'),
    ("--heater-time", "heater_duration", 'Time the heater is on, e.g. "120.0 ± 0.2 s" (electrical-calibration).'),
    ("--warm-volume", "warm_volume", 'Warm water poured in, e.g. "50.0 mL" (mixing-calibration).'),
    ("--warm-temperature", "warm_temperature", 'Warm water temperature, e.g. "45.0 ± 0.1 degC" (mixing-calibration).'),
    ("--acid", "acid", "Acid in the cup, e.g. HCl (neutralization)."),
    ("--base", "base", "Base poured in, e.g. NaOH (neutralization)."),
    ("--acid-concentration", "acid_concentration", 'e.g. "1.000 ± 0.005 mol/L".'),
    ("--base-concentration", "base_concentration", 'e.g. "1.000 ± 0.005 mol/L".'),
    ("--acid-volume", "acid_volume", 'Acid in the cup, e.g. "50.0 mL".'),
    ("--base-volume", "base_volume", 'Base poured in, e.g. "50.0 mL".'),
    (
        "--base-temperature",
        "base_temperature",
        "Temperature of the base before pouring (default: the start temperature).",
    ),
)
#: The amounts a kind takes as its own inputs (plan_run's ``kind_inputs``).
_KIND_INPUTS = ("heater_voltage", "heater_current", "heater_duration", "warm_volume", "warm_temperature", "coefficient")

#: Parameter names of :func:`calc.plan.plan_run` → the command-line option that sets them.
_OPTION_OF = {
    **{parameter: option for option, parameter, _ in _AMOUNT_OPTIONS},
    "calorimeter_heat_capacity": "--calorimeter",
    "thermometer_resolution": "--resolution",
    "thermometer_noise": "--noise",
    "noise_correlation": "--noise-correlation",
    "temperature": "--temperature",
    "interval": "--interval",
    "fore": "--fore",
    "after": "--after",
    "release_time": "--release-time",
    "probe_time": "--probe-time",
    "molar_enthalpy": "--enthalpy",
    "delta_t_window": "--min-change/--max-change",
    "balance_u": "--balance",
    "volume_u": "--glassware",
    "solute.formula": "--formula",
    "acid.formula": "--acid",
    "base.formula": "--base",
    "coefficient": "--coefficient",
    "reaction.limiting_reagent": "--formula",
}


def _amount_options(command: _Command) -> _Command:
    """Add the options of ``_AMOUNT_OPTIONS`` to ``command``, each storing its text under the plan_run parameter."""
    for option, parameter, text in reversed(_AMOUNT_OPTIONS):
        command = click.option(option, parameter, help=text)(command)
    return command


def _message(exc: CupcalError) -> str:
    """Return an error message that names the command-line option instead of the parameter."""
    if isinstance(exc, InputError) and exc.field in _OPTION_OF:
        return f"{_OPTION_OF[exc.field]}: {exc.message}"
    if isinstance(exc, InputError) and exc.field and exc.field.startswith("--"):
        return f"{exc.field}: {exc.message}"
    return str(exc)


def _num(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def plan_record(plan: Plan) -> dict[str, Any]:
    """Return a plan as a JSON-ready dict."""
    s = plan.suggestion
    return {
        "kind": plan.kind,
        "predicted_delta_t": {
            "value": plan.predicted_delta_t,
            "standard_uncertainty": plan.predicted_u_delta_t,
            "unit": "K",
            "components": plan.delta_t_components,
        },
        "molar_enthalpy": {
            "value": plan.predicted_result,
            "standard_uncertainty": plan.predicted_u,
            "unit": plan.result_unit,
        },
        "expanded_uncertainty": plan.predicted_U,
        "coverage_factor": plan.coverage_factor,
        "degrees_of_freedom": _num(plan.dof_eff),
        "expected_from": plan.expected_note,
        "window_K": list(plan.window),
        "limiting": plan.limiting,
        "equipment": [
            {"equipment": e.equipment, "share": e.share, "contribution": e.contribution, "inputs": list(e.inputs)}
            for e in plan.equipment
        ],
        "budget": [b.as_dict() for b in plan.budget],
        "suggestion": None
        if s is None
        else {
            "quantity": s.quantity,
            "unit": s.unit,
            "current": s.current,
            "low": s.low,
            "high": s.high,
            "recommended": s.recommended,
            "predicted_delta_t": s.predicted_delta_t,
            "message": s.message,
        },
        "warnings": list(plan.warnings),
        "cautions": [
            {
                "substance": c.substance,
                "signal_word": c.signal_word,
                "hazard_statements": list(c.hazard_statements),
                "pictograms": list(c.pictograms),
                "note": c.note,
            }
            for c in plan.cautions
        ],
        "run_file": plan.run_file,
    }


def format_plan(plan: Plan) -> str:
    """Return the human-readable plan."""
    from calc import formatting as fmt

    label = "C_cal" if plan.result_unit == "J/K" else "ΔH"
    article = "an" if plan.kind[:1] in "aeiou" else "a"
    lines = [f"Plan of {article} {plan.kind} run", ""]
    lines.append(f"  expected {label:<8} {fmt.like(plan.predicted_result, plan.predicted_U, plan.result_unit)}")
    lines.append(f"                    from {plan.expected_note}")
    lines.append(
        f"  predicted ΔT      {fmt.measured(plan.predicted_delta_t, plan.predicted_u_delta_t, 'K')}  "
        f"(start {fmt.temperature(plan.start_temperature_K)}; useful |ΔT| "
        f"{fmt.number(plan.window[0], trim=True)} to {fmt.number(plan.window[1], 'K', trim=True)})"
    )
    rel = plan.predicted_U / abs(plan.predicted_result) if plan.predicted_result else None
    lines.append(
        f"  predicted {label:<7} {fmt.measured(plan.predicted_result, plan.predicted_U, plan.result_unit)}  "
        f"(U at 95 %, k = {fmt.fixed(plan.coverage_factor, 2)}; {fmt.percent(rel)})"
    )
    lines.append("")
    lines.append(f"what limits the result (share of u²({label})):")
    for e in plan.equipment:
        if e.share >= 0.001:
            lines.append(f"  {fmt.percent(e.share):>7}  {e.equipment}")
    lines.append(f"  → limited by: {plan.limiting}")
    if plan.suggestion is not None:
        s = plan.suggestion
        lines.append("")
        lines.append(f"amount: {s.message}")
        lines.append(
            f"  {s.quantity}: {fmt.number(s.low)} to {fmt.number(s.high, s.unit)} keeps |ΔT| in the "
            f"window; recommended {fmt.number(s.recommended, s.unit)}"
        )
    if plan.warnings:
        lines.append("")
        lines.append("warnings:")
        lines.extend(f"  ! {w}" for w in plan.warnings)
    lines.append("")
    lines.append("safety:")
    for c in plan.cautions:
        if c.substance == "general":
            lines.append(f"  {c.note}")
            continue
        statements = "; ".join(c.hazard_statements) if c.hazard_statements else "no GHS classification on file"
        sig = f"{c.signal_word}: " if c.signal_word else ""
        lines.append(f"  {c.substance}: {sig}{statements}")
        if c.note:
            lines.append(f"    {c.note}")
    lines.append("")
    lines.append("planned run file (record the readings, then `cupcal analyze`):")
    lines.extend("  " + line for line in plan.run_file.rstrip().splitlines())
    return "\n".join(lines)


def temperature_difference_K(text: str, option: str) -> float:
    """Return a temperature difference written with its unit (``"0.01 K"``, ``"5 mK"``) in kelvin.

    A bare number is kelvin and 1 degC counts as 1 K (a difference, not a temperature).

    Raises
    ------
    InputError
        Naming ``option``, for text that is not a temperature difference ≥ 0.
    """
    from dataclasses import replace

    from calc.io.quantities import parse_measured

    try:
        x = float(text)
    except ValueError:
        m = parse_measured(text, field=option, expected="K")
        x = math.copysign(replace(m, u=abs(m.value)).u_as("K"), m.value)  # the scale only, no offset
    if not (math.isfinite(x) and x >= 0):
        raise InputError(f"expected a temperature difference ≥ 0 K, got {text!r}", field=option)
    return x


def _quantity(text: str | None, option: str, unit: str) -> float | None:
    """Return ``text`` in ``unit`` (a bare number is taken in that unit), or None when no text is given."""
    return None if text is None else _given_quantity(text, option, unit)


def _given_quantity(text: str, option: str, unit: str, *, bare: bool = True) -> float:
    """Return ``text`` in ``unit`` (a bare number is taken in that unit when ``bare``)."""
    from calc.io.quantities import parse_measured

    if bare:
        try:
            return float(text)
        except ValueError:
            pass
    return parse_measured(text, field=option, expected=unit).m_as(unit)


@click.command("plan")
@click.argument("kind", type=click.Choice(list(plannable_kinds())))
@_amount_options
@click.option(
    "--coefficient",
    type=int,
    default=1,
    show_default=True,
    help="Stoichiometric coefficient of the limiting reagent (reaction).",
)
@click.option(
    "--calorimeter",
    required=True,
    help='Calorimeter heat capacity, e.g. "18 ± 2 J/K" (for a calibration: the value it should find).',
)
@click.option("--resolution", required=True, help='Thermometer resolution, e.g. "0.01 K".')
@click.option("--noise", default="0.005 K", show_default=True, help="Thermometer noise (standard deviation).")
@click.option(
    "--noise-correlation",
    type=float,
    default=0.0,
    show_default=True,
    help="Lag-1 correlation of the noise (0 to 0.95).",
)
@click.option("--balance", help='Balance standard uncertainty for masses written without ±, e.g. "0.0002 g".')
@click.option("--glassware", help='Glassware standard uncertainty for volumes written without ±, e.g. "0.1 mL".')
@click.option("--temperature", default="22 degC", show_default=True, help="Start (room) temperature.")
@click.option("--min-change", help="Smallest useful |ΔT| (default: the larger of 1 K and 20 × resolution).")
@click.option("--max-change", default="10 K", show_default=True, help="Largest useful |ΔT|.")
@click.option("--interval", default="2 s", show_default=True, help="Time between readings.")
@click.option("--fore", default="3 min", show_default=True, help="Readings before mixing.")
@click.option("--after", default="15 min", show_default=True, help="Readings after mixing.")
@click.option("--release-time", help="Release time constant (default 60 s dissolution, 5 s neutralization).")
@click.option("--probe-time", default="5 s", show_default=True, help="Thermometer probe time constant.")
@click.option("--enthalpy", help='Expected ΔH when cupcal has no reference value, e.g. "17.2 kJ/mol".')
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")
def plan_command(kind: str, as_json: bool, **opts: Any) -> None:
    """Predict ΔT and the uncertainty of ΔH for a planned KIND run, and suggest amounts.

    Example: cupcal plan dissolution --formula KCl --mass "3.0 g" --water "100 mL"
    --calorimeter "18 ± 2 J/K" --resolution "0.01 K" --balance "0.0002 g" --glassware "0.1 mL"

    Each kind takes its own amounts: dissolution (--formula, --mass, --water); neutralization
    (--acid, --base, their concentrations and volumes); electrical-calibration (--water,
    --heater-voltage, --heater-current, --heater-time); mixing-calibration (--water,
    --warm-volume, --warm-temperature); reaction (--formula, --mass, --water, --enthalpy).
    """
    try:
        plan = _plan(kind, opts)
    except CupcalError as exc:
        click.echo(f"cupcal plan: error: {_message(exc)}", err=True)
        sys.exit(2)
    if as_json:
        click.echo(json.dumps(plan_record(plan), ensure_ascii=False))
    else:
        click.echo(format_plan(plan))


def _plan(kind: str, opts: dict[str, Any]) -> Plan:
    """Return the plan of a ``kind`` run from the command's options (text with units, parsed here)."""
    from calc.plan import MIN_DELTA_T_K, RESOLUTION_MULTIPLE, plan_run

    q = temperature_difference_K(opts["resolution"], "--resolution")
    window = (
        temperature_difference_K(opts["min_change"], "--min-change")
        if opts["min_change"] is not None
        else max(MIN_DELTA_T_K, RESOLUTION_MULTIPLE * q),
        temperature_difference_K(opts["max_change"], "--max-change"),
    )
    seconds: dict[str, Any] = {n: _given_quantity(opts[n], "--" + n, "s") for n in ("interval", "fore", "after")}
    release_time = _quantity(opts["release_time"], "--release-time", "s")  # no default: by the kind
    probe_time = _given_quantity(opts["probe_time"], "--probe-time", "s")
    return plan_run(
        kind,
        **{name: opts[name] for _, name, _ in _AMOUNT_OPTIONS if name not in _KIND_INPUTS},
        calorimeter_heat_capacity=opts["calorimeter"],
        thermometer_resolution=q,
        thermometer_noise=temperature_difference_K(opts["noise"], "--noise"),
        noise_correlation=opts["noise_correlation"],
        balance_u=_quantity(opts["balance"], "--balance", "g"),
        volume_u=_quantity(opts["glassware"], "--glassware", "mL"),
        temperature=_given_quantity(opts["temperature"], "--temperature", "K", bare=False),
        delta_t_window=window,
        molar_enthalpy=_quantity(opts["enthalpy"], "--enthalpy", "kJ/mol"),
        release_time=release_time,
        probe_time=probe_time,
        **seconds,
        kind_inputs={name: opts[name] for name in _KIND_INPUTS},
    )
