"""Read and validate a run file (TOML).

The format is public (README.md, "The run file"): every measured quantity is a
string ``"value ± u unit"``. This module checks every section and field against
the schema of the run's kind and rejects missing, unknown and wrongly
dimensioned fields with a message that names the field and what was expected.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from calc import limits
from calc.errors import InputError
from calc.io.files import read_limited
from calc.io.quantities import Measured, parse_measured
from calc.io.schema import CALORIMETER_TYPES, KINDS, REQUIRED_SECTIONS, SCHEMA, TOP_FIELDS, Field
from calc.limits import require_number

__all__ = ["RunSpec", "load_run", "parse_run", "KINDS", "SCHEMA", "REQUIRED_SECTIONS", "CALORIMETER_TYPES"]

_DELTA_FACTORS = {"K": 1.0, "kelvin": 1.0, "degC": 1.0, "°C": 1.0, "℃": 1.0, "mK": 1e-3, "degF": 5 / 9, "°F": 5 / 9}


@dataclass
class RunSpec:
    """A validated run file."""

    path: Path | None
    source: str
    kind: str
    readings_path: Path
    sections: dict[str, dict[str, Any]]
    mixing_time: Measured | None = None
    fore_period: tuple[float, float] | None = None
    after_period: tuple[float, float] | None = None
    method: str | None = None
    temperature_column: str | int | None = None  # which column of a logger export holds the temperature
    raw: dict[str, Any] = field(default_factory=dict)

    def get(self, section: str, name: str, default: Any = None) -> Any:
        """Return a field's parsed value, or ``default`` when absent."""
        return self.sections.get(section, {}).get(name, default)

    @property
    def resolution_K(self) -> float:
        """Thermometer resolution in kelvin."""
        return float(self.sections["thermometer"]["resolution"])


def load_run(path: str | os.PathLike[str], *, source: str | None = None) -> RunSpec:
    """Read and validate the run file at ``path``.

    Raises
    ------
    InputError
        For an unreadable file, invalid TOML, or a missing, unknown or invalid field.
    """
    p = Path(path)
    src = source or str(path)
    data = read_limited(p, limit="run_file_bytes", what="the run file", expected="a run file (.toml)", source=src)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("is not UTF-8 text; expected a TOML run file", source=src) from None
    return parse_run(text, source=src, base_dir=p.parent, path=p)


def parse_run(text: str, *, source: str, base_dir: Path | None = None, path: Path | None = None) -> RunSpec:
    """Validate run-file text; ``base_dir`` resolves the readings path."""
    data = _toml(text, source)
    kind = data.get("kind")
    if kind is None:
        raise InputError(f"missing; expected one of: {', '.join(KINDS)}", source=source, field="kind")
    if kind not in KINDS:
        raise InputError(f"unknown kind '{kind}'; expected one of: {', '.join(KINDS)}", source=source, field="kind")
    sections, top = _split(data, kind, source)
    readings = top.get("readings")
    if not isinstance(readings, str) or not readings.strip():
        raise InputError(
            "missing; expected the path of the readings CSV, relative to the run file",
            source=source,
            field="readings",
        )
    rpath = Path(readings)
    if not rpath.is_absolute() and base_dir is not None:
        rpath = base_dir / rpath
    mixing = None
    if "mixing_time" in top:
        mixing = _parse_time(top["mixing_time"], "mixing_time", source)
    fore = _parse_period(top.get("fore_period"), "fore_period", source)
    after = _parse_period(top.get("after_period"), "after_period", source)
    method = top.get("method")
    if method is not None and not isinstance(method, str):
        raise InputError("expected a method name (a string)", source=source, field="method")
    _section_rules(sections, source)
    column = _parse_column(top.get("temperature_column"), source)
    return RunSpec(
        path=path,
        source=source,
        kind=kind,
        readings_path=rpath,
        sections=sections,
        mixing_time=mixing,
        fore_period=fore,
        after_period=after,
        method=method,
        temperature_column=column,
        raw=data,
    )


def _toml(text: str, source: str) -> dict[str, Any]:
    """Return the TOML document of a run file, or an InputError naming the line."""
    limits.require_size(len(text), "run_file_bytes", what=f"the run file ({len(text)} characters)", source=source)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        found = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        line = int(found.group(1)) if found else None
        msg = re.sub(r"\s*\(at line \d+, column (\d+)\)", r" (column \1)", msg)
        raise InputError(f"not valid TOML: {msg}", source=source, line=line) from None
    except RecursionError:
        # tomllib recurses once per nesting level: "x = [[[[…" ~1000 deep
        # exhausted the stack (found by the hostile-input tests).
        raise InputError("not valid run-file TOML: arrays or tables nested too deeply", source=source) from None
    except ValueError:
        # tomllib reads integers with int(), which refuses more than 4300 digits
        # (found by the hostile-input tests with "x = 999…9").
        raise InputError("not valid run-file TOML: a number has too many digits", source=source) from None


