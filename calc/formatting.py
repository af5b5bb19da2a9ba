"""The one number formatter of cupcal: every page, report and export prints numbers through here.

The rule (GUM 7.2.6, common practice): an uncertainty is given to two significant digits and the
value is rounded to the same decimal place; a unit is always written; degrees of freedom above a
bound are printed as "> 1000" (or "∞" when infinite); an absolute temperature is shown in the unit
the user entered (°C, °F or K). ``value ± u`` is formatted by the ``uncertainties`` package's
format specification (``.2uf``), so the rounding is that library's, not a copy of our own.

Every function returns text; a missing or non-finite number prints as "—".
"""

from __future__ import annotations

import math
import warnings
from functools import lru_cache
from typing import Any

DASH = "—"
DOF_BOUND = 1000.0
UNCERTAINTY_DIGITS = 2
_KELVIN_OFFSET = 273.15
# Below or above these magnitudes a fixed-point number is unreadable; use the exponent form.
_FIXED_RANGE = (1e-4, 1e9)
_UNIT_TEXT = {
    "degC": "°C",
    "degree_Celsius": "°C",
    "°C": "°C",
    "C": "°C",
    "degF": "°F",
    "degree_Fahrenheit": "°F",
    "°F": "°F",
    "F": "°F",
    "K": "K",
    "kelvin": "K",
}


def finite(x: Any) -> float | None:
    """Return ``x`` as a finite float, or ``None`` (missing, text, NaN or infinite)."""
    if x is None or isinstance(x, bool):
        return None
    try:
        v = float(x)
    except (TypeError, ValueError, OverflowError):
        return None
    return v if math.isfinite(v) else None


def decimals_for(u: float, digits: int = UNCERTAINTY_DIGITS) -> int:
    """Return the number of decimals that gives ``u`` ``digits`` significant digits (≥ 0)."""
    if not (u > 0 and math.isfinite(u)):
        return 0
    return max(0, digits - 1 - math.floor(math.log10(u)))


def _with_unit(text: str, unit: str) -> str:
    unit = unit_text(unit)
    if not unit:
        return text
    if unit == "%":
        return f"{text} %"
    return f"{text} {unit}"


def unit_text(unit: str | None) -> str:
    """Return a unit as people write it: ``degC`` → ``°C``, ``mol/L`` unchanged."""
    if not unit:
        return ""
    return _UNIT_TEXT.get(unit, unit).replace("**", "^").replace("*", "·")


def _plain(x: float, digits: int, *, whole: bool = False, trim: bool = False) -> str:
    """Return ``x`` with ``digits`` significant digits, fixed-point in the readable range.

    ``whole`` keeps every digit before the decimal point (123456 stays 123456); ``trim`` drops
    trailing zeros after it.
    """
    if x == 0:
        return "0"
    magnitude = abs(x)
    if not (_FIXED_RANGE[0] <= magnitude < _FIXED_RANGE[1]):
        mantissa, exponent = f"{x:.{digits - 1}e}".split("e")
        return f"{mantissa}×10^{int(exponent)}"
    place = digits - 1 - math.floor(math.log10(magnitude))
    rounded = round(x, place)
    if rounded != 0 and math.floor(math.log10(abs(rounded))) != math.floor(math.log10(magnitude)):
        place -= 1  # 9.96 → 10.0 with three digits becomes 10.0, not 10.00
    if place <= 0:
        return f"{x:.0f}" if whole else f"{round(x, place):.0f}"
    text = f"{x:.{place}f}"
    return text.rstrip("0").rstrip(".") if trim else text


def number(x: Any, unit: str = "", *, digits: int = 3, trim: bool = False) -> str:
    """Return a number with ``digits`` significant digits and its unit ("—" when missing).

    Never the exponent form for ordinary magnitudes: ``100`` prints as "100", not "1e+02";
    digits before the decimal point are kept (123456 stays 123456).
    """
    v = finite(x)
    if v is None:
        return DASH
    return _with_unit(_plain(v, digits, whole=True, trim=trim), unit)


def fixed(x: Any, decimals: int, unit: str = "", *, signed: bool = False) -> str:
    """Return a number to a fixed number of decimals (signed: "+0.73"), with its unit."""
    v = finite(x)
    if v is None:
        return DASH
    text = f"{v:+.{max(decimals, 0)}f}" if signed else f"{v:.{max(decimals, 0)}f}"
    return _with_unit(text, unit)


