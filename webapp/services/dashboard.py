"""The class dashboard: every run of a section (or a course) with flags, feedback and statistics.

Nothing is analysed again: the flags come from what each analysis stored (its result's
warnings, comparison, budget and ΔT, the run's thermometer resolution and its calibration).
Results are compared within one *measurement*: the same kind and the same reference value
(e.g. "dissolution · KCl dissolution, infinite dilution").

Flags (each with a plain message):

* ``En``: |E_n| > 1 against the reference (ISO 13528; the adjusted E_n when the reference was
  carried to the run's conditions).
* ``outlier``: the most distant result of its measurement within the section by Grubbs'
  two-sided test at α = 0.05 (:func:`calc.stats.grubbs`; one test per section and measurement,
  at least 3 results).
* ``small-dT``: |ΔT| under 10 × the thermometer resolution.
* ``drift``: the analysis warned of large drift.
* ``short-after``: the analysis warned of a short after period or a log that ends too soon.
* ``no-calibration``: the run needed C_cal, took it from its own file, and its calorimeter had
  no calibration on record at the run's time (or the run names no calorimeter).
"""

from __future__ import annotations

import dataclasses
import math
import threading
from collections import Counter
from collections import defaultdict
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so
from calc import formatting as fmt
from calc.errors import InputError
from calc.replicates import shared_type_b
from calc.stats import grubbs
from calc.stats import iso5725

from webapp.models import Calibration
from webapp.models import Group
from webapp.models import Person
from webapp.models import Result
from webapp.models import Run
from webapp.models import RunInput
from webapp.models import Section
from webapp.services.analysis import NEEDS_HEAT_CAPACITY
from webapp.services.classes import get_course
from webapp.services.classes import get_section
from webapp.services.classes import require_staff
from webapp.services.errors import Invalid
from webapp.services.series import budget_lines

FLAGS: dict[str, str] = {
    "En": "|En| > 1 against the reference",
    "outlier": "Grubbs outlier in the section (α = 0.05)",
    "small-dT": "|ΔT| under 10 × the thermometer resolution",
    "drift": "large drift",
    "short-after": "short after period",
    "no-calibration": "no calibration of the calorimeter on record",
}
SORT_KEYS = ("group", "run", "value", "uncertainty", "en", "delta_t", "flags", "section")
GRUBBS_ALPHA = 0.05


@dataclasses.dataclass
class Row:
    """One run on the dashboard."""

    run_id: int
    title: str
    kind: str
    section_id: int | None
    section: str
    group: str
    bench: str
    measurement: str
    unit: str
    value: float | None
    u: float | None
    U: float | None
    delta_t: float
    resolution: float | None
    en: float | None
    reference: float | None
    reference_U: float | None = None
    flags: list[str] = dataclasses.field(default_factory=list)
    notes: dict[str, str] = dataclasses.field(default_factory=dict)
    top_input: str = ""
    top_label: str = ""
    top_share: float = 0.0
    #: shared (non-averaging) Type B part of this run's budget and its degrees of freedom
    type_b: tuple[float, float] = (0.0, math.inf)


@dataclasses.dataclass
class Stats:
    """Statistics of one measurement: mean, SD and the ISO 5725-2 precision between groups."""

    measurement: str
    unit: str
    n: int
    groups: int
    mean: float
    sd: float | None
    s_r: float | None = None
    s_L: float | None = None
    s_R: float | None = None
    r: float | None = None
    R: float | None = None
    note: str = ""
    reference: float | None = None
    reference_U: float | None = None


@dataclasses.dataclass
class Dashboard:
    """Rows (sorted), statistics per measurement, feedback per group, flag counts."""

    title: str
    rows: list[Row]
    stats: list[Stats]
    feedback: dict[str, list[str]]
    flag_counts: dict[str, int]
    sort: str
    descending: bool


def _unit(main: str) -> str:
    return "kJ/mol" if main == "molar_enthalpy" else "J/K"


