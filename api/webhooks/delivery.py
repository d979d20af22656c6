"""The delivery worker: claims due deliveries, sends them signed, retries with backoff.

Invariants:
- At least once: a delivery stays ``pending`` until a receiver answers 2xx;
  a failed attempt is retried after ``base × 2^(attempts−1)`` seconds, capped
  at ``retry_max_s``, until ``max_attempts``; then it is ``failed`` (and
  stays listed at ``GET /v1/webhooks/<id>/deliveries``).
- Ordered per job and subscription: only the oldest pending delivery of a
  (subscription, job) pair is ever claimed, so a job's later event waits
  until the earlier one is delivered (or has failed for good).
- Claims are leases written with a conditional UPDATE (``… WHERE claimed_until
  IS NULL OR claimed_until < now``; one winner on SQLite and PostgreSQL), so
  several workers (one per gunicorn worker, plus ``ohmtally deliver``) never
  send one row at the same time. A worker that dies mid-send leaves a lease
  that expires, and the row is sent again: same body, same event id.
- The target is re-checked at send time and the request goes to the checked
  address (``targets.resolve_target``); redirects are not followed and proxy
  settings from the environment are ignored.
- Runs outside requests only; nothing here blocks a request.
"""

from __future__ import annotations

import logging
import os
import socket
import threading
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any

import httpx
from sqlalchemy import or_, select, update
from sqlalchemy.orm import Session, aliased, sessionmaker

from api.db.models import WebhookDelivery, WebhookEvent, WebhookSubscription, utcnow
from api.webhooks.signing import (
    DELIVERY_HEADER,
    EVENT_HEADER,
    EVENT_ID_HEADER,
    SIGNATURE_HEADER,
    signature_header,
)
from api.webhooks.targets import TargetRefused, resolve_target
from engine import __version__

__all__ = ["DeliveryConfig", "DeliveryThread", "backoff_s", "config_from_settings", "run_once", "worker_id"]

log = logging.getLogger("ohmtally.webhooks")
_ERROR_CHARS = 500  # last_error is for a person to read, not a log


@dataclass(frozen=True, slots=True, kw_only=True)
class DeliveryConfig:
    allow_private: bool = False
    timeout_s: float = 10.0
    retry_base_s: float = 10.0
    retry_max_s: float = 3600.0
    max_attempts: int = 30
    batch: int = 20
    clock: Callable[[], datetime] = field(default=utcnow)

    @property
    def lease_s(self) -> float:
        # Longer than one send can take (connect + read timeouts), so a live lease is never stolen.
        return 3 * self.timeout_s + 30


def config_from_settings(settings: Any, **overrides: Any) -> DeliveryConfig:
    return DeliveryConfig(allow_private=settings.webhook_allow_private,
                          timeout_s=settings.webhook_timeout_s,
                          retry_base_s=settings.webhook_retry_base_s,
                          retry_max_s=settings.webhook_retry_max_s,
                          max_attempts=settings.webhook_max_attempts, **overrides)


def backoff_s(attempts: int, config: DeliveryConfig) -> float:
    """Seconds to wait after the ``attempts``-th failure: doubling from the base, capped."""
    exponent = min(max(attempts - 1, 0), 30)  # 2**30 × base is far past any cap; avoids huge floats
    return float(min(config.retry_base_s * 2 ** exponent, config.retry_max_s))


def worker_id() -> str:
    return f"{socket.gethostname()[:30]}:{os.getpid()}:{uuid.uuid4().hex[:8]}"


def _claim(session: Session, who: str, config: DeliveryConfig) -> list[int]:
    """Lease up to ``batch`` due deliveries, each the head of its (subscription, job) queue."""
    now = config.clock()
    earlier = aliased(WebhookDelivery)
    blocked = (select(earlier.id).where(earlier.subscription_id == WebhookDelivery.subscription_id,
                                        earlier.job_id == WebhookDelivery.job_id,
                                        earlier.status == "pending", earlier.id < WebhookDelivery.id)
               .exists())
    free = or_(WebhookDelivery.claimed_until.is_(None), WebhookDelivery.claimed_until < now)
    query = (select(WebhookDelivery.id)
             .where(WebhookDelivery.status == "pending", WebhookDelivery.next_attempt_at <= now, free,
                    ~blocked)
             .order_by(WebhookDelivery.id).limit(config.batch))
    claimed: list[int] = []
    until = now + timedelta(seconds=config.lease_s)
    for delivery_id in list(session.scalars(query)):
        result = session.execute(update(WebhookDelivery)
                                 .where(WebhookDelivery.id == delivery_id,
                                        WebhookDelivery.status == "pending", free)
                                 .values(claimed_by=who, claimed_until=until))
        if getattr(result, "rowcount", 0) == 1:
            claimed.append(delivery_id)
    session.commit()
    return claimed


