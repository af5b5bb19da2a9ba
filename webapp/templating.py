"""Jinja filters and globals shared by every page; rounding comes from calc.report."""

from __future__ import annotations

import datetime as dt

from calc.compare import verdict
from calc.report import format_value
from flask import Flask

from webapp.auth.forms import ConfirmForm


def pm(value: float | None, u: float | None, unit: str = "", sig: int = 2) -> str:
    """Return ``value ± u unit`` rounded as calc.report rounds (two digits of u)."""
    if value is None:
        return "—"
    return format_value(value, u or 0.0, unit, sig).strip()


def when(value: dt.datetime | None) -> str:
    """Return a stored UTC time as ``YYYY-MM-DD HH:MM UTC``."""
    if value is None:
        return "never"
    return value.strftime("%Y-%m-%d %H:%M UTC")


def init_app(app: Flask) -> None:
    """Register the filters and the sign-out form every page shows."""
    app.jinja_env.filters["pm"] = pm
    app.jinja_env.filters["when"] = when
    app.jinja_env.filters["verdict"] = verdict
    app.jinja_env.globals["signout_form"] = ConfirmForm
