"""The new-run form of each kind, generated from the run-file schema, and the run file it writes.

:func:`form_sections` turns ``calc.io.runfile.SCHEMA[kind]`` into fieldsets of fields; the
posted values (``water.volume``, ``water.volume.u``, ``water.volume.unit``, …) become an
ordinary run file with :func:`build_run_toml`, so a run entered in the form is stored
exactly like one uploaded from the command line. :func:`check_values` finds the
problems that can be named before calc sees the file (a required field left blank, a
value calc cannot read); calc's own message is used for the second.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

from calc.errors import InputError
from calc.io.quantities import parse_measured
from calc.io.runfile import KINDS, REQUIRED_SECTIONS, SCHEMA
from calc.kinds import get_kind
from webapp.runs.entry_labels import (
    HINTS,
    LABELS,
    RESOLUTION_UNITS,
    SECTION_HINTS,
    SECTION_ORDER_FIRST,
    SECTION_ORDER_LAST,
    SECTION_TITLES,
    SPECIAL,
    UNITS,
)

#: each kind's title and what it measures (shown when choosing a kind; calc.kinds)
KIND_TITLES = {k: (get_kind(k).title, get_kind(k).summary) for k in KINDS}

_INT_RE = re.compile(r"\s*\d+\s*")


@dataclass(frozen=True)
class FormField:
    """One field of the form: where it goes in the run file and how it is entered.

    ``control`` is ``q`` (value ± u and unit), ``dq`` (value and unit), ``n`` (value ± u),
    ``s`` or ``f`` (text), ``i`` (whole number), ``long``, ``date``, ``period`` (start and
    end in s), or a select: ``calorimeter``, ``group``, ``reference``, ``method``.
    """

    section: str  # "" for the top-level fields
    name: str
    control: str
    unit: str | None
    required: bool
    label: str
    hint: str
    units: tuple[str, ...] = ()

    @property
    def key(self) -> str:
        """Return the dotted name (``water.volume``), which is also the form's input name."""
        return f"{self.section}.{self.name}" if self.section else self.name

    @property
    def input_name(self) -> str:
        """Return the name of the field's (first) input: the key, or ``calorimeter_id`` for the select."""
        return "calorimeter_id" if self.control == "calorimeter" else self.key

    @property
    def html_id(self) -> str:
        """Return the id of the field's first input."""
        return "f-" + re.sub(r"[^A-Za-z0-9]+", "-", self.key)


@dataclass(frozen=True)
class FormSection:
    """A fieldset: one run-file section (or the top-level timing fields)."""

    name: str
    title: str
    hint: str
    required: bool
    fields: tuple[FormField, ...]

    @property
    def html_id(self) -> str:
        """Return the fieldset's id."""
        return "s-" + (self.name or "timing")


def _field(section: str, name: str, spec: tuple[str, str | None, bool]) -> FormField:
    kind, unit, required = spec
    key = f"{section}.{name}" if section else name
    control = SPECIAL.get(key, kind)
    if key == "calorimeter.heat_capacity":
        required = False  # blank: the calibration in force (checked in check_values)
    units: tuple[str, ...] = ()
    if control == "q":
        units = UNITS.get(unit or "", (unit or "",))
    elif control == "dq":
        units = RESOLUTION_UNITS
    label = LABELS.get(name, name.replace("_", " ").capitalize())
    if key == "calorimeter.name":
        label = "Calorimeter"
    elif key == "info.group":
        label = "Group"
    elif key == "reference.name":
        label = "Reference value"
    hint = HINTS.get(key, "")
    return FormField(section, name, control, unit, required, label, hint, units)


def _top_fields() -> tuple[FormField, ...]:
    return (
        _field("", "mixing_time", ("q", "s", False)),
        FormField("", "method", "method", None, False, LABELS["method"], ""),
        FormField("", "fore_period", "period", "s", False, LABELS["fore_period"], HINTS["fore_period"]),
        FormField("", "after_period", "period", "s", False, LABELS["after_period"], HINTS["after_period"]),
        FormField(
            "", "temperature_column", "s", None, False, LABELS["temperature_column"], HINTS["temperature_column"]
        ),
    )


