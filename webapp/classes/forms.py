"""Forms of the class pages."""

from __future__ import annotations

from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from wtforms import IntegerField, SelectField, StringField
from wtforms.validators import DataRequired, Length, Optional


class CourseForm(FlaskForm):
    """A new course."""

    name = StringField("Course name", validators=[DataRequired(), Length(max=120)])
    term = StringField("Term", validators=[Optional(), Length(max=60)])


class SectionForm(FlaskForm):
    """A new section of a course."""

    name = StringField("Section name", validators=[DataRequired(), Length(max=120)])


class BenchForm(FlaskForm):
    """A new bench: calorimeter and thermometer."""

    name = StringField("Bench name", validators=[DataRequired(), Length(max=120)])
    calorimeter_id = SelectField("Calorimeter", coerce=int, validators=[Optional()])
    thermometer = StringField("Thermometer", validators=[Optional(), Length(max=120)])
    resolution = StringField("Resolution (e.g. 0.01 K)", validators=[Optional(), Length(max=40)])


class RosterForm(FlaskForm):
    """A roster CSV file."""

    roster = FileField("Roster (CSV: course, section, group, name, email, role)")


class ControlForm(FlaskForm):
    """Which check standard and how many baseline points (GET form, no CSRF)."""

    class Meta:
        csrf = False

    standard = SelectField("Check standard", validators=[Optional()])
    baseline = IntegerField("Baseline points", validators=[Optional()])
