"""Jinja filters of the run and calorimeter pages: every rounding the pages do is here.

``pm`` (value ± u) and ``when`` live in :mod:`webapp.templating`; these add plain numbers,
shares, signed differences, seconds and degrees of freedom. Registered app-wide by the
runs blueprint.
"""

from __future__ import annotations

from typing import Any

from calc.refdata.hazards import general_caution

from webapp.runs.blueprint import bp
from webapp.services.analysis import finite_or_none

_KELVIN_OFFSET = 273.15


@bp.app_template_filter("sig")
def sig(x: Any, digits: int = 3) -> str:
    """Return ``x`` with ``digits`` significant digits ("—" when missing)."""
    v = finite_or_none(x)
    if v is None:
        return "—"
    return f"{v:.{digits}g}"


@bp.app_template_filter("fixed")
def fixed(x: Any, decimals: int = 2) -> str:
    """Return ``x`` with a fixed number of decimals ("—" when missing)."""
    v = finite_or_none(x)
    return "—" if v is None else f"{v:.{decimals}f}"


@bp.app_template_filter("signed")
def signed(x: Any, decimals: int = 2) -> str:
    """Return ``x`` with its sign always written (+0.73, -1.20)."""
    v = finite_or_none(x)
    return "—" if v is None else f"{v:+.{decimals}f}"


@bp.app_template_filter("pct")
def pct(x: Any, decimals: int = 1) -> str:
    """Return a fraction as a percentage (0.123 → "12.3 %")."""
    v = finite_or_none(x)
    return "—" if v is None else f"{100 * v:.{decimals}f} %"


@bp.app_template_filter("secs")
def secs(x: Any) -> str:
    """Return a time in seconds to 0.1 s, without a trailing ".0"."""
    v = finite_or_none(x)
    if v is None:
        return "—"
    text = f"{v:.1f}"
    return text[:-2] if text.endswith(".0") else text


@bp.app_template_filter("celsius")
def celsius(kelvin: Any, decimals: int = 2) -> str:
    """Return a temperature in kelvin as degrees Celsius."""
    v = finite_or_none(kelvin)
    return "—" if v is None else f"{v - _KELVIN_OFFSET:.{decimals}f} °C"


@bp.app_template_filter("dof")
def dof(x: Any) -> str:
    """Return degrees of freedom ("∞" when infinite or not given, "> 1000" when practically so)."""
    v = finite_or_none(x)
    if v is None:
        return "∞"
    if v > 1000:
        return "> 1000"
    return f"{v:.1f}" if v < 10 else f"{v:.0f}"


@bp.app_template_global("general_caution")
def general_caution_text() -> str:
    """Return the general caution shown with every substance (calc.refdata.hazards)."""
    return general_caution()
