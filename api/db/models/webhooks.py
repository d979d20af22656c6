"""Webhook tables (migrations 0004, 0005): subscriptions and their sealed secrets, the outbox, deliveries.

Invariants:
- Declared on :class:`api.db.models.base.Base`, so one metadata holds every table and
  the models-match-migrations test covers these.
- A :class:`WebhookEvent` is written in the same transaction as the change it
  reports (no event is lost when the change commits, none invented when it
  rolls back), and ``body`` is the exact JSON every delivery of it sends.
- A subscription's signing secrets are :class:`WebhookSecret` rows, each only
  ever the sealed token of :mod:`api.webhooks.sealing` (never the secret).
  ``expires_at`` is null for the current secret; a rotation gives the earlier
  ones an ``expires_at`` (database clock), and until then they sign too.
- ``event_id`` (a UUID) is the receiver's de-duplication key: every attempt
  and every re-delivery of an event carries the same one.
- A :class:`WebhookDelivery` is ``pending`` until it is ``delivered`` or, after
  the last allowed attempt, ``failed``; ``claimed_by``/``claimed_until`` are a
  lease, so two delivery workers never send the same row at the same time.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, ForeignKey, Index, String, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column

from api.db.models.base import Base, UtcDateTime, utcnow
from api.db.models.jobs import JOB_ID

__all__ = ["DELIVERY_STATUSES", "EVENT_TYPES", "WebhookDelivery", "WebhookEvent", "WebhookSecret",
           "WebhookSubscription"]

# The events a subscription can ask for (api/webhooks/README.md describes each body).
EVENT_TYPES: tuple[str, ...] = ("job.created", "readings.accepted", "verdict.changed")
DELIVERY_STATUSES: tuple[str, ...] = ("pending", "delivered", "failed")


class WebhookSubscription(Base):
    __tablename__ = "webhook_subscriptions"

    id: Mapped[int] = mapped_column(primary_key=True)
    organisation_id: Mapped[int] = mapped_column(ForeignKey("organisations.id"), index=True)
    url: Mapped[str] = mapped_column(String(2000))
    events: Mapped[list[str]] = mapped_column(JSON)
    description: Mapped[str | None] = mapped_column(String(200), default=None)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)


class WebhookSecret(Base):
    __tablename__ = "webhook_secrets"

    id: Mapped[int] = mapped_column(primary_key=True)
    subscription_id: Mapped[int] = mapped_column(
        ForeignKey("webhook_subscriptions.id", ondelete="CASCADE"), index=True)
    sealed: Mapped[str] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime())
    expires_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)


class WebhookEvent(Base):
    __tablename__ = "webhook_events"
    __table_args__ = (UniqueConstraint("event_id", name="uq_webhook_events_event_id"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    event_id: Mapped[str] = mapped_column(String(36))
    organisation_id: Mapped[int] = mapped_column(ForeignKey("organisations.id"))
    job_id: Mapped[int | None] = mapped_column(JOB_ID, ForeignKey("jobs.id"), index=True, default=None)
    type: Mapped[str] = mapped_column(String(50))
    body: Mapped[str] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)


class WebhookDelivery(Base):
    __tablename__ = "webhook_deliveries"
    __table_args__ = (
        Index("ix_webhook_deliveries_status_next", "status", "next_attempt_at"),
        # The worker's ordering question: is an earlier delivery of this job still pending?
        Index("ix_webhook_deliveries_order", "subscription_id", "job_id", "id"),
        Index("ix_webhook_deliveries_event_pk", "event_pk"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    subscription_id: Mapped[int] = mapped_column(
        ForeignKey("webhook_subscriptions.id", ondelete="CASCADE"))
    event_pk: Mapped[int] = mapped_column(ForeignKey("webhook_events.id"))
    job_id: Mapped[int | None] = mapped_column(JOB_ID, default=None)  # 64-bit job ids (migration 0006)
    status: Mapped[str] = mapped_column(String(20), default="pending")
    attempts: Mapped[int] = mapped_column(default=0)
    next_attempt_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    claimed_by: Mapped[str | None] = mapped_column(String(64), default=None)
    claimed_until: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)
    last_attempt_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)
    last_status_code: Mapped[int | None] = mapped_column(default=None)
    last_error: Mapped[str | None] = mapped_column(Text, default=None)
    delivered_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)

    def as_dict(self, event: WebhookEvent) -> dict[str, Any]:
        def stamp(value: datetime | None) -> str | None:
            return None if value is None else value.isoformat()

        return {"id": self.id, "subscription_id": self.subscription_id, "event_id": event.event_id,
                "event": event.type, "job_id": self.job_id, "status": self.status,
                "attempts": self.attempts, "created_at": stamp(self.created_at),
                "last_attempt_at": stamp(self.last_attempt_at),
                "next_attempt_at": stamp(self.next_attempt_at) if self.status == "pending" else None,
                "last_status_code": self.last_status_code, "last_error": self.last_error,
                "delivered_at": stamp(self.delivered_at)}