def form_sections(kind: str) -> list[FormSection]:
    """Return the fieldsets of the form of ``kind``, generated from the run-file schema.

    :raise KeyError: for an unknown kind
    """
    schema = SCHEMA[kind]
    required = REQUIRED_SECTIONS[kind]
    middle = [s for s in schema if s not in SECTION_ORDER_FIRST and s not in SECTION_ORDER_LAST]
    order = [s for s in SECTION_ORDER_FIRST if s in schema] + middle + list(SECTION_ORDER_LAST)
    out = []
    for name in order:
        if name == "":
            fields = _top_fields()
        elif name == "calorimeter":
            # the select first; a calibration run measures the heat capacity, so it has no field for it
            items = sorted(schema[name].items(), key=lambda kv: kv[0] != "name")
            fields = tuple(_field(name, f, spec) for f, spec in items if f != "heat_capacity" or name in required)
        elif name in schema:
            fields = tuple(_field(name, f, spec) for f, spec in schema[name].items())
        else:
            continue
        hint = SECTION_HINTS.get(name, "" if name in required or name in ("", "info") else "Optional section.")
        if name == "calorimeter" and name not in required:
            hint = "The calorimeter whose heat capacity this run measures: the result is added to its history."
            if not get_kind(kind).is_calibration:
                hint = (
                    "The calorimeter used (its type sets the plausible ranges); the heater in the log measures "
                    "the heat capacity of cup + solution."
                )
        out.append(
            FormSection(
                name, SECTION_TITLES.get(name, name.replace("_", " ").capitalize()), hint, name in required, fields
            )
        )
    return out


def input_names(sections: list[FormSection]) -> list[str]:
    """Return every input name the form posts."""
    names = []
    for sec in sections:
        for f in sec.fields:
            if f.control == "q" or f.control == "n":
                names += [f.key, f.key + ".u"] + ([f.key + ".unit"] if f.control == "q" else [])
            elif f.control == "dq":
                names += [f.key, f.key + ".unit"]
            elif f.control == "period":
                names += [f.key + ".start", f.key + ".end"]
            else:
                names.append(f.input_name)
    return names


def default_values(sections: list[FormSection], *, operator: str = "", date: str = "") -> dict[str, str]:
    """Return the values an empty form starts with: default units, the operator and the date."""
    values = {}
    for sec in sections:
        for f in sec.fields:
            if f.units:
                values[f.key + ".unit"] = f.units[0]
    values["info.operator"] = operator
    values["info.date"] = date
    return values


def _blank(values: Mapping[str, str], f: FormField) -> bool:
    if f.control == "period":
        return not (values.get(f.key + ".start", "").strip() or values.get(f.key + ".end", "").strip())
    return not values.get(f.input_name, "").strip()


def _section_used(sec: FormSection, values: Mapping[str, str]) -> bool:
    return sec.required or any(not _blank(values, f) for f in sec.fields)


def _measured_text(values: Mapping[str, str], f: FormField) -> str:
    value = values.get(f.key, "").strip()
    u = values.get(f.key + ".u", "").strip() if f.control in ("q", "n") else ""
    unit = values.get(f.key + ".unit", "").strip() if f.control in ("q", "dq") else ""
    text = f"{value} ± {u}" if u else value
    return f"{text} {unit}".strip()


def _example(f: FormField) -> str:
    if f.control in ("q", "dq"):
        unit = f.units[0] if f.units else (f.unit or "")
        return f"a value{' ± uncertainty' if f.control == 'q' else ''} in {unit}"
    if f.control == "f":
        return "a chemical formula such as KCl"
    if f.control == "i":
        return "a whole number"
    return "a value"


