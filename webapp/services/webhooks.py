"""Webhooks: a signed JSON POST to each configured URL when a result is finalised.

The event is ``run.locked``: a run's result is final when the run is signed (locked), since
nothing about it may change afterwards. The delivery rows are added in the transaction that
locks the run (a ``before_flush`` session hook, :mod:`webapp.db.webhook_queue`, so every path
that locks a run is covered) and sent by :func:`deliver_due` (``cupcal webhooks deliver``, or after the lock request when
``WEBHOOKS_DELIVER_INLINE`` is set).

Each POST carries ``X-Cupcal-Event``, ``X-Cupcal-Delivery`` (the delivery id) and
``X-Cupcal-Signature: sha256=<hex>``, the HMAC-SHA256 of the exact body bytes keyed with the
webhook's secret. A failed attempt (no 2xx answer) is retried after ``base · 2^(n-1)`` seconds
(n = attempts so far) until :data:`MAX_ATTEMPTS`; then the delivery is "failed". Every
attempt's status, code and error stay in the delivery log (never the receiver's answer).
What a delivery may reach (public addresses only, no redirects, a timeout, a cap on the
answer) is :mod:`webapp.services.webhook_guard`.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import hmac
import secrets
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Person, Run, Webhook, WebhookDelivery, utcnow
from webapp.services.access import require_coordinator
from webapp.services.errors import NotFound
from webapp.services.webhook_guard import Guard, check_url, post

EVENT = "run.locked"
MAX_ATTEMPTS = 6
BACKOFF_BASE_S = 30.0
SIGNATURE_HEADER = "X-Cupcal-Signature"


def sign(secret: str, body: bytes) -> str:
    """Return the signature header value of ``body``: ``sha256=<hex HMAC-SHA256>``."""
    return "sha256=" + hmac.new(secret.encode("utf-8"), body, hashlib.sha256).hexdigest()


def verify_signature(secret: str, body: bytes, header: str) -> bool:
    """Return whether ``header`` is the signature of ``body`` (constant-time comparison)."""
    return hmac.compare_digest(sign(secret, body), header or "")


def add_webhook(session: so.Session, actor: Person, url: str, guard: Guard = Guard()) -> tuple[Webhook, str]:
    """Add a webhook (coordinators only) and commit; return it with its secret.

    :raise Invalid: for a URL that is not http(s) (https only under ``guard.require_https``) or
        that names a local or private address (:mod:`webapp.services.webhook_guard`)
    """
    require_coordinator(actor, "manage webhooks")
    url = (url or "").strip()
    check_url(url, guard)
    hook = Webhook(url=url, secret=secrets.token_hex(32), created_by_id=actor.id, active=True)
    session.add(hook)
    session.commit()
    return hook, hook.secret


def remove_webhook(session: so.Session, actor: Person, webhook_id: int) -> None:
    """Deactivate a webhook (its delivery log is kept) and commit; pending deliveries are dropped."""
    require_coordinator(actor, "manage webhooks")
    hook = session.get(Webhook, webhook_id)
    if hook is None or not hook.active:
        raise NotFound(f"no webhook with id {webhook_id}")
    hook.active = False
    for d in hook.deliveries:
        if d.status == "pending":
            d.status = "failed"
            d.last_error = "webhook removed"
            d.next_attempt_at = None
    session.commit()


def list_webhooks(session: so.Session, actor: Person) -> list[Webhook]:
    """Return the active webhooks (coordinators only)."""
    require_coordinator(actor, "manage webhooks")
    return list(session.scalars(sa.select(Webhook).where(Webhook.active.is_(True)).order_by(Webhook.id)))


def deliveries_of(session: so.Session, actor: Person, webhook_id: int) -> list[WebhookDelivery]:
    """Return a webhook's delivery log, newest first (coordinators only)."""
    require_coordinator(actor, "manage webhooks")
    if session.get(Webhook, webhook_id) is None:
        raise NotFound(f"no webhook with id {webhook_id}")
    return list(
        session.scalars(
            sa.select(WebhookDelivery)
            .where(WebhookDelivery.webhook_id == webhook_id)
            .order_by(WebhookDelivery.id.desc())
        )
    )


