"""Device profiles: how to read one temperature from one line a thermometer sends (docs/recording.md).

A profile is a regular expression with a named group ``value`` (the temperature) and, optionally, a
named group ``time`` (the thermometer's own time stamp, in seconds), plus the unit of the value. The
unit is read through the project's one pint registry (:mod:`calc.io.units`); anything that is not a
temperature unit there is refused by name. Three generic profiles are built in (:data:`PROFILES`);
a lab describes another device in a small TOML file::

    name = "bench-7 probe"
    pattern = '^T(?P<time>\\d+)\\s+(?P<value>-?\\d+\\.\\d+)$'
    unit = "K"
    example = "T120 294.812"      # optional: a line the pattern must read (checked on loading)

The ``template`` of a built-in profile formats a reading the way the device would send it; the
simulated thermometer (:mod:`calc.live.simthermo`) uses it, and the tests read those lines back.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from calc.errors import InputError
from calc.io.units import Q_, parse_unit

__all__ = ["DeviceProfile", "PROFILES", "Reading", "load_profile", "make_profile", "temperature_unit"]

_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_UNITS_HELP = "a temperature unit such as °C (degC), K or °F (degF)"


@dataclass(frozen=True)
class Reading:
    """One reading read from a line: the device's time stamp (s) if it sends one, and °C."""

    device_time_s: float | None
    temperature_c: float


@dataclass(frozen=True)
class DeviceProfile:
    """How one kind of thermometer writes its readings, one per line."""

    name: str
    pattern: re.Pattern[str]
    unit: str
    description: str = ""
    template: str = ""  # str.format template with fields t (s), value (in ``unit``)

    @property
    def has_time(self) -> bool:
        """Tell whether the device sends its own time stamps."""
        return "time" in self.pattern.groupindex

    def read(self, line: str) -> Reading | None:
        """Return the reading in ``line``, or None when the line does not match the pattern."""
        match = self.pattern.fullmatch(line.strip())
        if match is None:
            return None
        try:
            value = float(match.group("value"))
            stamp = float(match.group("time")) if self.has_time else None
        except (TypeError, ValueError):  # a group that matched no number
            return None
        if value != value or abs(value) == float("inf") or (stamp is not None and not abs(stamp) < float("inf")):
            return None
        return Reading(stamp, to_celsius(value, self.unit))

    def format(self, time_s: float, temperature_c: float) -> str:
        """Return the line this device sends for a reading (built-in profiles only)."""
        if not self.template:
            raise InputError(f"the profile {self.name!r} has no template to write lines with", field="device")
        value = float(Q_(temperature_c, "degC").to(self.unit).magnitude)
        return self.template.format(t=time_s, value=value)


def temperature_unit(text: str, *, where: str = "unit") -> str:
    """Return ``text`` as a pint unit name of temperature, or refuse it naming it."""
    try:
        if not text.strip():
            raise ValueError("empty")
        unit = parse_unit(text.strip())
        dimensionality = Q_(1.0, unit).dimensionality
    except Exception:  # pint raises UndefinedUnitError, but also AssertionError for some symbols (℃)
        raise InputError(f"unknown unit {text!r}; expected {_UNITS_HELP}", field=where) from None
    if str(dimensionality) != "[temperature]":
        raise InputError(
            f"the unit {text!r} is not a temperature (pint reads it as {unit:~P}, "
            f"{dimensionality}); expected {_UNITS_HELP}",
            field=where,
        )
    return str(unit)


def to_celsius(value: float, unit: str) -> float:
    """Convert one temperature in ``unit`` (a name from :func:`temperature_unit`) to °C with pint."""
    if unit == "degree_Celsius":
        return value
    return float(Q_(value, unit).to("degC").magnitude)


def make_profile(
    name: str,
    pattern: str,
    unit: str,
    *,
    description: str = "",
    template: str = "",
    example: str | None = None,
    where: str = "device",
) -> DeviceProfile:
    """Return a profile after checking its pattern (a ``value`` group) and its unit."""
    try:
        compiled = re.compile(pattern)
    except re.error as exc:
        raise InputError(f"the pattern {pattern!r} is not a regular expression ({exc})", field=where) from None
    if "value" not in compiled.groupindex:
        raise InputError(
            f"the pattern {pattern!r} has no (?P<value>...) group; expected one that captures the temperature",
            field=where,
        )
    profile = DeviceProfile(name, compiled, temperature_unit(unit, where=f"{where}.unit"), description, template)
    if example is not None and profile.read(example) is None:
        raise InputError(f"the example line {example!r} does not match the pattern {pattern!r}", field=where)
    return profile


def load_profile(path: str | Path) -> DeviceProfile:
    """Read a device profile from a TOML file (``name``, ``pattern``, ``unit``, optional ``example``)."""
    source = str(path)
    try:
        data = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError("file not found; expected a device profile (.toml)", source=source) from None
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"cannot read the device profile ({exc})", source=source) from None
    for key in ("pattern", "unit"):
        if not isinstance(data.get(key), str):
            raise InputError(f'missing or not a string; expected {key} = "..."', source=source, field=key)
    unknown = set(data) - {"name", "pattern", "unit", "example", "description"}
    if unknown:
        raise InputError(
            f"unknown key(s) {sorted(unknown)}; expected name, pattern, unit, example, description", source=source
        )
    example = data.get("example")
    try:
        return make_profile(
            str(data.get("name", Path(path).stem)),
            data["pattern"],
            data["unit"],
            description=str(data.get("description", "")),
            example=example if isinstance(example, str) else None,
        )
    except InputError as exc:
        raise InputError(exc.message, source=source, field=exc.field) from None


#: The built-in generic profiles (names of our own; docs/recording.md shows a line of each).
PROFILES: dict[str, DeviceProfile] = {
    p.name: p
    for p in (
        make_profile(
            "bare-celsius",
            rf"(?P<value>{_NUMBER})",
            "degC",
            template="{value:.3f}",
            description="one number per line, in °C; the recorder stamps the time",
        ),
        make_profile(
            "stamped-kelvin",
            rf"(?P<time>{_NUMBER})\s*[;,\t ]\s*(?P<value>{_NUMBER})",
            "K",
            template="{t:.1f};{value:.3f}",
            description="the device's time in s, a separator (; , tab or space), then kelvin",
        ),
        make_profile(
            "labelled-fahrenheit",
            rf"(?:TEMP|T)\s*[:=]?\s*(?P<value>{_NUMBER})\s*(?:°\s*)?F",
            "degF",
            template="TEMP: {value:.2f} F",
            description="a label TEMP or T, the value and F, in °F; the recorder stamps the time",
        ),
    )
}