def _split(data: dict[str, Any], kind: str, source: str) -> tuple[dict[str, dict[str, Any]], dict[str, Any]]:
    """Return the parsed sections and the top-level fields; refuse unknown ones and missing sections."""
    schema = SCHEMA[kind]
    sections: dict[str, dict[str, Any]] = {}
    top: dict[str, Any] = {}
    expected = ", ".join(f"[{s}]" for s in schema)
    for key, value in data.items():
        if isinstance(value, dict):
            if key not in schema:
                raise InputError(
                    f"unknown section [{key}] for a {kind} run; expected sections: {expected}",
                    source=source,
                    field=_key(key),
                )
            sections[key] = _parse_section(key, value, schema[key], source)
        else:
            if key not in TOP_FIELDS:
                raise InputError(
                    f"unknown field; expected top-level fields: {', '.join(TOP_FIELDS)} and sections {expected}",
                    source=source,
                    field=_key(key),
                )
            top[key] = value
    for sec in REQUIRED_SECTIONS[kind]:
        if sec not in sections:
            required = [n for n, f in schema[sec].items() if f[2]]
            raise InputError(
                f"missing section [{sec}] (a {kind} run needs it, with {', '.join(required)})",
                source=source,
                field=sec,
            )
    return sections, top


_BARE_KEY_RE = re.compile(r"[A-Za-z0-9_-]+")


def _key(name: str) -> str:
    """Return ``name`` as it is written in a dotted TOML key: bare, or quoted when it must be.

    TOML 1.0.0 ("Keys"): bare keys are ASCII letters, digits, ``_`` and ``-``;
    others are quoted strings. Hostile-input tests found that an empty section
    name (``[""]``) gave an error with an empty field, which the message omits.
    """
    return name if _BARE_KEY_RE.fullmatch(name) else json.dumps(name, ensure_ascii=False)


def _parse_column(value: Any, source: str) -> str | int | None:
    """Return the temperature column: a header name or a 1-based column number."""
    if value is None:
        return None
    if isinstance(value, str) and value.strip() and len(value) <= 100:
        return value.strip()
    if isinstance(value, int) and not isinstance(value, bool) and 2 <= value <= 1000:
        return value
    raise InputError(
        'expected the temperature column\'s header name (e.g. "T2") or its column number counted from 1 '
        "(e.g. 3; column 1 is the time)",
        source=source,
        field="temperature_column",
    )


def _parse_time(value: Any, name: str, source: str) -> Measured:
    return parse_measured(value, field=name, expected="s", source=source)


def _parse_period(value: Any, name: str, source: str) -> tuple[float, float] | None:
    if value is None:
        return None
    if not isinstance(value, list) or len(value) != 2:
        raise InputError('expected a list of two times, like ["0 s", "170 s"]', source=source, field=name)
    a = _parse_time(value[0], name, source).m_as("s")
    b = _parse_time(value[1], name, source).m_as("s")
    if not b > a:
        raise InputError(f"the period must end after it starts (got {a:g} s to {b:g} s)", source=source, field=name)
    return (a, b)


def _parse_section(name: str, values: dict[str, Any], fields: dict[str, Field], source: str) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in values.items():
        dotted = f"{name}.{_key(key)}"
        if key not in fields:
            raise InputError(f"unknown field; [{name}] takes: {', '.join(fields)}", source=source, field=dotted)
        kind, unit, _req = fields[key]
        out[key] = _parse_value(value, kind, unit, dotted, source)
    for key, (_kind, unit, req) in fields.items():
        if req and key not in out:
            example = {
                "mL": "100.0 ± 0.1 mL",
                "g": "2.500 ± 0.001 g",
                "J/K": "15 ± 3 J/K",
                "K": "0.01 K",
                "mol/L": "1.000 ± 0.005 mol/L",
                "V": "5.00 ± 0.01 V",
                "A": "1.000 ± 0.002 A",
                "s": "120.0 ± 0.2 s",
            }.get(unit or "", "")
            hint = f', e.g. {key} = "{example}"' if example else ""
            raise InputError(f"missing{hint}", source=source, field=f"{name}.{key}")
    return out


#: The longest text a run file's free-text field may hold (notes are longer than names).
TEXT_LIMITS = {
    "info.title": 300,
    "info.operator": 200,
    "info.bench": 120,
    "info.date": 40,
    "info.notes": 5000,
    "info.sample": 200,
    "info.group": 120,
}
DEFAULT_TEXT_LIMIT = 200


