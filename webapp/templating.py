"""Jinja filters and globals shared by every page; rounding comes from calc.report."""

from __future__ import annotations

import datetime as dt
from typing import Any

from calc.refdata.comparison import verdict
from calc.report import format_value
from flask import Flask

from webapp.auth.forms import ConfirmForm
from webapp.services.checks import flag_text
from webapp.services.checks import flagged_checks
from webapp.services.checks import run_flagged


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


def day(value: dt.datetime | dt.date | None) -> str:
    """Return a stored time as its date, ``YYYY-MM-DD`` (when something was measured)."""
    if value is None:
        return "never"
    return value.strftime("%Y-%m-%d")


def init_app(app: Flask) -> None:
    """Register the filters and the sign-out form every page shows."""
    app.jinja_env.filters["pm"] = pm
    app.jinja_env.filters["when"] = when
    app.jinja_env.filters["day"] = day

    def overdue(day_of: Any, calibration: Any, calorimeter: Any) -> str | None:
        from flask import current_app

        from webapp.services.calibrations import overdue_note
        from webapp.services.calibrations import run_day
        from webapp.services.calibrations import text_day

        when = run_day(day_of) if hasattr(day_of, "performed_on") else text_day(day_of)
        return overdue_note(when, calibration, calorimeter, int(current_app.config["CALIBRATION_DUE_DAYS"]))

    app.jinja_env.globals["calibration_overdue"] = overdue
    app.jinja_env.filters["verdict"] = verdict
    app.jinja_env.globals["signout_form"] = ConfirmForm
    app.jinja_env.globals["run_flagged"] = run_flagged
    app.jinja_env.globals["flagged_checks"] = flagged_checks
    app.jinja_env.globals["flag_text"] = flag_text
