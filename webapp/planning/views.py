"""Planning view: a form calling :func:`calc.plan.plan_run` and its result (no database).

The page shows only the chosen kind's fields. Every field is checked on its own first, so all
the problems are listed at once, each under its field's label; then the plan is made, and an
error it raises is put under the field it names.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from flask import render_template, request
from flask_login import login_required

from calc.errors import CupcalError, InputError
from calc.io.quantities import parse_measured
from calc.kinds import get_kind
from webapp.planning.blueprint import bp

MAX_FIELD_LENGTH = 100


@dataclass(frozen=True)
class PlanField:
    """One input of the planning form: its label, what it holds and its default."""

    name: str
    label: str
    expected: str | None  # a unit the quantity must have; None: text (a formula); "number": a plain number
    default: str
    hint: str = ""


_F = PlanField
FIELDS = {
    f.name: f
    for f in (
        _F("formula", "Solute (formula)", None, "KCl", "e.g. KCl; for a reaction the limiting reagent, e.g. Mg"),
        _F("mass", "Mass of solute", "g", "2.50 ± 0.01 g"),
        _F("water_volume", "Water in the cup", "mL", "100.0 ± 0.5 mL"),
        _F("acid", "Acid (formula)", None, "HCl"),
        _F("acid_concentration", "Acid concentration", "mol/L", "1.00 ± 0.01 mol/L"),
        _F("acid_volume", "Acid volume (in the cup)", "mL", "50.0 ± 0.2 mL"),
        _F("base", "Base (formula)", None, "NaOH"),
        _F("base_concentration", "Base concentration", "mol/L", "1.00 ± 0.01 mol/L"),
        _F("base_volume", "Base volume (poured in)", "mL", "50.0 ± 0.2 mL"),
        _F("heater_voltage", "Heater voltage", "V", "5.00 ± 0.01 V"),
        _F("heater_current", "Heater current", "A", "1.000 ± 0.002 A"),
        _F("heater_duration", "Time the heater is on", "s", "120.0 ± 0.2 s"),
        _F("warm_volume", "Warm water poured in", "mL", "50.0 ± 0.2 mL"),
        _F("warm_temperature", "Warm water temperature", "K", "45.0 ± 0.1 °C"),
        _F("enthalpy", "Expected ΔH (kJ/mol)", "number", "", "needed when cupcal has no reference value, e.g. -466"),
        _F(
            "calorimeter",
            "Calorimeter heat capacity",
            "J/K",
            "20 ± 3 J/K",
            "for a calibration: the value you expect it to find",
        ),
        _F("resolution", "Thermometer resolution (K)", "number", "0.01"),
        _F("noise", "Thermometer noise (K, standard deviation)", "number", "0.005"),
        _F("temperature", "Room temperature (°C)", "number", "22"),
    )
}
KIND_FIELDS = {
    "dissolution": ("formula", "mass", "water_volume"),
    "neutralization": ("acid", "acid_concentration", "acid_volume", "base", "base_concentration", "base_volume"),
    "electrical-calibration": ("water_volume", "heater_voltage", "heater_current", "heater_duration"),
    "mixing-calibration": ("water_volume", "warm_volume", "warm_temperature"),
    "reaction": ("formula", "mass", "water_volume", "enthalpy"),
}
KIND_TITLES = {k: get_kind(k).title for k in KIND_FIELDS}
COMMON = ("calorimeter", "resolution", "noise", "temperature")
#: calc.plan parameter (or the field an error names) → the form field it is shown under
_FIELD_OF = {
    "calorimeter_heat_capacity": "calorimeter",
    "thermometer_resolution": "resolution",
    "thermometer_noise": "noise",
    "molar_enthalpy": "enthalpy",
    "solute.formula": "formula",
    "acid.formula": "acid",
    "base.formula": "base",
    "reaction.limiting_reagent": "formula",
}
_NUMBER_RANGE = {
    "resolution": (1e-6, 5.0),
    "noise": (0.0, 5.0),
    "temperature": (-20.0, 60.0),
    "enthalpy": (-10000.0, 10000.0),
}


def _check(name: str, text: str) -> tuple[Any, str | None]:
    """Return (value, problem) of one field's text."""
    f = FIELDS[name]
    if len(text) > MAX_FIELD_LENGTH:
        return None, f"the entry is {len(text):,} characters long; at most {MAX_FIELD_LENGTH} are allowed"
    if not text:
        return None, None if name == "enthalpy" else "missing"
    if f.expected is None:
        return text, None
    if f.expected == "number":
        try:
            x = float(text)
        except ValueError:
            return None, f"expected a number, got {text!r}"
        lo, hi = _NUMBER_RANGE[name]
        if not lo <= x <= hi:
            return None, f"expected a number from {lo:g} to {hi:g}, got {text!r}"
        return x, None
    try:
        parse_measured(text, field=name, expected=f.expected)
    except InputError as exc:
        return None, exc.message
    return text, None


def _plan(kind: str, v: dict[str, Any]) -> Any:
    from calc.plan import plan_run

    extra = {
        k: v[k]
        for k in ("heater_voltage", "heater_current", "heater_duration", "warm_volume", "warm_temperature")
        if k in v
    }
    return plan_run(
        kind,
        calorimeter_heat_capacity=v["calorimeter"],
        thermometer_resolution=v["resolution"],
        thermometer_noise=v["noise"],
        temperature=v["temperature"] + 273.15,
        formula=v.get("formula"),
        mass=v.get("mass"),
        water_volume=v.get("water_volume"),
        acid=v.get("acid"),
        base=v.get("base"),
        acid_concentration=v.get("acid_concentration"),
        base_concentration=v.get("base_concentration"),
        acid_volume=v.get("acid_volume"),
        base_volume=v.get("base_volume"),
        molar_enthalpy=v.get("enthalpy"),
        kind_inputs=extra,
    )


@bp.route("/plan")
@login_required
def plan():  # type: ignore[no-untyped-def]
    """The planning form for one kind; with ``go`` in the query, the plan or every problem under its label."""
    kind = request.args.get("kind") or "dissolution"
    errors: dict[str, str] = {}
    if kind not in KIND_FIELDS:
        errors["kind"] = f"choose one of: {', '.join(KIND_FIELDS)}"
        kind = "dissolution"
    names = KIND_FIELDS[kind] + COMMON
    texts = {n: (request.args.get(n) if request.args.get(n) is not None else FIELDS[n].default).strip() for n in names}
    result = None
    if "go" in request.args and not errors:
        values: dict[str, Any] = {}
        for n in names:
            values[n], problem = _check(n, texts[n])
            if problem:
                errors[n] = problem
        if not errors:
            try:
                result = _plan(kind, {k: x for k, x in values.items() if x is not None})
            except CupcalError as exc:
                field = getattr(exc, "field", None) or ""
                shown = _FIELD_OF.get(field, field)
                errors[shown if shown in names else "form"] = getattr(exc, "message", str(exc))
    return render_template(
        "planning/plan.html",
        kind=kind,
        kinds=KIND_TITLES,
        fields=[FIELDS[n] for n in names],
        texts=texts,
        errors=errors,
        plan=result,
    ), (400 if errors else 200)
