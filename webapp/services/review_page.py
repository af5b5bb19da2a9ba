"""What the run page shows about a run's review: its state, mark, comments and the steps allowed."""

from __future__ import annotations

import dataclasses
from typing import Any

import sqlalchemy.orm as so

from calc.refdata.comparison import verdict
from webapp.models import Comment, Person, Run
from webapp.services.comments import run_comments
from webapp.services.marks import Mark, run_mark, scheme_of
from webapp.services.review import ReviewState, is_staff, review_of, run_flagged, state_of


@dataclasses.dataclass
class ReviewPanel:
    """The review part of a run page."""

    state: ReviewState
    flagged: bool
    mark: Mark
    mark_by_hand: bool
    comments: list[Comment]
    group_comments: list[Comment]
    actions: list[str]
    staff: bool


def review_panel(session: so.Session, viewer: Person, run: Run) -> ReviewPanel:
    """Return the review panel of a run ``viewer`` may see (the caller checked access)."""
    review = review_of(session, run.id)
    st = state_of(review)
    result = run.current_result
    flagged = run_flagged(result)
    staff = is_staff(viewer)
    section_id = run.group.section_id if run.group is not None else None
    bands, _own = scheme_of(session, section_id)
    status = "withdrawn" if st.withdrawn else ("excluded" if st.excluded else "")
    override = review.mark_points if review is not None else None
    mark = run_mark(
        bands,
        verdict(result.comparison) if result is not None else None,
        included=st.included,
        status=status,
        override=override,
        override_reason=review.mark_reason if review else "",
    )
    actions: list[str] = []
    if staff or (run.author_id == viewer.id and not run.locked):
        actions.append("restore" if st.withdrawn else "withdraw")
    if staff:
        actions.append("include" if st.excluded else "exclude")
        if st.accepted:
            actions.append("unaccept")
        elif flagged:
            actions.append("accept")
    group_comments: list[Any] = []
    if run.group_id is not None:
        from webapp.services.comments import group_comments as comments_of_groups

        group_comments = comments_of_groups(session, viewer, [run.group_id]).get(run.group_id, [])
    return ReviewPanel(
        st, flagged, mark, override is not None, run_comments(session, viewer, run.id), group_comments, actions, staff
    )