def _send(client: httpx.Client, subscription: WebhookSubscription, event: WebhookEvent,
          delivery_id: int, config: DeliveryConfig) -> tuple[bool, int | None, str | None]:
    """One signed POST: (delivered, status code, error text)."""
    try:
        target = resolve_target(subscription.url, allow_private=config.allow_private)
    except TargetRefused as refused:
        return False, None, f"refused: {refused.reason}"
    body = event.body.encode("utf-8")
    timestamp = int(config.clock().timestamp())
    default_port = {"http": 80, "https": 443}[target.scheme]
    host_header = target.host if target.port == default_port else f"{target.host}:{target.port}"
    if ":" in target.host and target.port == default_port:
        host_header = f"[{target.host}]"
    headers = {"Content-Type": "application/json", "User-Agent": f"ohmtally-webhooks/{__version__}",
               "Host": host_header, SIGNATURE_HEADER: signature_header(subscription.secret, timestamp, body),
               EVENT_ID_HEADER: event.event_id, EVENT_HEADER: event.type, DELIVERY_HEADER: str(delivery_id)}
    extensions = {"sni_hostname": target.host} if target.scheme == "https" else {}
    try:
        with client.stream("POST", target.pinned_url(), content=body, headers=headers,
                           extensions=extensions) as response:
            status = response.status_code
    except httpx.HTTPError as exc:
        return False, None, f"{type(exc).__name__}: {exc}"[:_ERROR_CHARS]
    if 200 <= status < 300:
        return True, status, None
    return False, status, f"HTTP {status} from the receiver"


def _record(session: Session, delivery_id: int, who: str, outcome: tuple[bool, int | None, str | None],
            config: DeliveryConfig) -> None:
    delivered, status, error = outcome
    row = session.get(WebhookDelivery, delivery_id)
    if row is None:  # the subscription was deleted while we sent
        return
    now = config.clock()
    row.attempts += 1
    row.last_attempt_at, row.last_status_code, row.last_error = now, status, error
    row.claimed_by = row.claimed_until = None
    if delivered:
        row.status, row.delivered_at = "delivered", now
    elif row.attempts >= config.max_attempts:
        row.status = "failed"
    else:
        row.next_attempt_at = now + timedelta(seconds=backoff_s(row.attempts, config))
    session.commit()
    log.info("webhook delivery", extra={"delivery_id": delivery_id, "status": row.status,
                                        "attempts": row.attempts, "worker": who})


def run_once(factory: sessionmaker[Session], config: DeliveryConfig, *, who: str | None = None,
             client: httpx.Client | None = None) -> int:
    """Send everything due now, queue by queue, until nothing is due; returns attempts made."""
    who = who or worker_id()
    own = client is None
    client = client or httpx.Client(timeout=config.timeout_s, follow_redirects=False, trust_env=False)
    attempts = 0
    try:
        while True:
            with factory() as session:
                claimed = _claim(session, who, config)
            if not claimed:
                return attempts
            for delivery_id in claimed:
                with factory() as session:
                    row = session.get(WebhookDelivery, delivery_id)
                    if row is None:
                        continue
                    event = session.get(WebhookEvent, row.event_pk)
                    subscription = session.get(WebhookSubscription, row.subscription_id)
                    if event is None or subscription is None:
                        continue
                    outcome = _send(client, subscription, event, delivery_id, config)
                    _record(session, delivery_id, who, outcome, config)
                    attempts += 1
    finally:
        if own:
            client.close()


class DeliveryThread(threading.Thread):
    """A daemon thread that runs :func:`run_once` every ``poll_s`` seconds until stopped."""

    def __init__(self, factory: sessionmaker[Session], config: DeliveryConfig, *,
                 poll_s: float = 1.0) -> None:
        super().__init__(name="ohmtally-webhooks", daemon=True)
        self.factory, self.config, self.poll_s = factory, config, poll_s
        self.stopping = threading.Event()
        self.who = worker_id()

    def run(self) -> None:
        with httpx.Client(timeout=self.config.timeout_s, follow_redirects=False, trust_env=False) as client:
            while not self.stopping.is_set():
                try:
                    run_once(self.factory, self.config, who=self.who, client=client)
                except Exception:  # a database hiccup must not end the thread; try again next poll
                    log.exception("webhook delivery pass failed")
                self.stopping.wait(self.poll_s)

    def stop(self, timeout: float | None = None) -> None:
        self.stopping.set()
        self.join(timeout)