def _parse_value(value: Any, kind: str, unit: str | None, dotted: str, source: str) -> Any:
    if kind == "s":
        if not isinstance(value, str):
            raise InputError("expected text (a string)", source=source, field=dotted)
        limit = TEXT_LIMITS.get(dotted, DEFAULT_TEXT_LIMIT)
        if len(value) > limit:
            raise InputError(
                f"the text is {len(value):,} characters long; at most {limit:,} are allowed",
                source=source,
                field=dotted,
            )
        return value
    if kind == "d":
        return iso_date(value, dotted, source)
    if kind == "f":
        if not isinstance(value, str) or not value.strip():
            raise InputError("expected a chemical formula such as 'KCl'", source=source, field=dotted)
        from calc.refdata.formula import molar_mass

        molar_mass(value, field=dotted, source=source)  # validates the formula
        return value.strip()
    if kind == "i":
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise InputError("expected a positive whole number", source=source, field=dotted)
        top = limits.get("equivalents")
        require_number(
            value, f"at most {top:g} (limit equivalents)", field=dotted, source=source, minimum=1, maximum=top
        )
        return value
    if kind == "n":
        return parse_measured(value, field=dotted, expected="", source=source)
    if kind == "dq":
        m = parse_measured(value, field=dotted, expected="K", source=source)
        factor = _DELTA_FACTORS.get(m.unit)
        if factor is None:
            raise InputError(
                f"expected a temperature difference in K, mK, degC or degF, got '{m.text}'",
                source=source,
                field=dotted,
            )
        v = m.value * factor
        if not (v > 0 and math.isfinite(v)):
            raise InputError(f"expected a positive resolution, got '{m.text}'", source=source, field=dotted)
        low, high = limits.bounds_for_unit("resolution_K")
        require_number(
            v,
            f"a resolution in K (physical bounds) in '{limits.shorten(m.text)}'",
            field=dotted,
            source=source,
            minimum=low,
            maximum=high,
        )
        return v
    m = parse_measured(value, field=dotted, expected=unit or "", source=source)
    if unit not in ("K",) and m.value <= 0 and not dotted.endswith("heat_capacity"):
        raise InputError(f"expected a positive value, got '{m.text}'", source=source, field=dotted)
    _within_bounds(m, unit or "", dotted, source)
    return m


def _within_bounds(m: Measured, unit: str, dotted: str, source: str) -> None:
    """Refuse a value or uncertainty beyond the physical bounds of its unit (calc.limits.PHYSICAL_BOUNDS)."""
    low, high = limits.bounds_for_unit(unit)
    if not math.isfinite(high):
        return
    value, u = m.m_as(unit), m.u_as(unit)
    what = f"a value in {unit or 'no unit'} (physical bounds) in '{limits.shorten(m.text)}'"
    require_number(value, what, field=dotted, source=source, minimum=low, maximum=high)
    require_number(
        u,
        f"an uncertainty in {unit or 'no unit'} (physical bounds) in '{limits.shorten(m.text)}'",
        field=dotted,
        source=source,
        minimum=0,
        maximum=high - low,
    )


def iso_date(value: Any, dotted: str = "info.date", source: str | None = None) -> str:
    """Return a date (or date and time) written in ISO 8601 as its text; anything else is an InputError.

    ``2025-03-13``, ``2025-03-13T14:05``, ``2025-03-13 14:05:00+01:00`` and a TOML date are taken;
    ``yesterday``, ``13/03/2025`` and ``March 13`` are refused (ISO 8601-1:2019, extended format).
    """
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, str) and len(value) <= 40 and value.isascii() and _ISO_DATE_RE.match(value.strip()):
        text = value.strip()
        try:
            (dt.date.fromisoformat if len(text) == 10 else dt.datetime.fromisoformat)(text)
            return text
        except ValueError:
            pass
    shown = limits.shorten(value if isinstance(value, str) else repr(value))
    raise InputError(
        f"expected a date in ISO 8601 like 2025-03-13 (or 2025-03-13T14:05), got {shown!r}", source=source, field=dotted
    )


_ISO_DATE_RE = re.compile(r"\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d{1,6})?)?(?:Z|[+-]\d{2}:\d{2})?)?$")


def _section_rules(sections: dict[str, dict[str, Any]], source: str) -> None:
    ctype = sections.get("calorimeter", {}).get("type")
    if ctype is not None and ctype not in CALORIMETER_TYPES:
        raise InputError(
            f"unknown calorimeter type {ctype!r}; expected one of: {', '.join(CALORIMETER_TYPES)}",
            source=source,
            field="calorimeter.type",
        )
    r = sections.get("reaction")
    if r is not None:
        has_amount = "amount" in r
        has_mass = "mass" in r
        if has_amount == has_mass:
            raise InputError(
                "give either amount (mol) or mass (g, with limiting_reagent) of the limiting reagent",
                source=source,
                field="reaction.amount",
            )
        if has_mass and "limiting_reagent" not in r:
            raise InputError(
                "missing: a mass needs the limiting reagent's formula to give moles",
                source=source,
                field="reaction.limiting_reagent",
            )
    if "solute" in sections:
        purity = sections["solute"].get("purity")
        if purity is not None and not (0 < purity.m_as("") <= 1):
            raise InputError(
                f"expected a mass fraction between 0 and 1 (or 0 % to 100 %), got '{purity.text}'",
                source=source,
                field="solute.purity",
            )
