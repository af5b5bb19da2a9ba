"""The rows of the class dashboard: each current result of a section's runs, with its flags.

Nothing is analyzed again: the flags come from what each analysis stored (its result's
warnings, comparison, budget and ΔT, the run's thermometer resolution and its calibration).
Results are compared within one *measurement*: the same kind and the same reference value
(e.g. "dissolution · KCl dissolution, infinite dilution").

Flags (each with a plain message):

* ``En``: |E_n| > 1 in the run's one verdict (:func:`calc.refdata.comparison.verdict`: against the reference
  carried to the run's conditions where cupcal can carry it, else against the value as published).
* ``outlier``: the most distant result of its measurement within the section by Grubbs'
  two-sided test at α = 0.05 (:func:`calc.statistics.precision.grubbs`; one test per section and measurement,
  at least 3 results).
* ``small-dT``: |ΔT| under 10 × the thermometer resolution.
* ``drift``: the analysis warned of large drift.
* ``short-after``: the analysis warned of a short after period or a log that ends too soon.
* ``no-calibration``: the run needed C_cal, took it from its own file, and its calorimeter had
  no calibration on record at the run's time (or the run names no calorimeter).
* ``overdue``: the heat capacity the run used was measured more than the calorimeter's interval
  (default :data:`DUE_DAYS` days) before the run's date.

The dashboard itself (statistics, sorting, feedback) is :mod:`webapp.services.dashboard`.
"""

from __future__ import annotations

import dataclasses
import math
import threading
from collections import defaultdict
from types import SimpleNamespace
from typing import Any, NamedTuple

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc import formatting as fmt
from calc.refdata.comparison import verdict
from calc.statistics.precision import grubbs
from calc.statistics.replicates import shared_type_b
from webapp.models import Calibration, Group, Result, Run, RunInput, RunReview, Section
from webapp.services.analysis import NEEDS_HEAT_CAPACITY
from webapp.services.checks import flag_text
from webapp.services.marks import run_mark, scheme_of
from webapp.services.review import included_in_statistics, run_flagged
from webapp.services.series import budget_lines

#: days a calibration stays valid when the calorimeter sets no interval (the notebook's default)
DUE_DAYS = 30
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
    #: the one verdict against the reference (calc.refdata.comparison.verdict), None without a reference
    verdict: Any = None
    #: counts in statistics and marks (services.review.included_in_statistics)
    included: bool = True
    #: "withdrawn", "excluded" or "" (with the reason given)
    status: str = ""
    status_reason: str = ""
    #: the mark (services.marks.Mark) and the group's id
    mark: Any = None
    group_id: int | None = None


def _unit(main: str) -> str:
    return "kJ/mol" if main == "molar_enthalpy" else "J/K"