def payload(run: Run) -> dict[str, Any]:
    """Return the event body of a locked run: its current result ± u with units, and who signed it."""
    from webapp.exports.document import outputs_of

    r = run.current_result
    return {
        "event": EVENT,
        "signed": {"result_id": run.locked_result_id, "content_hash": run.locked_hash},
        "run": {"id": run.id, "kind": run.kind, "title": run.title},
        "locked_at": run.locked_at.isoformat() + "Z" if run.locked_at else None,
        "locked_by": run.locked_by.email if run.locked_by else None,
        "result": None
        if r is None
        else {
            "id": r.id,
            "main": r.main,
            "outputs": outputs_of(r),
            "expanded_uncertainty": r.expanded_uncertainty,
            "coverage_factor": r.coverage_factor,
            "method": r.method,
            "software_version": r.software_version,
        },
    }


def backoff(attempts: int, base: float = BACKOFF_BASE_S) -> dt.timedelta:
    """Return the wait before the next attempt after ``attempts`` failed ones: base · 2^(attempts-1)."""
    return dt.timedelta(seconds=base * 2 ** max(0, attempts - 1))


def attempt(
    session: so.Session,
    delivery: WebhookDelivery,
    *,
    now: dt.datetime | None = None,
    timeout: float | None = None,
    base: float = BACKOFF_BASE_S,
    guard: Guard = Guard(),
) -> bool:
    """POST one delivery once, record the attempt, commit, and return whether it was accepted (2xx)."""
    now = now or utcnow()
    body = delivery.body.encode("utf-8")
    headers = {
        "Content-Type": "application/json",
        "User-Agent": "cupcal-webhooks",
        "X-Cupcal-Event": delivery.event,
        "X-Cupcal-Delivery": str(delivery.id),
        SIGNATURE_HEADER: sign(delivery.webhook.secret, body),
    }
    delivery.attempts += 1
    delivery.last_attempt_at = now
    try:
        code: int | None = post(delivery.webhook.url, body, headers, guard, timeout)
        error = "" if 200 <= (code or 0) < 300 else f"answered HTTP {code}"
    except (OSError, ValueError) as exc:
        code, error = None, f"{type(exc).__name__}: {exc}"[:500]
    delivery.last_status_code = code
    delivery.last_error = error
    if not error:
        delivery.status = "delivered"
        delivery.next_attempt_at = None
    elif delivery.attempts >= MAX_ATTEMPTS:
        delivery.status = "failed"
        delivery.next_attempt_at = None
    else:
        delivery.next_attempt_at = now + backoff(delivery.attempts, base)
    session.commit()
    return not error


def deliver_due(
    session: so.Session,
    *,
    now: dt.datetime | None = None,
    timeout: float | None = None,
    base: float = BACKOFF_BASE_S,
    guard: Guard = Guard(),
) -> list[WebhookDelivery]:
    """Attempt every pending delivery whose next attempt is due; return those attempted."""
    now = now or utcnow()
    due = session.scalars(
        sa.select(WebhookDelivery)
        .where(WebhookDelivery.status == "pending", WebhookDelivery.next_attempt_at <= now)
        .order_by(WebhookDelivery.id)
    ).all()
    for d in due:
        attempt(session, d, now=now, timeout=timeout, base=base, guard=guard)
    return list(due)


def delivery_json(d: WebhookDelivery) -> dict[str, Any]:
    """Return one line of the delivery log."""

    def iso(x: dt.datetime | None) -> str | None:
        return None if x is None else x.isoformat() + "Z"

    return {
        "id": d.id,
        "webhook_id": d.webhook_id,
        "event": d.event,
        "run_id": d.run_id,
        "status": d.status,
        "attempts": d.attempts,
        "last_status_code": d.last_status_code,
        "last_error": d.last_error,
        "last_attempt_at": iso(d.last_attempt_at),
        "next_attempt_at": iso(d.next_attempt_at),
        "created_at": iso(d.created_at),
    }