def uncertainty(u: Any, unit: str = "", *, digits: int = UNCERTAINTY_DIGITS) -> str:
    """Return an uncertainty to two significant digits with its unit ("1.2 J/K", "100 J/K")."""
    s = finite(u)
    if s is None:
        return DASH
    return _with_unit(_plain(s, digits), unit)


def measured(value: Any, u: Any, unit: str = "", *, digits: int = UNCERTAINTY_DIGITS) -> str:
    """Return ``value ± u unit``: ``u`` to two significant digits, the value rounded to match.

    With no (or a zero) uncertainty the value alone is printed to six significant digits.
    """
    v, s = finite(value), finite(u)
    if v is None:
        return DASH
    if s is None or s <= 0:
        return number(v, unit, digits=6, trim=True)
    return _measured(v, s, unit, digits)


@lru_cache(maxsize=8192)  # pages print the same stored results again and again
def _measured(v: float, s: float, unit: str, digits: int) -> str:
    magnitude = max(abs(v), s)
    if not (_FIXED_RANGE[0] <= magnitude < _FIXED_RANGE[1]):
        spec = f".{digits}uP"  # (1.20±0.05)×10⁻⁵: fixed-point would be all zeros
    else:
        spec = f".{digits}uf"
    from uncertainties import ufloat  # imported on first use: keeps `import calc` light

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        text = format(ufloat(v, s), spec)
    text = text.replace("+/-", " ± ").replace("±", " ± ").replace("  ", " ")
    return _with_unit(text, unit)


def like(x: Any, u: Any, unit: str = "", *, signed: bool = False) -> str:
    """Return ``x`` rounded to the decimal place of ``u`` (two digits), e.g. a difference."""
    v, s = finite(x), finite(u)
    if v is None:
        return DASH
    if s is None or s <= 0:
        text = number(v, digits=3)
        return _with_unit(("+" if signed and v >= 0 else "") + text, unit)
    return fixed(v, decimals_for(s), unit, signed=signed)


def interval(low: Any, high: Any, unit: str = "", *, u: Any = None) -> str:
    """Return "low to high unit", rounded so that distinct ends stay distinct.

    The decimals come from ``u`` (two digits), and never fewer than the width of the interval
    needs: an interval of width 0.004 is not printed as "17.98 to 17.98".
    """
    a, b = finite(low), finite(high)
    if a is None or b is None:
        return DASH
    scale = finite(u)
    width = abs(b - a)
    places = decimals_for(scale) if scale and scale > 0 else 0
    if width > 0:
        places = max(places, decimals_for(width, 1))
    if width == 0:
        return _with_unit(fixed(a, places), unit)
    return _with_unit(f"{fixed(a, places)} to {fixed(b, places)}", unit)


def dof(nu: Any, *, bound: float = DOF_BOUND) -> str:
    """Return degrees of freedom: "∞" when infinite or missing, "> 1000" above ``bound``."""
    v = finite(nu)
    if v is None:
        return "∞"
    if v > bound:
        return f"> {bound:.0f}"
    return f"{v:.1f}" if v < 10 else f"{v:.0f}"


def percent(fraction: Any, *, decimals: int = 1, signed: bool = False) -> str:
    """Return a fraction as a percentage: 0.123 → "12.3 %"."""
    v = finite(fraction)
    if v is None:
        return DASH
    return fixed(100 * v, decimals, "%", signed=signed)


def temperature_in(kelvin: float, entered: str | None) -> tuple[float, float, str]:
    """Return (scale, value, unit) of an absolute temperature in the unit the user entered."""
    unit = unit_text(entered) if entered else "K"
    if unit == "°C":
        return 1.0, kelvin - _KELVIN_OFFSET, "°C"
    if unit == "°F":
        return 1.8, (kelvin - _KELVIN_OFFSET) * 1.8 + 32.0, "°F"
    return 1.0, kelvin, "K"


def temperature(kelvin: Any, u: Any = None, entered: str | None = "degC") -> str:
    """Return an absolute temperature given in kelvin in the entered unit (default °C).

    ``u`` (kelvin) is converted as a difference; with ``u`` the value is rounded to match.
    """
    k = finite(kelvin)
    if k is None:
        return DASH
    scale, value, unit = temperature_in(k, entered)
    s = finite(u)
    if s is None:
        return fixed(value, 2, unit)
    return measured(value, s * scale, unit)
