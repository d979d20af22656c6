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
  several workers (one per gunicorn worker, plus ``ohmtally deliver``, on any
  number of hosts) never send one row at the same time. Every time a lease
  is written or compared with — and every retry time and ``webhook-timestamp``
  — is the database's clock (:mod:`api.webhooks.clock`), so a host whose clock
  is off, by more than a lease even, neither steals a live lease nor sends
  early. A lease is renewed just before its send, so it covers that one send
  (it is longer than a send can take). A worker that dies mid-send leaves a
  lease that expires, and the row is sent again: same body, same event id.
- No database transaction is open while a request is out: the row is read in
  one short transaction and the outcome written in another (on SQLite a
  writer's transaction holds the writer lock, which every request needs).
- Signed with every secret valid at send time (:mod:`api.webhooks.signing`,
  :mod:`api.webhooks.secret_store`); a secret the server key cannot open is a
  failed attempt with that reason, retried like any other.
- The target is re-checked at send time and the request goes to the checked
  address (``targets.resolve_target``); redirects are not followed and proxy
  settings from the environment are ignored.
- Every recorded attempt is an info line on the ``ohmtally.api.webhooks``
  logger, a child of the request log's logger, so it lands in the same JSON
  log; the facts are in the message itself.
- Runs outside requests only; nothing here blocks a request.
"""

from __future__ import annotations

import logging
import os
import socket
import threading
import uuid
from dataclasses import dataclass
from datetime import timedelta
from typing import Any

import httpx
from sqlalchemy import and_, or_, select, update
from sqlalchemy.orm import Session, aliased, sessionmaker

from api.app import default_instance_path
from api.db.models import WebhookDelivery, WebhookEvent, WebhookSubscription
from api.webhooks.clock import database_now
from api.webhooks.sealing import SecretBox, SecretUnreadable, load_box
from api.webhooks.secret_store import signing_keys
from api.webhooks.signing import EVENT_TYPE_HEADER, signed_headers
from api.webhooks.targets import TargetRefused, resolve_target
from engine import __version__

__all__ = ["LOGGER_NAME", "DeliveryConfig", "DeliveryThread", "backoff_s", "config_from_settings", "run_once",
           "worker_id"]

LOGGER_NAME = "ohmtally.api.webhooks"  # a child of the request log's "ohmtally.api": same handler
log = logging.getLogger(LOGGER_NAME)
_ERROR_CHARS = 500  # last_error is for a person to read, not a log
_NO_KEY = ("no server key: OHMTALLY_ENCRYPTION_KEY is not set (OHMTALLY_AUTH is on), so the signing "
           "secret cannot be opened")


@dataclass(frozen=True, slots=True, kw_only=True)
class DeliveryConfig:
    allow_private: bool = False
    timeout_s: float = 10.0
    retry_base_s: float = 10.0
    retry_max_s: float = 3600.0
    max_attempts: int = 30
    batch: int = 20
    box: SecretBox | None = None  # opens the signing secrets; None: every attempt fails, saying why

    @property
    def lease_s(self) -> float:
        # Longer than one send can take (connect + read timeouts), so a live lease is never stolen.
        return 3 * self.timeout_s + 30


@dataclass(frozen=True, slots=True)
class _Outgoing:
    """What one attempt sends, read in a short transaction before the request goes out."""

    url: str
    event_id: str
    event_type: str
    body: bytes
    headers: dict[str, str]


def config_from_settings(settings: Any, **overrides: Any) -> DeliveryConfig:
    """The worker's settings; the server key as ``serve`` finds it unless ``box=`` is given."""
    if "box" not in overrides:
        overrides["box"] = load_box(settings, settings.instance_path or default_instance_path())
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
    now = database_now(session)
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


def _prepare(session: Session, delivery_id: int, who: str,
             config: DeliveryConfig) -> _Outgoing | str | None:
    """Renew our lease and read what to send; an error text when it cannot be signed; ``None``
    when the row is gone or no longer ours. Commits, so no transaction stays open for the send."""
    now = database_now(session)
    renewed = session.execute(update(WebhookDelivery)
                              .where(WebhookDelivery.id == delivery_id, WebhookDelivery.status == "pending",
                                     WebhookDelivery.claimed_by == who, WebhookDelivery.claimed_until >= now)
                              .values(claimed_until=now + timedelta(seconds=config.lease_s)))
    row = session.get(WebhookDelivery, delivery_id) if getattr(renewed, "rowcount", 0) == 1 else None
    event = session.get(WebhookEvent, row.event_pk) if row is not None else None
    subscription = session.get(WebhookSubscription, row.subscription_id) if row is not None else None
    if row is None or event is None or subscription is None:
        session.commit()
        return None
    try:
        if config.box is None:
            raise SecretUnreadable(_NO_KEY)
        keys = signing_keys(session, config.box, subscription.id, now)
    except SecretUnreadable as exc:
        session.commit()
        return str(exc)
    session.commit()
    if not keys:
        return "the subscription has no valid signing secret"
    body = event.body.encode("utf-8")
    headers = {"Content-Type": "application/json", "User-Agent": f"ohmtally-webhooks/{__version__}",
               EVENT_TYPE_HEADER: event.type,
               **signed_headers(keys, event.event_id, int(now.timestamp()), body)}
    return _Outgoing(subscription.url, event.event_id, event.type, body, headers)


def _send(client: httpx.Client, outgoing: _Outgoing, config: DeliveryConfig,
          delivery_id: int) -> tuple[bool, int | None, str | None]:
    """One signed POST: (delivered, status code, error text)."""
    try:
        target = resolve_target(outgoing.url, allow_private=config.allow_private)
    except TargetRefused as refused:
        log.info(f"webhook delivery {delivery_id} not sent: {refused.detail}",
                 extra={"delivery_id": delivery_id, "code": refused.code})
        return False, None, f"refused: {refused.code}: {refused.reason}"
    headers = {**outgoing.headers, "Host": target.host_header()}
    extensions = {"sni_hostname": target.host} if target.scheme == "https" else {}
    try:
        with client.stream("POST", target.pinned_url(), content=outgoing.body, headers=headers,
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
    now = database_now(session)
    row = session.scalars(select(WebhookDelivery).where(
        WebhookDelivery.id == delivery_id,
        and_(WebhookDelivery.claimed_by == who, WebhookDelivery.status == "pending"))).first()
    if row is None:  # deleted with its subscription while we sent (a lease outlives any send)
        session.commit()
        return
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
    said = f"HTTP {status}" if status is not None else (error or "no answer")
    log.info(f"webhook delivery {delivery_id} {row.status} after {row.attempts} attempt(s): {said}",
             extra={"delivery_id": delivery_id, "delivery_status": row.status, "attempts": row.attempts,
                    "worker": who})


def _attempt(factory: sessionmaker[Session], client: httpx.Client, delivery_id: int, who: str,
             config: DeliveryConfig) -> bool:
    """One claimed delivery: prepare, send (no transaction open), record. Whether an attempt was made."""
    with factory() as session:
        prepared = _prepare(session, delivery_id, who, config)
    if prepared is None:
        return False
    outcome = ((False, None, prepared[:_ERROR_CHARS]) if isinstance(prepared, str)
               else _send(client, prepared, config, delivery_id))
    with factory() as session:
        _record(session, delivery_id, who, outcome, config)
    return True


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
            attempts += sum(_attempt(factory, client, delivery_id, who, config) for delivery_id in claimed)
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
