"""Every Jinja filter and global of the notebook, registered in one place.

The numbers come from :mod:`calc.formatting` (two significant digits of U, the value rounded to
match, units always), the same formatter as the text report and the exports.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from flask import Flask

from calc import formatting as fmt
from calc.kinds import get_kind
from calc.refdata.comparison import verdict
from calc.refdata.hazards import general_caution
from webapp.auth.forms import ConfirmForm
from webapp.services.checks import flag_text, flagged_checks, run_flagged


def pm(value: Any, u: Any, unit: str = "", sig: int = 2) -> str:
    """Return ``value ± u unit`` rounded to two significant digits of ``u``."""
    return fmt.measured(value, u, unit, digits=sig)


def when(value: dt.datetime | None) -> str:
    """Return a stored UTC time as ``YYYY-MM-DD HH:MM UTC``."""
    if value is None:
        return "never"
    return value.strftime("%Y-%m-%d %H:%M UTC")


def sig(x: Any, digits: int = 3, unit: str = "") -> str:
    """Return ``x`` with ``digits`` significant digits, never in exponent form ("—" when missing)."""
    return fmt.number(x, unit, digits=digits)


def fixed(x: Any, decimals: int = 2, unit: str = "") -> str:
    """Return ``x`` with a fixed number of decimals ("—" when missing)."""
    return fmt.fixed(x, decimals, unit)


def signed(x: Any, decimals: int = 2, unit: str = "") -> str:
    """Return ``x`` with its sign always written (+0.73, -1.20)."""
    return fmt.fixed(x, decimals, unit, signed=True)


def like(x: Any, u: Any, unit: str = "", signed: bool = False) -> str:
    """Return ``x`` rounded to the decimal place of ``u`` (a difference, a mean), with its unit."""
    return fmt.like(x, u, unit, signed=signed)


def unc(u: Any, unit: str = "") -> str:
    """Return an uncertainty to two significant digits with its unit."""
    return fmt.uncertainty(u, unit)


def interval(ends: Any, unit: str = "", u: Any = None) -> str:
    """Return "low to high unit" for a pair, rounded so that distinct ends stay distinct."""
    if not ends or len(ends) != 2:
        return fmt.DASH
    return fmt.interval(ends[0], ends[1], unit, u=u)


def pct(x: Any, decimals: int = 1) -> str:
    """Return a fraction as a percentage (0.123 → "12.3 %")."""
    return fmt.percent(x, decimals=decimals)


def secs(x: Any) -> str:
    """Return a time in seconds to 0.1 s, without a trailing ".0"."""
    v = fmt.finite(x)
    if v is None:
        return fmt.DASH
    text = f"{v:.1f}"
    return text[:-2] if text.endswith(".0") else text


def celsius(kelvin: Any, decimals: int = 2) -> str:
    """Return a temperature in kelvin as degrees Celsius."""
    v = fmt.finite(kelvin)
    return fmt.DASH if v is None else fmt.fixed(v - 273.15, decimals, "°C")


def temp(kelvin: Any, u: Any = None, entered: str | None = "degC") -> str:
    """Return an absolute temperature (kelvin) in the unit the user entered."""
    return fmt.temperature(kelvin, u, entered)


def dof(x: Any) -> str:
    """Return degrees of freedom ("∞" when infinite or not given, "> 1000" when practically so)."""
    return fmt.dof(x)


def unit_text(unit: str | None) -> str:
    """Return a unit as people write it (degC → °C)."""
    return fmt.unit_text(unit)


def entered_units(source: Any) -> dict[str, str]:
    """Return {run-file field: unit as written} from a calc Analysis or a run's stored inputs."""
    if source is None:
        return {}
    if hasattr(source, "spec"):
        from calc.report import entered_units as of_analysis

        return of_analysis(source)
    return {i.field: i.unit for i in source if getattr(i, "unit", None)}


def budget_value(line: Any, entered: dict[str, str] | None = None) -> str:
    """Return a budget input's value rounded to match its u, with its unit.

    An absolute temperature is shown in the unit the user entered (44.60 °C, not 317.75 K).
    """
    get = line.get if isinstance(line, dict) else (lambda k: getattr(line, k, None))
    value, u, unit = get("value"), get("standard_uncertainty"), get("unit") or ""
    written = (entered or {}).get(get("input") or get("name") or "")
    if unit == "K" and written and fmt.unit_text(written) in ("°C", "°F"):
        scale, shown, shown_unit = fmt.temperature_in(float(value), written)
        return fmt.like(shown, (u or 0) * scale, shown_unit)
    return fmt.like(value, u, unit)


def day(value: dt.datetime | dt.date | None) -> str:
    """Return a stored time as its date, ``YYYY-MM-DD`` (when something was measured)."""
    if value is None:
        return "never"
    return value.strftime("%Y-%m-%d")


FILTERS = {
    "pm": pm,
    "when": when,
    "sig": sig,
    "fixed": fixed,
    "signed": signed,
    "like": like,
    "unc": unc,
    "interval": interval,
    "pct": pct,
    "secs": secs,
    "celsius": celsius,
    "temp": temp,
    "dof": dof,
    "unit_text": unit_text,
    "entered_units": entered_units,
    "budget_value": budget_value,
    "day": day,
    "verdict": verdict,
}


def init_app(app: Flask) -> None:
    """Register every filter, the sign-out form and the general caution every page shows."""
    app.jinja_env.filters.update(FILTERS)
    app.jinja_env.globals["signout_form"] = ConfirmForm
    app.jinja_env.globals["general_caution"] = general_caution
    app.jinja_env.globals["run_kind"] = get_kind
    app.jinja_env.globals["run_flagged"] = run_flagged
    app.jinja_env.globals["flagged_checks"] = flagged_checks
    app.jinja_env.globals["flag_text"] = flag_text

    def overdue(day_of: Any, calibration: Any, calorimeter: Any) -> str | None:
        from flask import current_app

        from webapp.services.calibrations import overdue_note, run_day, text_day

        when = run_day(day_of) if hasattr(day_of, "performed_on") else text_day(day_of)
        return overdue_note(when, calibration, calorimeter, int(current_app.config["CALIBRATION_DUE_DAYS"]))

    app.jinja_env.globals["calibration_overdue"] = overdue
