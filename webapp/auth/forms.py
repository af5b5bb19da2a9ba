"""Forms of the sign-in and token pages (Flask-WTF: every form carries a CSRF token)."""

from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import EmailField, PasswordField, SelectField, StringField
from wtforms.validators import DataRequired, Length


class LoginForm(FlaskForm):
    """E-mail address and password."""

    email = EmailField("E-mail", validators=[DataRequired(), Length(max=254)])
    password = PasswordField("Password", validators=[DataRequired(), Length(max=200)])


class TokenForm(FlaskForm):
    """A label for a new API token."""

    label = StringField("Label", validators=[Length(max=120)])
    scope = SelectField("Scope", choices=["read", "write", "live"], default="read")


class ConfirmForm(FlaskForm):
    """A form with nothing but its CSRF token (sign out, revoke, lock)."""
