"""Events into the outbox, in the caller's transaction, fanned out to the subscriptions.

Invariants:
- Every function here only adds rows to the session it is given; the caller
  commits them with the change they report, or rolls both back. The worker
  (``api.webhooks.delivery``) only ever sees committed events.
- An event gets one delivery row per subscription of the job's organisation
  that asked for its type *when the event happened*; a subscription made
  later does not receive older events (use the sync API to catch up).
- ``verdict.changed`` is emitted exactly for the circuits whose outcome
  differs before and after a post (a new circuit's "before" is ``null``), so
  a post that changes no outcome emits none. Board-level checks can change a
  circuit the post did not touch; that change is reported too.
- Times are the database's (:mod:`api.webhooks.clock`), read once per
  transaction: an event's ``created_at`` and its deliveries' first
  ``next_attempt_at`` do not depend on which host took the request.
"""

from __future__ import annotations

import json
import uuid
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from sqlalchemy import event, select
from sqlalchemy.orm import Session, SessionTransaction

from api.db.models import Circuit, Job, Upload, WebhookDelivery, WebhookEvent, WebhookSubscription
from api.webhooks.clock import database_now
from engine import NOTICE, CircuitRecord, PreviousVisit, Ruleset, Site, Verdict, verify

__all__ = ["Outcomes", "emit", "emit_job_created", "emit_readings", "outcomes", "outcomes_before",
           "subscribed"]

Outcomes = dict[tuple[str, str], str]
_CACHE = "ohmtally.webhook_subscriptions"  # session.info: organisation id → subscriptions
_NOW = "ohmtally.webhook_now"  # session.info: the database's time, read once per transaction
_LISTENING = "ohmtally.webhook_subscriptions.listening"


def outcomes(verdicts: Iterable[Verdict]) -> Outcomes:
    """(board, circuit) → outcome, in the engine's order."""
    return {v.key: v.outcome.value for v in verdicts}


def _subscriptions(session: Session, organisation_id: int, event_type: str) -> list[WebhookSubscription]:
    """The organisation's subscriptions to ``event_type``: one query per transaction, not per event.

    A readings post asks up to three times (``verdict.changed`` before the merge, then
    each event it emits). A subscription made while the post runs races it either way;
    asking once answers that race the same for every event of the post. The answer is
    kept in ``session.info`` until the outermost transaction ends.
    """
    cache: dict[int, list[WebhookSubscription]] | None = session.info.get(_CACHE)
    if cache is None:
        cache = session.info[_CACHE] = {}
        if not session.info.get(_LISTENING):
            event.listen(session, "after_transaction_end", _forget)
            session.info[_LISTENING] = True
    found = cache.get(organisation_id)
    if found is None:
        query = (select(WebhookSubscription).where(WebhookSubscription.organisation_id == organisation_id)
                 .order_by(WebhookSubscription.id))
        found = cache[organisation_id] = list(session.scalars(query))
    return [s for s in found if event_type in s.events]


def _forget(session: Session, transaction: SessionTransaction) -> None:
    if transaction.parent is None:  # the outermost transaction, not a flush's subtransaction
        session.info.pop(_CACHE, None)
        session.info.pop(_NOW, None)


def subscribed(session: Session, organisation_id: int, event_type: str) -> bool:
    """Whether anyone would receive ``event_type`` (so the caller can skip costly work)."""
    return bool(_subscriptions(session, organisation_id, event_type))


def outcomes_before(session: Session, job: Job, ruleset: Ruleset, records: Sequence[CircuitRecord],
                    site: Site | None = None, previous: PreviousVisit | None = None) -> Outcomes | None:
    """The job's outcomes from its stored ``records`` and facts, before a change; ``None`` if nobody
    listens."""
    if not subscribed(session, job.organisation_id, "verdict.changed"):
        return None
    return outcomes(verify(records, ruleset, site=site, previous=previous))


def emit(session: Session, *, organisation_id: int, job_id: int | None, event_type: str,
         data: Mapping[str, Any]) -> WebhookEvent | None:
    """Write one event and its deliveries; ``None`` when no subscription wants it."""
    targets = _subscriptions(session, organisation_id, event_type)
    if not targets:
        return None
    now = session.info.get(_NOW)
    if now is None:  # the cache (and its listener) exist: _subscriptions made them above
        now = session.info[_NOW] = database_now(session)
    event_id = str(uuid.uuid4())
    body = json.dumps({"id": event_id, "type": event_type, "created_at": now.isoformat(),
                       "data": dict(data)}, ensure_ascii=False, separators=(",", ":"))
    event = WebhookEvent(event_id=event_id, organisation_id=organisation_id, job_id=job_id,
                         type=event_type, body=body, created_at=now)
    session.add(event)
    session.flush()
    for subscription in targets:
        session.add(WebhookDelivery(subscription_id=subscription.id, event_pk=event.id, job_id=job_id,
                                    status="pending", attempts=0, next_attempt_at=now, created_at=now))
    session.flush()
    return event


def emit_job_created(session: Session, job: Job, job_data: Mapping[str, Any]) -> None:
    emit(session, organisation_id=job.organisation_id, job_id=job.id, event_type="job.created",
         data={"job": dict(job_data)})


def emit_readings(session: Session, job: Job, upload: Upload, *, touched: Sequence[tuple[str, str]],
                  before: Outcomes | None, after: Sequence[Verdict]) -> None:
    """``readings.accepted`` for a merged upload, then one ``verdict.changed`` per changed circuit.

    ``before`` is ``None`` when nobody subscribes to ``verdict.changed`` (not computed).
    """
    if upload.accepted > 0:
        emit(session, organisation_id=job.organisation_id, job_id=job.id, event_type="readings.accepted",
             data={"job_id": job.id, "job_external_ref": job.external_ref, "job_revision": job.revision,
                   "upload": {"id": upload.id, "sha256": upload.sha256, "size": upload.size},
                   "accepted": upload.accepted, "rejected": len(upload.rejected),
                   "circuits": [{"board": b, "circuit": c} for b, c in touched]})
    if before is None:
        return
    changed = [(key, before.get(key), outcome) for key, outcome in outcomes(after).items()
               if before.get(key) != outcome]
    if not changed:
        return
    refs = {(c.board, c.circuit): c.external_ref for c in session.scalars(
        select(Circuit).where(Circuit.job_id == job.id, Circuit.external_ref.is_not(None)))}
    for (board, circuit), previous, outcome in changed:
        emit(session, organisation_id=job.organisation_id, job_id=job.id, event_type="verdict.changed",
             data={"job_id": job.id, "job_external_ref": job.external_ref, "job_revision": job.revision,
                   "board": board, "circuit": circuit, "circuit_external_ref": refs.get((board, circuit)),
                   "previous": previous, "outcome": outcome, "upload_id": upload.id,
                   "verdicts_href": f"/v1/jobs/{job.id}/verdicts", "notice": NOTICE})
