"""Session hook: queue a webhook delivery for every active webhook when a flush locks (signs) a run.

Registered on the app's session factory (:func:`webapp.db.init_app`), so the delivery rows are
added in the transaction that locks the run, whatever path locks it. The body is
:func:`webapp.services.webhooks.payload`; sending is :func:`webapp.services.webhooks.deliver_due`.
"""

from __future__ import annotations

import json
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Run, Webhook, WebhookDelivery, utcnow
from webapp.services.webhooks import EVENT, payload


def _queue_on_lock(session: so.Session, _ctx: Any, _instances: Any) -> None:
    for obj in list(session.dirty):
        if not isinstance(obj, Run):
            continue
        hist = sa.inspect(obj).attrs.locked.history
        if not (hist.added and hist.added[0] is True):
            continue
        hooks = session.scalars(sa.select(Webhook).where(Webhook.active.is_(True))).all()
        if not hooks:
            continue
        body = json.dumps(payload(obj), ensure_ascii=False, sort_keys=True)
        for hook in hooks:
            session.add(
                WebhookDelivery(
                    webhook=hook,
                    event=EVENT,
                    run_id=obj.id,
                    body=body,
                    status="pending",
                    attempts=0,
                    next_attempt_at=utcnow(),
                    last_error="",
                )
            )


def install(factory: so.sessionmaker[so.Session]) -> None:
    """Queue webhook deliveries whenever a session of ``factory`` locks a run."""
    if not sa.event.contains(factory, "before_flush", _queue_on_lock):
        sa.event.listen(factory, "before_flush", _queue_on_lock)
