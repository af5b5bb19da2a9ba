"""Replicates for the chemist: the runs of each sample (lot), with mean, t-interval and ν_eff.

A sample's series is the runs that name it in ``[info] sample`` and give the same quantity
(all ΔH or all C_cal, one kind), with their current results; the statistics are
:func:`webapp.services.series.summarise_runs` (calc.replicates), so the dashboard, the API
and this page agree.
"""

from __future__ import annotations

import dataclasses
from collections import defaultdict
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Person, Result, Run
from webapp.services.access import visible_runs_clause
from webapp.services.errors import Invalid
from webapp.services.series import summarise_runs

MAX_SAMPLE_LENGTH = 200


@dataclasses.dataclass
class SampleSeries:
    """One sample and kind: its runs (newest last) and, from two runs on, the statistics."""

    sample: str
    kind: str
    runs: list[tuple[Run, Result]]
    stats: dict[str, Any] | None
    problem: str = ""


def sample_series(session: so.Session, actor: Person, *, sample: str = "") -> list[SampleSeries]:
    """Return every sample's series that ``actor`` may see (or only ``sample``), sorted by sample."""
    if len(sample) > MAX_SAMPLE_LENGTH:
        raise Invalid(f"the sample is {len(sample)} characters long (at most {MAX_SAMPLE_LENGTH})", field="sample")
    q = (sa.select(Run, Result)
         .join(Result, sa.and_(Result.run_id == Run.id, Result.is_current.is_(True)))
         .where(visible_runs_clause(actor), Run.sample != "")
         .options(so.undefer(Result.budget))
         .order_by(Run.sample, Run.kind, Run.created_at, Run.id))
    if sample:
        q = q.where(Run.sample == sample)
    cells: dict[tuple[str, str], list[tuple[Run, Result]]] = defaultdict(list)
    for run, res in session.execute(q).all():
        cells[(run.sample, run.kind)].append((run, res))
    out = []
    for (name, kind), members in cells.items():
        stats, problem = None, ""
        if len(members) >= 2:
            try:
                stats = summarise_runs(members)
            except Invalid as exc:
                problem = exc.message
        else:
            problem = "one run: a mean and interval need at least two"
        out.append(SampleSeries(name, kind, members, stats, problem))
    return out
