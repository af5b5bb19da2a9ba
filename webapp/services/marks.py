"""Marking schemes per section, the marks they give, and marks set by hand with a reason.

A scheme has two lists of bands, each ``(upper bound, points)`` in increasing order and ending
with an open band (bound ``None``): one for |E_n| of the run's verdict
(:func:`calc.refdata.comparison.verdict`) and one for the relative difference from the reference in percent.
A run's mark is the points of its |E_n| band plus those of its relative-error band. Withdrawn and
excluded runs get no mark (:func:`webapp.services.review.included_in_statistics`); a run with no
reference gets no mark from the scheme. Staff may set a run's mark by hand with a reason; the
change is audited and can be undone (clear the mark set by hand).

Text form of a band list (the page's fields): ``"1=6, 2=3, *=0"``: |E_n| ≤ 1 gives 6 points,
≤ 2 gives 3, anything above gives 0.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import MarkingScheme, Person, RunReview, utcnow
from webapp.services.access import require_coordinator
from webapp.services.audit import record_change
from webapp.services.classes import get_section, require_staff
from webapp.services.errors import Conflict, Invalid
from webapp.services.review import commit_review, locked_review
from webapp.services.runs import get_run

#: used until a coordinator sets a section's own scheme
DEFAULT_BANDS: dict[str, list[list[Any]]] = {
    "en": [[1.0, 6.0], [2.0, 3.0], [None, 0.0]],
    "relative": [[2.0, 4.0], [5.0, 2.0], [None, 0.0]],
}
MAX_BANDS = 12
MAX_TEXT = 400
MAX_POINTS = 1000.0


@dataclasses.dataclass(frozen=True)
class Mark:
    """A run's mark: the points, where they came from and why."""

    points: float | None
    source: str  # "scheme", "set by hand", or "" (no mark)
    detail: str


def parse_bands(text: str, field: str) -> list[list[Any]]:
    """Return bands from ``"1=6, 2=3, *=0"``.

    :raise Invalid: naming ``field`` for a malformed pair, bounds not increasing, or no open band last
    """
    bands: list[list[Any]] = []
    if len(text or "") > MAX_TEXT:
        raise Invalid(f"at most {MAX_TEXT} characters", field=field)
    parts = [p.strip() for p in (text or "").replace(";", ",").split(",") if p.strip()]
    if not parts:
        raise Invalid("give the bands as bound=points pairs, e.g. 1=6, 2=3, *=0", field=field)
    if len(parts) > MAX_BANDS:
        raise Invalid(f"at most {MAX_BANDS} bands", field=field)
    for part in parts:
        bound_text, sep, points_text = part.partition("=")
        if not sep:
            raise Invalid(f"expected bound=points, got {part!r}", field=field)
        bound_text = bound_text.strip().rstrip("%").strip()
        try:
            points = float(points_text)
            bound = None if bound_text == "*" else float(bound_text)
        except ValueError:
            raise Invalid(f"expected numbers in {part!r} (the last bound may be *)", field=field) from None
        if not math.isfinite(points) or not 0 <= points <= MAX_POINTS:
            raise Invalid(f"points must be from 0 to {MAX_POINTS:g}, got {points_text.strip()!r}", field=field)
        if bound is not None and (not math.isfinite(bound) or bound < 0):
            raise Invalid(f"a bound must be a number ≥ 0, got {bound_text!r}", field=field)
        bands.append([bound, points])
    validate_bands(bands, field)
    return bands


def validate_bands(bands: Any, field: str) -> list[list[Any]]:
    """Check a band list (as stored or sent as JSON) and return it."""
    if not isinstance(bands, list) or not bands:
        raise Invalid("expected a list of [bound, points] bands", field=field)
    last = -math.inf
    for i, band in enumerate(bands):
        if not (isinstance(band, list) and len(band) == 2):
            raise Invalid("expected [bound, points] pairs", field=field)
        bound, points = band
        if isinstance(points, bool) or not isinstance(points, (int, float)) or not 0 <= points <= MAX_POINTS:
            raise Invalid(f"points must be from 0 to {MAX_POINTS:g}", field=field)
        if bound is None:
            if i != len(bands) - 1:
                raise Invalid("only the last band may be open (*)", field=field)
            continue
        if isinstance(bound, bool) or not isinstance(bound, (int, float)) or not math.isfinite(bound) or bound < 0:
            raise Invalid("a bound must be a number ≥ 0", field=field)
        if bound <= last:
            raise Invalid("the bounds must increase", field=field)
        last = bound
    if bands[-1][0] is not None:
        raise Invalid("end with an open band for anything above, e.g. *=0", field=field)
    return bands