def _query(section_ids: list[int]) -> sa.Select[Any]:
    res_in = sa.orm.aliased(RunInput)
    return (
        sa.select(
            Run.id, Run.title, Run.kind, Run.bench, Run.calibration_id, Run.calorimeter_id, Run.created_at,
            Group.name, Group.section_id, Result.main, Result.molar_enthalpy_kj_mol, Result.molar_enthalpy_kj_mol_std,
            Result.calorimeter_heat_capacity_j_k, Result.calorimeter_heat_capacity_j_k_std,
            Result.expanded_uncertainty, Result.corrected_delta_t_k, Result.warnings, Result.comparison,
            Result.id, Result.created_at, res_in.value,
        )
        .join(Group, Group.id == Run.group_id)
        .join(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
        .outerjoin(res_in, sa.and_(res_in.run_id == Run.id, res_in.field == "thermometer.resolution"))
        .where(Group.section_id.in_(section_ids))
    )


def _first_calibrations(session: so.Session, calorimeter_ids: set[int]) -> dict[int, Any]:
    if not calorimeter_ids:
        return {}
    rows = session.execute(
        sa.select(Calibration.calorimeter_id, sa.func.min(Calibration.taken_at))
        .where(Calibration.calorimeter_id.in_(calorimeter_ids))
        .group_by(Calibration.calorimeter_id)
    ).all()
    return {cid: when for cid, when in rows}


def _measurement(kind: str, comparison: dict[str, Any] | None) -> str:
    ref = (comparison or {}).get("reference") or {}
    name = ref.get("name") if isinstance(ref, dict) else None
    return f"{kind} · {name}" if name else kind


#: (database, result id, its time) → (shared Type B part, largest budget line): a result's budget never
#: changes (a new analysis is a new result), so the dashboard reads each budget once per process
_DIGESTS: dict[tuple[str, int, Any], tuple[tuple[float, float], tuple[str, str, float]]] = {}
_DIGESTS_MAX = 20000
_DIGESTS_LOCK = threading.Lock()


def _digest(budget: list[Any] | None) -> tuple[tuple[float, float], tuple[str, str, float]]:
    lines = [b for b in (budget or []) if isinstance(b, dict) and b.get("share") is not None]
    top = max(lines, key=lambda b: b["share"]) if lines else None
    largest = (top.get("input", ""), top.get("label", ""), float(top["share"])) if top else ("", "", 0.0)
    return shared_type_b(budget_lines(lines)), largest


def _budget_digests(session: so.Session, keys: list[tuple[int, Any]]
                    ) -> dict[tuple[int, Any], tuple[tuple[float, float], tuple[str, str, float]]]:
    """Return the budget digest of each (result id, created at), reading only budgets not seen before."""
    db = str(session.get_bind().url)
    with _DIGESTS_LOCK:
        out = {k: _DIGESTS[(db, *k)] for k in keys if (db, *k) in _DIGESTS}
    missing = [k for k in keys if k not in out]
    for start in range(0, len(missing), 500):
        chunk = {rid: at for rid, at in missing[start:start + 500]}
        for rid, budget in session.execute(sa.select(Result.id, Result.budget).where(Result.id.in_(chunk))):
            out[(rid, chunk[rid])] = _digest(budget)
    with _DIGESTS_LOCK:
        if len(_DIGESTS) + len(missing) > _DIGESTS_MAX:
            _DIGESTS.clear()
        _DIGESTS.update({(db, *k): out[k] for k in missing if k in out})
    return out


def collect_rows(session: so.Session, sections: list[Section]) -> list[Row]:
    """Return the dashboard rows of the current results of the sections' runs, flags set."""
    names = {s.id: s.name for s in sections}
    raw = session.execute(_query(list(names))).all()
    first_cal = _first_calibrations(session, {r[5] for r in raw if r[5] is not None})
    rows: list[Row] = []
    digests = _budget_digests(session, [(r[18], r[19]) for r in raw])
    for (rid, title, kind, bench, cal_id, calo_id, created, gname, sid, main, h, hu, c, cu, U, dT, warnings,
         comparison, result_id, result_at, resolution) in raw:
        value, u = (h, hu) if main == "molar_enthalpy" else (c, cu)
        comp = comparison or {}
        en = comp.get("En_adjusted") if comp.get("En_adjusted") is not None else comp.get("En")
        ref = comp.get("reference") or {}
        refv = comp.get("adjusted_reference") if comp.get("adjusted_reference") is not None else ref.get("value")
        row = Row(rid, title, kind, sid, names.get(sid, ""), gname, bench or "", _measurement(kind, comp),
                  _unit(main), value, u, U, dT, resolution, en, refv, comp.get("U_reference"))
        if en is not None and abs(en) > 1:
            row.flags.append("En")
            row.notes["En"] = f"En = {en:+.2f}: the result and the reference differ by more than their uncertainties allow"
        if resolution is not None and abs(dT) < 10 * resolution:
            row.flags.append("small-dT")
            row.notes["small-dT"] = f"|ΔT| = {fmt.number(abs(dT), 'K')} is under 10 × the resolution {fmt.number(resolution, 'K', trim=True)}"
        for w in warnings or []:
            if w.startswith("large drift") and "drift" not in row.flags:
                row.flags.append("drift")
                row.notes["drift"] = w
            if ("after period is short" in w or "log ends too soon" in w) and "short-after" not in row.flags:
                row.flags.append("short-after")
                row.notes["short-after"] = w
        if kind in NEEDS_HEAT_CAPACITY and cal_id is None:
            first = first_cal.get(calo_id) if calo_id is not None else None
            if first is None or first > created:
                row.flags.append("no-calibration")
                row.notes["no-calibration"] = ("the calorimeter's heat capacity came from the run file, and "
                                               + ("no calorimeter is named" if calo_id is None else
                                                  "the calorimeter had no calibration on record"))
        row.type_b, (row.top_input, row.top_label, row.top_share) = digests[(result_id, result_at)]
        rows.append(row)
    _grubbs_flags(rows)
    return rows


def _grubbs_flags(rows: list[Row]) -> None:
    cells: dict[tuple[Any, str], list[Row]] = defaultdict(list)
    for r in rows:
        if r.value is not None:
            cells[(r.section_id, r.measurement)].append(r)
    for members in cells.values():
        if len(members) < 3:
            continue
        g = grubbs([m.value for m in members], alpha=GRUBBS_ALPHA)
        if g.is_outlier:
            m = members[g.index]
            m.flags.append("outlier")
            m.notes["outlier"] = (f"G = {g.G:.2f} > G_crit = {g.G_crit:.2f} among {g.n} results "
                                  f"(section mean {fmt.number(g.mean, m.unit, digits=4)})")


def statistics(rows: list[Row]) -> list[Stats]:
    """Return the statistics of each measurement (most results first)."""
    by: dict[str, list[Row]] = defaultdict(list)
    for r in rows:
        if r.value is not None:
            by[r.measurement].append(r)
    out: list[Stats] = []
    for meas, members in sorted(by.items(), key=lambda kv: -len(kv[1])):
        vals = [m.value for m in members]
        n = len(vals)
        mean = sum(vals) / n
        sd = math.sqrt(sum((v - mean) ** 2 for v in vals) / (n - 1)) if n > 1 else None
        cells: dict[tuple[Any, str], list[float]] = defaultdict(list)
        for m in members:
            cells[(m.section_id, m.group)].append(m.value)
        st = Stats(meas, members[0].unit, n, len(cells), mean, sd)
        refs = Counter(m.reference for m in members if m.reference is not None)
        if refs:
            st.reference = refs.most_common(1)[0][0]
            st.reference_U = next((m.reference_U for m in members if m.reference == st.reference), None)
        try:
            p = iso5725(list(cells.values()))
            st.s_r, st.s_L, st.s_R, st.r, st.R = p.s_r, p.s_L, p.s_R, p.r, p.R
        except InputError as exc:
            st.note = f"no repeatability/reproducibility: {exc}"
        out.append(st)
    return out


_ADVICE: list[tuple[str, str]] = [
    ("calorimeter.heat_capacity", "calibrate the cup yourself (an electrical or mixing calibration, repeated) so its "
                                  "heat capacity is known better, or use more solution so the cup takes a smaller share of the heat"),
    ("delta_t.fit", "record steady fore and after periods (3–5 minutes before mixing, 5–10 minutes after), keep the lid on "
                    "and stir at a constant rate, so the drift lines are well defined"),
    ("delta_t.resolution", "use a thermometer with a finer resolution, or more substance for a larger temperature change"),
    ("delta_t.mixing_time", "note the exact time you add the substance (or pour), and add it in one go"),
    ("delta_t.method", "keep the temperature change moderate and the log long enough after the change"),
    ("mixture.specific_heat_capacity", "give the solution's specific heat capacity with a smaller uncertainty "
                                       "(a measured value, or leave it out so the property model supplies it)"),
    ("mass", "weigh on a balance with a finer reading, or use a larger sample"),
    ("volume", "measure the volumes with a volumetric pipette or a burette instead of a measuring cylinder"),
    ("concentration", "use standardised solutions and state their concentration with its uncertainty"),
    ("density", "give the densities with a smaller uncertainty (or leave them to the property models)"),
    ("purity", "use a purer reagent or state its purity from the supplier's certificate"),
    ("heater", "measure the heater's voltage, current and time with better meters"),
    ("temperature", "read the second solution's temperature with the same calibrated thermometer just before pouring"),
]
_FLAG_ADVICE = {
    "En": "Your result differs from the reference value by more than the uncertainties explain (|En| > 1): check the "
          "masses, volumes and calorimeter constant you entered, and look for heat lost before the lid was on.",
    "outlier": "One of your results lies far from the rest of the section (Grubbs test): look for a mistake in that run "
               "before repeating it.",
    "small-dT": "Your temperature change was under 10 × the thermometer's resolution: use more substance or a finer "
                "thermometer.",
    "drift": "The temperature drifted strongly before or after the change: let the solutions reach room temperature "
             "first, use the lid and check that the stirrer does not heat.",
    "short-after": "The log after the change was too short: keep recording for at least 5 minutes after the temperature "
                   "has settled.",
    "no-calibration": "The calorimeter you used has no calibration on record: calibrate it (or have it calibrated) and "
                      "name it in the run file.",
}


def _advice(name: str) -> str:
    for key, text in _ADVICE:
        if name == key or name.startswith(key) or name.endswith("." + key) or key in name.split(".")[-1]:
            return text
    return "give this input with a smaller uncertainty"


def group_feedback(rows: list[Row]) -> dict[str, list[str]]:
    """Return plain-words feedback per group from its runs' budgets and flags."""
    by: dict[str, list[Row]] = defaultdict(list)
    for r in rows:
        by[r.group].append(r)
    out: dict[str, list[str]] = {}
    for group, members in sorted(by.items()):
        lines: list[str] = []
        tops = Counter(m.top_input for m in members if m.top_input)
        if tops:
            name, count = tops.most_common(1)[0]
            ex = next(m for m in members if m.top_input == name)
            shares = [m.top_share for m in members if m.top_input == name]
            lines.append(
                f"In {count} of your {len(members)} run(s) the largest part of the uncertainty came from the "
                f"{ex.top_label or name} (about {100 * sum(shares) / len(shares):.0f} % of the variance). "
                f"Next time: {_advice(name)}.")
        flags = Counter(f for m in members for f in m.flags)
        for flag in FLAGS:
            if flags.get(flag):
                runs = ", ".join(f"#{m.run_id}" for m in members if flag in m.flags)
                lines.append(f"{_FLAG_ADVICE[flag]} (run {runs})")
        if not flags:
            lines.append("No flags: your runs agree with the reference and with the section.")
        out[group] = lines
    return out


def _sort_key(sort: str):  # type: ignore[no-untyped-def]
    def num(x: float | None) -> tuple[int, float]:
        return (1, 0.0) if x is None else (0, x)

    return {
        "group": lambda r: (r.group.lower(), r.run_id),
        "section": lambda r: (r.section.lower(), r.group.lower(), r.run_id),
        "run": lambda r: r.run_id,
        "value": lambda r: num(r.value),
        "uncertainty": lambda r: num(r.U),
        "en": lambda r: num(abs(r.en) if r.en is not None else None),
        "delta_t": lambda r: abs(r.delta_t),
        "flags": lambda r: (len(r.flags), r.run_id),
    }[sort]


def _build(title: str, rows: list[Row], sort: str, descending: bool) -> Dashboard:
    if sort not in SORT_KEYS:
        raise Invalid(f"unknown sort key {sort!r}; expected one of: {', '.join(SORT_KEYS)}", field="sort")
    rows.sort(key=_sort_key(sort), reverse=descending)
    counts = Counter(f for r in rows for f in r.flags)
    return Dashboard(title, rows, statistics(rows), group_feedback(rows), {f: counts.get(f, 0) for f in FLAGS},
                     sort, descending)


def section_dashboard(session: so.Session, actor: Person, section_id: int, *, sort: str = "group",
                      descending: bool = False) -> Dashboard:
    """Return the dashboard of a section (students: only their own section)."""
    section = get_section(session, actor, section_id)
    title = f"{section.course.name} · {section.name}"
    return _build(title, collect_rows(session, [section]), sort, descending)


def course_dashboard(session: so.Session, actor: Person, course_id: int, *, sort: str = "section",
                     descending: bool = False) -> Dashboard:
    """Return the dashboard of a whole course (coordinators and technicians); Grubbs stays per section."""
    require_staff(actor, "see a whole course's dashboard")
    course = get_course(session, course_id)
    sections = list(session.scalars(sa.select(Section).where(Section.course_id == course.id)))
    return _build(course.name, collect_rows(session, sections), sort, descending)