def _query(section_ids: list[int]) -> sa.Select[Any]:
    res_in = sa.orm.aliased(RunInput)
    return (
        sa.select(
            Run.id,
            Run.title,
            Run.kind,
            Run.bench,
            Run.calibration_id,
            Run.calorimeter_id,
            Run.created_at,
            Group.name,
            Group.section_id,
            Result.main,
            Result.molar_enthalpy_kj_mol,
            Result.molar_enthalpy_kj_mol_std,
            Result.calorimeter_heat_capacity_j_k,
            Result.calorimeter_heat_capacity_j_k_std,
            Result.expanded_uncertainty,
            Result.corrected_delta_t_k,
            Result.warnings,
            Result.comparison,
            Result.id,
            Result.created_at,
            res_in.value,
            RunReview.withdrawn,
            RunReview.withdrawn_reason,
            RunReview.excluded,
            RunReview.excluded_reason,
            RunReview.accepted,
            RunReview.mark_points,
            RunReview.mark_reason,
            Group.id,
            included_in_statistics().label("included"),
            Result.checks,
        )
        .outerjoin(RunReview, RunReview.run_id == Run.id)
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


def measurement_name(kind: str, comparison: dict[str, Any] | None) -> str:
    """Return what a result measures: its kind and its reference's name, without the published state.

    The state (", infinite dilution") is left out because the verdict is judged at each run's own
    conditions where cupcal can carry the reference there; the published value is context.
    """
    ref = (comparison or {}).get("reference") or {}
    name = ref.get("name") if isinstance(ref, dict) else None
    if isinstance(name, str):
        name = name.replace(", infinite dilution", "")
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


def _budget_digests(
    session: so.Session, keys: list[tuple[int, Any]]
) -> dict[tuple[int, Any], tuple[tuple[float, float], tuple[str, str, float]]]:
    """Return the budget digest of each (result id, created at), reading only budgets not seen before."""
    db = str(session.get_bind().url)
    with _DIGESTS_LOCK:
        out = {k: _DIGESTS[(db, *k)] for k in keys if (db, *k) in _DIGESTS}
    missing = [k for k in keys if k not in out]
    for start in range(0, len(missing), 500):
        chunk = {rid: at for rid, at in missing[start : start + 500]}
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
    raw = [_Raw(*r) for r in session.execute(_query(list(names))).all()]
    schemes = {sid: scheme_of(session, sid)[0] for sid in names}
    first_cal = _first_calibrations(session, {r.calorimeter_id for r in raw if r.calorimeter_id is not None})
    rows: list[Row] = []
    digests = _budget_digests(session, [(r.result_id, r.result_at) for r in raw])
    for r in raw:
        row = _row(r, names, schemes[r.section_id])
        _flag(row, r, first_cal)
        row.type_b, (row.top_input, row.top_label, row.top_share) = digests[(r.result_id, r.result_at)]
        rows.append(row)
    _overdue_flags(session, rows)
    _grubbs_flags(rows)
    return rows


class _Raw(NamedTuple):
    """One row of :func:`_query`, by name (the columns in the query's order)."""

    run_id: int
    title: str
    kind: str
    bench: str | None
    calibration_id: int | None
    calorimeter_id: int | None
    created: Any
    group_name: str
    section_id: int
    main: str
    h: float | None
    hu: float | None
    c: float | None
    cu: float | None
    U: float | None
    delta_t: float
    warnings: list[str] | None
    comparison: dict[str, Any] | None
    result_id: int
    result_at: Any
    resolution: float | None
    withdrawn: bool | None
    withdrawn_reason: str | None
    excluded: bool | None
    excluded_reason: str | None
    accepted: bool | None
    mark_points: float | None
    mark_reason: str | None
    group_id: int
    included: bool
    checks: Any


def _row(r: _Raw, names: dict[int, str], scheme: dict[str, Any]) -> Row:
    """Return the row of one result: value, verdict, review status and mark (no flags yet)."""
    value, u = (r.h, r.hu) if r.main == "molar_enthalpy" else (r.c, r.cu)
    comp = r.comparison or {}
    vd = verdict(comp)
    en = vd.En if vd is not None else None
    row = Row(
        r.run_id,
        r.title,
        r.kind,
        r.section_id,
        names.get(r.section_id, ""),
        r.group_name,
        r.bench or "",
        measurement_name(r.kind, comp),
        _unit(r.main),
        value,
        u,
        r.U,
        r.delta_t,
        r.resolution,
        en,
        vd.reference if vd else None,
        vd.U_reference if vd else None,
    )
    row.verdict = vd
    row.included = bool(r.included)
    if r.withdrawn:
        row.status, row.status_reason = "withdrawn", r.withdrawn_reason or ""
    elif r.excluded:
        row.status, row.status_reason = "excluded", r.excluded_reason or ""
    row.group_id = r.group_id
    row.mark = run_mark(
        scheme,
        vd,
        included=row.included,
        status=row.status,
        override=r.mark_points,
        override_reason=r.mark_reason or "",
    )
    return row


def _flag(row: Row, r: _Raw, first_cal: dict[int, Any]) -> None:
    """Set the flags a result's stored analysis calls for (all but ``overdue`` and ``outlier``)."""
    vd, dT, resolution = row.verdict, r.delta_t, r.resolution
    if run_flagged(SimpleNamespace(checks=r.checks)) and not r.accepted:
        row.flags.append("check")
        row.notes["check"] = flag_text(r.checks) + " (left out of the statistics until staff accept it)"
        row.included = False
    if vd is not None and not vd.satisfactory:
        row.flags.append("En")
        row.notes["En"] = (
            f"E_n = {row.en:+.2f} against the {vd.label}: the result and the reference differ by more "
            "than their uncertainties allow"
        )
    if resolution is not None and abs(dT) < 10 * resolution:
        row.flags.append("small-dT")
        row.notes["small-dT"] = (
            f"|ΔT| = {fmt.number(abs(dT), 'K')} is under 10 × the resolution {fmt.number(resolution, 'K', trim=True)}"
        )
    for w in r.warnings or []:
        if w.startswith("large drift") and "drift" not in row.flags:
            row.flags.append("drift")
            row.notes["drift"] = w
        if ("after period is short" in w or "log ends too soon" in w) and "short-after" not in row.flags:
            row.flags.append("short-after")
            row.notes["short-after"] = w
    if r.kind in NEEDS_HEAT_CAPACITY and r.calibration_id is None:
        calo_id = r.calorimeter_id
        first = first_cal.get(calo_id) if calo_id is not None else None
        if first is None or first > r.created:
            row.flags.append("no-calibration")
            row.notes["no-calibration"] = "the calorimeter's heat capacity came from the run file, and " + (
                "no calorimeter is named" if calo_id is None else "the calorimeter had no calibration on record"
            )


def _overdue_flags(session: so.Session, rows: list[Row]) -> None:
    from webapp.models import Calibration, Calorimeter
    from webapp.services.calibrations import measured_at, overdue_note

    by_id = {r.run_id: r for r in rows}
    if not by_id:
        return
    q = (
        sa.select(Run, Calibration, Calorimeter)
        .join(Calibration, Run.calibration_id == Calibration.id)
        .outerjoin(Calorimeter, Run.calorimeter_id == Calorimeter.id)
        .where(Run.id.in_(list(by_id)))
    )
    for run, cal, calo in session.execute(q):
        note = overdue_note(measured_at(run).date(), cal, calo, DUE_DAYS)
        if note:
            by_id[run.id].flags.append("overdue")
            by_id[run.id].notes["overdue"] = note


def _grubbs_flags(rows: list[Row]) -> None:
    cells: dict[tuple[Any, str], list[Row]] = defaultdict(list)
    for r in rows:
        if r.value is not None and r.included:
            cells[(r.section_id, r.measurement)].append(r)
    for members in cells.values():
        if len(members) < 3:
            continue
        g = grubbs([m.value for m in members], alpha=GRUBBS_ALPHA)
        if g.is_outlier:
            m = members[g.index]
            m.flags.append("outlier")
            m.notes["outlier"] = (
                f"G = {g.G:.2f} > G_crit = {g.G_crit:.2f} among {g.n} results "
                f"(section mean {fmt.number(g.mean, m.unit, digits=4)})"
            )