def bands_text(bands: list[list[Any]], percent: bool = False) -> str:
    """Return the text form of a band list."""
    unit = "%" if percent else ""
    return ", ".join(f"{'*' if b is None else f'{b:g}{unit}'}={p:g}" for b, p in bands)


def band_points(bands: list[list[Any]], x: float) -> float:
    """Return the points of the first band whose bound holds ``x`` (bound ≥ x; the open band last)."""
    for bound, points in bands:
        if bound is None or x <= bound:
            return float(points)
    return 0.0


def scheme_of(session: so.Session, section_id: int | None) -> tuple[dict[str, Any], bool]:
    """Return a section's bands and whether they are its own (False: the default scheme)."""
    scheme = session.get(MarkingScheme, section_id) if section_id is not None else None
    if scheme is None:
        return DEFAULT_BANDS, False
    return scheme.bands, True


def set_scheme(session: so.Session, actor: Person, section_id: int, *, en: str, relative: str) -> MarkingScheme:
    """Set a section's marking scheme from the text form of its two band lists (coordinators), audited."""
    require_coordinator(actor, "set marking schemes")
    section = get_section(session, actor, section_id)
    bands = {"en": parse_bands(en, "en_bands"), "relative": parse_bands(relative, "relative_bands")}
    scheme = session.get(MarkingScheme, section.id)
    old = None if scheme is None else scheme.bands
    if scheme is None:
        scheme = MarkingScheme(section_id=section.id, bands=bands)
        session.add(scheme)
    scheme.bands = bands
    scheme.updated_at = utcnow()
    scheme.updated_by_id = actor.id
    record_change(session, actor, "section", section.id, "marking_scheme", old, bands)
    try:
        session.commit()
    except sa.exc.IntegrityError:  # another coordinator saved the first scheme at the same moment
        session.rollback()
        raise Conflict(
            "another marking scheme for this section was saved at the same moment; reload and try again",
            field="en_bands",
        ) from None
    return scheme


def scheme_mark(bands: dict[str, Any], verdict: Any) -> Mark:
    """Return the scheme's mark of a run with this verdict (None: no reference, no mark)."""
    if verdict is None or not math.isfinite(verdict.En):
        return Mark(None, "", "no reference value to mark against")
    rel = abs(verdict.relative_difference) * 100 if math.isfinite(verdict.relative_difference) else math.inf
    p_en, p_rel = band_points(bands["en"], abs(verdict.En)), band_points(bands["relative"], rel)
    return Mark(
        p_en + p_rel, "scheme", f"|E_n| {abs(verdict.En):.2f}: {p_en:g} + relative error {rel:.1f} %: {p_rel:g}"
    )


def run_mark(
    bands: dict[str, Any], verdict: Any, *, included: bool, status: str, override: float | None, override_reason: str
) -> Mark:
    """Return a run's mark: none when it does not count, the one set by hand, else the scheme's."""
    if not included:
        return Mark(None, "", f"not marked: {status or 'excluded'}")
    if override is not None:
        return Mark(override, "set by hand", override_reason)
    return scheme_mark(bands, verdict)


def set_mark(session: so.Session, actor: Person, run_id: int, points: float | None, reason: object) -> RunReview:
    """Set (or with ``points`` None clear) a run's mark by hand, with a reason (staff), audited."""
    require_staff(actor, "set marks")
    run = get_run(session, actor, run_id)
    if not isinstance(reason, str) or not reason.strip():
        raise Invalid("give a reason for the mark (it is kept in the run's history)", field="reason")
    if len(reason) > 2000:
        raise Invalid("the reason is too long: at most 2000 characters", field="reason")
    if points is not None:
        if (
            isinstance(points, bool)
            or not isinstance(points, (int, float))
            or not math.isfinite(points)
            or not 0 <= points <= MAX_POINTS
        ):
            raise Invalid(f"a mark must be a number from 0 to {MAX_POINTS:g}", field="points")
        points = float(points)
    review = locked_review(session, run.id)
    record_change(session, actor, "run", run.id, "mark_points", review.mark_points, points)
    record_change(session, actor, "run", run.id, "mark_reason", review.mark_reason or None, reason.strip())
    review.mark_points = points
    review.mark_reason = reason.strip()
    review.updated_at = utcnow()
    review.updated_by_id = actor.id
    commit_review(session, run_id, "points")
    return review
