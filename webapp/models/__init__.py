"""The notebook's tables: people, groups, calorimeters, runs, results and the audit trail.

Typed SQLAlchemy 2 models with named constraints. Every stored magnitude is in one
canonical unit named in its column (``heat_capacity_j_k`` and ``heat_capacity_j_k_std``,
the standard uncertainty); :mod:`webapp.quantities` turns them back into quantities.
Models hold columns, relationships and small invariants only: no Flask, no calc logic.

One module per area, all on the one :class:`Base` of :mod:`webapp.models.base`; every name is
re-exported here, so ``from webapp.models import Run`` and Alembic's ``Base.metadata`` see every table:

* :mod:`~webapp.models.people`: people, API tokens, sign-in links and failed sign-ins;
* :mod:`~webapp.models.classes`: courses, sections, groups, benches, marking schemes;
* :mod:`~webapp.models.calorimeters`: calorimeters and their calibrations;
* :mod:`~webapp.models.runs`: runs, their inputs and results, series of repeats;
* :mod:`~webapp.models.review`: staff's review of a run, comments, the audit trail;
* :mod:`~webapp.models.webhooks`: webhooks and their deliveries;
* :mod:`~webapp.models.live`: live runs and their readings.
"""

from __future__ import annotations

from webapp.models.base import MAX_ID, NAMING_CONVENTION, Base, utcnow
from webapp.models.calorimeters import CALIBRATION_KINDS, CALIBRATION_STATUSES, Calibration, Calorimeter
from webapp.models.classes import Bench, Course, Group, MarkingScheme, Section
from webapp.models.live import LIVE_STATES, LiveReading, LiveRun, LiveSectionTarget
from webapp.models.people import ROLES, STAFF_ROLES, ApiToken, Person, SignInFailure, SignInLink
from webapp.models.review import AuditEntry, Comment, RunReview
from webapp.models.runs import Result, Run, RunInput, Series, SeriesRun
from webapp.models.webhooks import Webhook, WebhookDelivery

__all__ = [
    "CALIBRATION_KINDS",
    "CALIBRATION_STATUSES",
    "LIVE_STATES",
    "MAX_ID",
    "NAMING_CONVENTION",
    "ROLES",
    "STAFF_ROLES",
    "ApiToken",
    "AuditEntry",
    "Base",
    "Bench",
    "Calibration",
    "Calorimeter",
    "Comment",
    "Course",
    "Group",
    "LiveReading",
    "LiveRun",
    "LiveSectionTarget",
    "MarkingScheme",
    "Person",
    "Result",
    "Run",
    "RunInput",
    "RunReview",
    "Section",
    "Series",
    "SeriesRun",
    "SignInFailure",
    "SignInLink",
    "Webhook",
    "WebhookDelivery",
    "utcnow",
]
