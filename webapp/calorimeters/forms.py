"""Forms of the calorimeter pages (coordinators add and edit calorimeters)."""

from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import BooleanField, IntegerField, SelectChoice, SelectField, StringField, TextAreaField
from wtforms.validators import Length, NumberRange, Optional

from calc.checks import CALORIMETER_TYPES


class CalorimeterForm(FlaskForm):
    """A calorimeter's name, parts and location (and, when adding one, a first heat capacity)."""

    name = StringField("Name", validators=[Length(max=200)])
    parts = TextAreaField("Parts", validators=[Length(max=2000)])
    location = StringField("Location", validators=[Length(max=200)])
    vessel_type = SelectField(
        "Type",
        choices=[SelectChoice(key, value[3]) for key, value in CALORIMETER_TYPES.items()],
        default="foam-cups",
        description="what the calorimeter is: the plausible range of its heat capacity follows it",
    )
    heat_capacity = StringField(
        "Heat capacity (optional)",
        validators=[Length(max=100)],
        description='value ± standard uncertainty, e.g. "18.6 ± 2.0 J/K"',
    )
    measured_on = StringField(
        "Heat capacity measured on",
        validators=[Length(max=40)],
        description="the date it was measured, YYYY-MM-DD (needed with a heat capacity)",
    )


class CalorimeterEditForm(CalorimeterForm):
    """The edit form: also how often the calorimeter must be calibrated."""

    calibration_interval_days = IntegerField(
        "Calibration interval (days)",
        validators=[Optional(), NumberRange(min=1, max=3650)],
        description="how often it must be calibrated; blank: the notebook's default",
    )


class HeatCapacityForm(FlaskForm):
    """A heat capacity measured elsewhere, with a note saying where."""

    heat_capacity = StringField(
        "Heat capacity", validators=[Length(max=100)], description='value ± standard uncertainty, e.g. "18.6 ± 2.0 J/K"'
    )
    measured_on = StringField(
        "Measured on", validators=[Length(max=40)], description="the date it was measured, YYYY-MM-DD (needed)"
    )
    note = StringField("Note", validators=[Length(max=300)], description="where the value comes from")
    confirm = BooleanField(
        "Confirm a large change",
        description="needed when the value in force would move by more than twice the combined standard uncertainty",
    )
    restart = BooleanField("The cup itself changed", description="start its pooled history afresh from this value")
