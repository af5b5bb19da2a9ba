"""Planning view: a form calling :func:`calc.plan.plan_run` and its result (no database)."""

from __future__ import annotations

from typing import Any

from calc.errors import CupcalError
from flask import render_template
from flask import request
from flask_login import login_required
from flask_wtf import FlaskForm
from wtforms import FloatField
from wtforms import SelectField
from wtforms import StringField
from wtforms.validators import InputRequired
from wtforms.validators import NumberRange
from wtforms.validators import Optional

from webapp.planning.blueprint import bp


class PlanForm(FlaskForm):
    """What is planned: kind, amounts as ``value ± u unit`` text, the calorimeter and the thermometer."""

    class Meta:
        csrf = False  # a GET form that stores nothing

    kind = SelectField("Kind", choices=[("dissolution", "dissolution"), ("neutralization", "neutralization")])
    formula = StringField("Solute formula", default="KCl")
    mass = StringField("Solute mass", default="2.50 ± 0.01 g")
    water_volume = StringField("Water volume", default="100.0 ± 0.5 mL")
    acid = StringField("Acid", default="HCl")
    acid_concentration = StringField("Acid concentration", default="1.00 ± 0.01 mol/L")
    acid_volume = StringField("Acid volume", default="50.0 ± 0.2 mL")
    base = StringField("Base", default="NaOH")
    base_concentration = StringField("Base concentration", default="1.00 ± 0.01 mol/L")
    base_volume = StringField("Base volume", default="50.0 ± 0.2 mL")
    calorimeter = StringField("Calorimeter heat capacity", default="20 ± 3 J/K", validators=[InputRequired()])
    resolution = FloatField("Thermometer resolution (K)", default=0.01, validators=[InputRequired(),
                                                                                    NumberRange(min=1e-6, max=5)])
    noise = FloatField("Thermometer noise (K, SD)", default=0.005, validators=[Optional(), NumberRange(min=0, max=5)])
    temperature = FloatField("Room temperature (°C)", default=22.0, validators=[Optional(), NumberRange(min=-20, max=60)])


def _plan(form: PlanForm) -> Any:
    from calc.plan import plan_run

    kw: dict[str, Any] = {
        "calorimeter_heat_capacity": form.calorimeter.data, "thermometer_resolution": form.resolution.data,
        "thermometer_noise": form.noise.data if form.noise.data is not None else 0.005,
        "temperature": (form.temperature.data if form.temperature.data is not None else 22.0) + 273.15,
    }
    if form.kind.data == "dissolution":
        kw.update(formula=form.formula.data, mass=form.mass.data, water_volume=form.water_volume.data)
    else:
        kw.update(acid=form.acid.data, base=form.base.data, acid_concentration=form.acid_concentration.data,
                  base_concentration=form.base_concentration.data, acid_volume=form.acid_volume.data,
                  base_volume=form.base_volume.data)
    return plan_run(form.kind.data, **kw)


@bp.route("/plan")
@login_required
def plan():  # type: ignore[no-untyped-def]
    """Show the planning form; with ``kind`` in the query, the plan (or the error naming the field)."""
    form = PlanForm(request.args)
    result, error = None, None
    if "kind" in request.args:
        if form.validate():
            try:
                result = _plan(form)
            except CupcalError as exc:
                error = str(exc)
        else:
            error = "; ".join(f"{getattr(form, k).label.text}: {', '.join(v)}" for k, v in form.errors.items())
    return render_template("planning/plan.html", form=form, plan=result, error=error), (400 if error else 200)
