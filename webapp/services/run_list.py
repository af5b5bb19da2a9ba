"""The runs list's search, filters and sort order, turned into one query.

Search matches every word in the title, operator, bench, sample (lot) or group name; filters
narrow by kind, group, calorimeter (cup), sample and a flag; the list sorts by date, kind,
group, cup, sample or title. Every value is checked here, so a bad link gives a 400 that
names the parameter.
"""

from __future__ import annotations

import dataclasses

import sqlalchemy as sa

from calc.io.runfile import KINDS
from webapp.models import Calorimeter, Group, Person, Result, Run
from webapp.services.errors import Invalid
from webapp.services.runs import runs_query

MAX_SEARCH_LENGTH = 200
FLAGS = {"signed": "signed (locked)", "open": "open (not signed)", "warnings": "has warnings", "no-result": "no result"}
SORTS = {
    "date": (Run.created_at, Run.id),
    "kind": (Run.kind, Run.id),
    "group": (Group.name, Run.id),
    "cup": (Calorimeter.name, Run.id),
    "sample": (Run.sample, Run.id),
    "title": (Run.title, Run.id),
}


@dataclasses.dataclass(frozen=True)
class RunFilter:
    """What the runs list shows; empty strings mean "any"."""

    q: str = ""
    kind: str = ""
    group: str = ""
    cup: str = ""
    sample: str = ""
    flag: str = ""
    sort: str = "date"
    dir: str = "desc"

    def args(self) -> dict[str, str]:
        """Return the non-default values, for links that keep the filter."""
        default = RunFilter()
        return {k: v for k, v in dataclasses.asdict(self).items() if v != getattr(default, k)}


def _like(text: str) -> str:
    return "%" + text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"


def read_filter(args: dict[str, str]) -> RunFilter:
    """Return the filter of a request's query arguments, or raise Invalid naming the bad one."""
    f = RunFilter(
        **{k: (args.get(k) or "").strip() for k in ("q", "kind", "group", "cup", "sample", "flag")},
        sort=(args.get("sort") or "date"),
        dir=(args.get("dir") or "desc"),
    )
    for name in ("q", "group", "cup", "sample"):
        if len(getattr(f, name)) > MAX_SEARCH_LENGTH:
            raise Invalid(
                f"{name} is {len(getattr(f, name))} characters long (at most {MAX_SEARCH_LENGTH})", field=name
            )
    if f.kind and f.kind not in KINDS:
        raise Invalid(f"unknown kind {f.kind!r}; expected one of: {', '.join(KINDS)}", field="kind")
    if f.flag and f.flag not in FLAGS:
        raise Invalid(f"unknown flag {f.flag!r}; expected one of: {', '.join(FLAGS)}", field="flag")
    if f.sort not in SORTS:
        raise Invalid(f"unknown sort {f.sort!r}; expected one of: {', '.join(SORTS)}", field="sort")
    if f.dir not in ("asc", "desc"):
        raise Invalid("expected dir asc or desc", field="dir")
    return f


def filtered_runs_query(actor: Person, f: RunFilter) -> sa.Select[tuple[Run, Result]]:
    """Return the runs ``actor`` may see that pass the filter, in its order."""
    q = runs_query(actor).order_by(None)
    q = q.outerjoin(Group, Group.id == Run.group_id).outerjoin(Calorimeter, Calorimeter.id == Run.calorimeter_id)
    for word in f.q.split():
        pattern = _like(word)
        q = q.where(
            sa.or_(
                *(
                    col.ilike(pattern, escape="\\")
                    for col in (Run.title, Run.operator, Run.bench, Run.sample, Group.name)
                )
            )
        )
    if f.kind:
        q = q.where(Run.kind == f.kind)
    if f.group:
        q = q.where(Group.name == f.group)
    if f.cup:
        q = q.where(Calorimeter.name == f.cup)
    if f.sample:
        q = q.where(Run.sample == f.sample)
    if f.flag == "signed":
        q = q.where(Run.locked.is_(True))
    elif f.flag == "open":
        q = q.where(Run.locked.is_(False))
    elif f.flag == "no-result":
        q = q.where(Result.id.is_(None))
    elif f.flag == "warnings":
        q = q.where(sa.cast(Result.warnings, sa.Text).not_in(["[]", "null"]))
    cols = SORTS[f.sort]
    return q.order_by(*(c.desc() if f.dir == "desc" else c.asc() for c in cols))
