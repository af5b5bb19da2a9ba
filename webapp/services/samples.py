"""Replicates for the chemist: the runs of each sample (lot), with mean, t-interval and ν_eff.

A sample's series is the runs that name it in ``[info] sample`` and give the same quantity
(all ΔH or all C_cal, one kind), with their current results; the statistics are
:func:`webapp.services.series.summarize_runs` (calc.statistics.replicates), so the dashboard, the API
and this page agree.
"""

from __future__ import annotations

import dataclasses
from collections import defaultdict
from types import SimpleNamespace
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Person, Result, Run
from webapp.services.access import visible_runs_clause
from webapp.services.errors import Invalid
from webapp.services.series import summarize_runs

MAX_SAMPLE_LENGTH = 200


@dataclasses.dataclass
class SampleSeries:
    """One sample and kind: its runs (newest last) and, from two runs on, the statistics."""

    sample: str
    kind: str
    runs: list[tuple[Any, Any]]  # (run, result): id, title, sample, kind; id, main, values, U
    stats: dict[str, Any] | None
    problem: str = ""


def sample_series(session: so.Session, actor: Person, *, sample: str = "") -> list[SampleSeries]:
    """Return every sample's series that ``actor`` may see (or only ``sample``), sorted by sample."""
    if len(sample) > MAX_SAMPLE_LENGTH:
        raise Invalid(f"the sample is {len(sample)} characters long (at most {MAX_SAMPLE_LENGTH})", field="sample")
    # plain columns, not whole rows: the page needs a few numbers of each run, and it lists hundreds
    q = (
        sa.select(
            Run.id,
            Run.title,
            Run.sample,
            Run.kind,
            Result.id,
            Result.main,
            Result.molar_enthalpy_kj_mol,
            Result.calorimeter_heat_capacity_j_k,
            Result.expanded_uncertainty,
        )
        .join(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
        .where(visible_runs_clause(actor), Run.sample != "")
        .order_by(Run.sample, Run.kind, Run.created_at, Run.id)
    )
    if sample:
        q = q.where(Run.sample == sample)
    cells: dict[tuple[str, str], list[tuple[Any, Any]]] = defaultdict(list)
    for rid, title, name, kind, res_id, main, h, c, U in session.execute(q).all():
        run = SimpleNamespace(id=rid, title=title, sample=name, kind=kind)
        res = SimpleNamespace(
            id=res_id, main=main, molar_enthalpy_kj_mol=h, calorimeter_heat_capacity_j_k=c, expanded_uncertainty=U
        )
        cells[(name, kind)].append((run, res))
    firsts = [members[0][1].id for members in cells.values() if len(members) >= 2]
    budgets = (
        dict(session.execute(sa.select(Result.id, Result.budget).where(Result.id.in_(firsts))).all()) if firsts else {}
    )
    out = []
    for (name, kind), members in cells.items():
        stats, problem = None, ""
        if len(members) >= 2:
            try:
                stats = summarize_runs(members, first_budget=budgets.get(members[0][1].id) or [])
            except Invalid as exc:
                problem = exc.message
        else:
            problem = "one run: a mean and interval need at least two"
        out.append(SampleSeries(name, kind, members, stats, problem))
    return out
