"""Webhooks: the URLs told when a result is finalised, and each delivery to one of them."""

from __future__ import annotations

import datetime as dt

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models.base import Base, utcnow


class Webhook(Base):
    """A URL that receives a signed JSON POST when a result is finalised (its run is locked)."""

    __tablename__ = "webhooks"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    url: so.Mapped[str] = so.mapped_column(sa.String(2000))
    #: the HMAC-SHA256 key (kept in clear: it is needed to sign)
    secret: so.Mapped[str] = so.mapped_column(sa.String(128))
    active: so.Mapped[bool] = so.mapped_column(default=True)
    created_by_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("people.id"))
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    deliveries: so.Mapped[list[WebhookDelivery]] = so.relationship(
        back_populates="webhook", order_by="WebhookDelivery.id"
    )


class WebhookDelivery(Base):
    """One event to send to one webhook: the body, attempts made, state and the next attempt."""

    __tablename__ = "webhook_deliveries"

    id: so.Mapped[int] = so.mapped_column(primary_key=True)
    webhook_id: so.Mapped[int] = so.mapped_column(sa.ForeignKey("webhooks.id"), index=True)
    event: so.Mapped[str] = so.mapped_column(sa.String(60))
    run_id: so.Mapped[int | None] = so.mapped_column(sa.ForeignKey("runs.id"), index=True)
    body: so.Mapped[str] = so.mapped_column(sa.Text)
    #: "pending", "delivered" or "failed" (no attempts left)
    status: so.Mapped[str] = so.mapped_column(sa.String(20), default="pending", index=True)
    attempts: so.Mapped[int] = so.mapped_column(default=0)
    next_attempt_at: so.Mapped[dt.datetime | None]
    last_attempt_at: so.Mapped[dt.datetime | None]
    last_status_code: so.Mapped[int | None]
    last_error: so.Mapped[str] = so.mapped_column(sa.Text, default="")
    created_at: so.Mapped[dt.datetime] = so.mapped_column(default=utcnow)

    webhook: so.Mapped[Webhook] = so.relationship(back_populates="deliveries")
