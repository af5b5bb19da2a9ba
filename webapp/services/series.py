"""Series of repeat runs: mean, SD, u of the mean, t 95 % interval and the shared Type B part.

A series is either stored (a named list of runs) or formed on the fly from a group's runs of
one measurement (kind + reference). The statistics are :func:`calc.statistics.replicates.summarize_series`
of the runs' main results, combined with the non-averaging Type B part of the first run's
budget (:func:`calc.statistics.replicates.shared_type_b`: calorimeter heat capacity, solution heat
capacity, densities, concentrations, purity, ΔT method).
"""

from __future__ import annotations

import math
from collections import defaultdict
from types import SimpleNamespace
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.errors import InputError
from calc.statistics.replicates import SeriesSummary, shared_type_b, summarize_series
from webapp.jsonfields import attrs
from webapp.models import MAX_ID, Person, Result, Run, Series, SeriesRun
from webapp.services.access import can_view_run, require_coordinator
from webapp.services.errors import Invalid, NotFound

MAX_SERIES_RUNS = 500


def budget_lines(budget: list[dict[str, Any]]) -> list[SimpleNamespace]:
    """Return stored budget lines as objects with ``name``, ``contribution`` and ``dof``."""
    out = []
    for b in budget or []:
        dof = b.get("degrees_of_freedom")
        out.append(
            SimpleNamespace(
                name=b.get("input", ""),
                contribution=float(b.get("contribution") or 0.0),
                dof=math.inf if dof is None else float(dof),
            )
        )
    return out


def _finite_or_none(x: float) -> float | None:
    """Return ``x``, or None for an infinite degree of freedom (JSON has no infinity)."""
    return x if math.isfinite(x) else None


def _statistics_json(s: SeriesSummary) -> dict[str, Any]:
    """Return a series' statistics as JSON-ready data, in the order the pages list them."""
    return {
        **attrs(s, "n", "mean", "sd", "u_mean", "dof", "t95"),
        "ci95": list(s.ci95),
        "type_b_u": s.type_b_u,
        "type_b_dof": _finite_or_none(s.type_b_dof),
        "u_combined": s.u_combined,
        "dof_eff": _finite_or_none(s.dof_eff),
        **attrs(s, "k", "U"),
    }


def _main(result: Result) -> tuple[float | None, str]:
    if result.main == "molar_enthalpy":
        return result.molar_enthalpy_kj_mol, "kJ/mol"
    return result.calorimeter_heat_capacity_j_k, "J/K"


def summarize_runs(
    runs: list[tuple[Run, Result]], *, first_budget: list[dict[str, Any]] | None = None
) -> dict[str, Any]:
    """Return the series statistics of runs with their current results (at least 2, one kind).

    ``first_budget``: the first run's budget when the caller has read it already (else it is loaded).
    """
    if len(runs) < 2:
        raise Invalid(f"a series needs at least 2 runs with a result, got {len(runs)}", field="run_ids")
    kinds = {res.main for _run, res in runs}
    if len(kinds) > 1:
        raise Invalid("the runs of a series must give the same quantity (all ΔH or all C_cal)", field="run_ids")
    values, unit = [], ""
    for _run, res in runs:
        v, unit = _main(res)
        if v is None:
            raise Invalid(f"run {_run.id} has no value of its main result", field="run_ids")
        values.append(v)
    ub, nub = shared_type_b(budget_lines(runs[0][1].budget if first_budget is None else first_budget))
    try:
        s = summarize_series(values, type_b_u=ub, type_b_dof=nub)
    except InputError as exc:
        raise Invalid(str(exc), field="run_ids") from None
    return {
        "unit": unit,
        "run_ids": [r.id for r, _ in runs],
        "values": values,
        **_statistics_json(s),
    }


def _current(session: so.Session, run_ids: list[int]) -> list[tuple[Run, Result]]:
    rows = session.execute(
        sa.select(Run, Result)
        .join(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
        .where(Run.id.in_(run_ids))
        .options(so.undefer(Result.budget))
        .order_by(Run.created_at, Run.id)
    ).all()
    return [(r, res) for r, res in rows]


def create_series(session: so.Session, actor: Person, *, name: str, run_ids: list[int], notes: str = "") -> Series:
    """Store a named series of runs (coordinators) and commit; the runs must form a valid series."""
    require_coordinator(actor, "make series")
    name = (name or "").strip()
    if not name or len(name) > 200:
        raise Invalid("expected a name of 1 to 200 characters", field="name")
    if not isinstance(run_ids, list) or not all(isinstance(i, int) and not isinstance(i, bool) for i in run_ids):
        raise Invalid("expected a list of run ids", field="run_ids")
    if not all(0 < i <= MAX_ID for i in run_ids):
        raise Invalid(f"expected run ids from 1 to {MAX_ID}", field="run_ids")
    ids = sorted(set(run_ids))
    if len(ids) > MAX_SERIES_RUNS:
        raise Invalid(f"at most {MAX_SERIES_RUNS} runs in a series", field="run_ids")
    runs = _current(session, ids)
    missing = sorted(set(ids) - {r.id for r, _ in runs})
    if missing:
        raise Invalid(f"no run with a result: {', '.join(map(str, missing))}", field="run_ids")
    summarize_runs(runs)
    series = Series(name=name, notes=notes or "", created_by=actor, members=[SeriesRun(run_id=i) for i in ids])
    session.add(series)
    session.commit()
    return series


def series_summary(session: so.Session, actor: Person, series_id: int) -> dict[str, Any]:
    """Return a stored series with its statistics (runs ``actor`` may not see make it not found)."""
    series = session.get(Series, series_id)
    if series is None:
        raise NotFound(f"no series with id {series_id}")
    runs = _current(session, [m.run_id for m in series.members])
    if not all(can_view_run(actor, r) for r, _ in runs):
        raise NotFound(f"no series with id {series_id}")
    return {"id": series.id, "name": series.name, "notes": series.notes, **summarize_runs(runs)}


def group_series(rows: list[Any], session: so.Session | None = None) -> list[dict[str, Any]]:
    """Return the on-the-fly series of each group and measurement with 2 or more runs (dashboard rows).

    Computed from the rows alone (their values and the first run's shared Type B part), so no
    run is loaded again; ``session`` is accepted for symmetry and not used.
    """
    cells: dict[tuple[str, str], list[Any]] = defaultdict(list)
    for r in rows:
        if r.value is not None and getattr(r, "included", True) and not getattr(r, "excluded", False):
            cells[(r.group, r.measurement)].append(r)
    out = []
    for (group, meas), members in sorted(cells.items()):
        if len(members) < 2:
            continue
        members = sorted(members, key=lambda m: m.run_id)
        ub, nub = members[0].type_b
        try:
            s = summarize_series([m.value for m in members], type_b_u=ub, type_b_dof=nub)
        except InputError:
            continue
        out.append(
            {
                "group": group,
                "measurement": meas,
                "unit": members[0].unit,
                "run_ids": [m.run_id for m in members],
                "values": [m.value for m in members],
                **_statistics_json(s),
            }
        )
    return out