def check_values(kind: str, values: Mapping[str, str], *, calorimeter_chosen: bool) -> dict[str, str]:
    """Return the problems found before calc sees the run file: field key → message.

    A required field of a section in use left blank; a measured value calc cannot read
    (calc's message); a period with one end only. The whole file is checked by calc after.
    """
    errors: dict[str, str] = {}
    for sec in form_sections(kind):
        used = _section_used(sec, values)
        for f in sec.fields:
            blank = _blank(values, f)
            if blank:
                if used and f.required:
                    errors[f.key] = f"required: {_example(f)}"
                elif (
                    f.key == "calorimeter.heat_capacity"
                    and "calorimeter" in REQUIRED_SECTIONS[kind]
                    and not calorimeter_chosen
                ):
                    errors[f.key] = "give the heat capacity, or choose a calorimeter that has been calibrated"
                continue
            if f.control in ("q", "n", "dq"):
                expected = "" if f.control == "n" else ("K" if f.control == "dq" else (f.unit or ""))
                try:
                    parse_measured(_measured_text(values, f), field=f.key, expected=expected)
                except InputError as exc:
                    errors[f.key] = exc.message
            elif f.control == "period":
                ends = [values.get(f.key + ".start", "").strip(), values.get(f.key + ".end", "").strip()]
                if not all(ends):
                    errors[f.key] = "give both the start and the end, in seconds"
                elif not all(_is_number(e) for e in ends):
                    errors[f.key] = f"expected two times in seconds, got {ends[0]!r} and {ends[1]!r}"
    return errors


def _is_number(text: str) -> bool:
    try:
        return math.isfinite(float(text))
    except ValueError:
        return False


def toml_string(text: str) -> str:
    """Return ``text`` as a TOML basic string (quoted, control characters escaped)."""
    out = ['"']
    for ch in text:
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_value(values: Mapping[str, str], f: FormField) -> str:
    if f.control in ("q", "n", "dq"):
        return toml_string(_measured_text(values, f))
    if f.control == "period":
        a, b = values.get(f.key + ".start", "").strip(), values.get(f.key + ".end", "").strip()
        return f"[{toml_string(a + ' s')}, {toml_string(b + ' s')}]"
    text = values.get(f.key, "").strip()
    if (f.control == "i" or f.key == "temperature_column") and _INT_RE.fullmatch(text):
        return str(int(text))
    if f.control == "long":
        text = text.replace("\r\n", "\n")
    return toml_string(text)


def build_run_toml(
    kind: str, values: Mapping[str, str], *, readings_name: str, calorimeter_name: str | None = None
) -> str:
    """Return the run file (TOML text) the form's values describe.

    ``calorimeter_name`` is written as ``[calorimeter] name`` (the select posts an id).
    Blank fields are left out; a section is written when it is required or has a value.
    """
    if kind not in KINDS:
        raise KeyError(kind)
    sections = form_sections(kind)
    head = [f"kind = {toml_string(kind)}", f"readings = {toml_string(readings_name)}"]
    body: list[str] = []
    for sec in sections:
        lines = []
        for f in sec.fields:
            if f.key == "calorimeter.name":
                if calorimeter_name:
                    lines.append(f"name = {toml_string(calorimeter_name)}")
                continue
            if _blank(values, f):
                continue
            lines.append(f"{f.name} = {_toml_value(values, f)}")
        if sec.name == "":
            head += lines
        elif lines or (sec.required and sec.name != "calorimeter"):
            body += ["", f"[{sec.name}]", *lines]
    return "\n".join(head + body) + "\n"


def error_key(field: str | None, sections: list[FormSection]) -> str:
    """Return the form field a service error's ``field`` belongs to ("" when none fits)."""
    if not field:
        return ""
    aliases = {
        "fore": "fore_period",
        "after": "after_period",
        "calorimeter_id": "calorimeter.name",
        "group_id": "info.group",
        "readings": "readings",
    }
    if field in aliases:
        return aliases[field]
    keys = {f.key for sec in sections for f in sec.fields} | {sec.name for sec in sections if sec.name}
    return field if field in keys else ""
