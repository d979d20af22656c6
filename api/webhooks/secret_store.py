"""A subscription's signing secrets: the first one, rotations with an overlap, the ones that sign now.

Invariants:
- Every time here is the database's (:func:`api.webhooks.clock.database_now`),
  so hosts with different clocks agree on which secrets are valid.
- A subscription has exactly one current secret (``expires_at`` null) from the
  moment it is made. :func:`rotate` adds a new current secret and gives every
  other still-valid secret ``expires_at = min(its own, now + overlap)``: an
  overlap never lengthens an earlier one's life, and ``overlap_s = 0`` ends
  the old secrets at once (a leaked secret). Until its ``expires_at`` a secret
  signs every delivery beside the new one, so receivers can switch at leisure.
- A rotation touches only secrets: no delivery is removed, re-queued or
  reordered, and pending deliveries are signed at send time with whatever is
  valid then.
- At most :data:`MAX_VALID_SECRETS` secrets are valid at once (a header of
  signatures stays short); a rotation that would pass that is refused with
  :class:`TooManySecrets` until an overlap ends (or ``overlap_s`` is 0).
- Expired rows are deleted when the subscription's secrets next change.
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import datetime, timedelta

from sqlalchemy import delete, or_, select
from sqlalchemy.orm import Session
from sqlalchemy.sql.elements import ColumnElement

from api.db.models.webhooks import WebhookSecret
from api.webhooks.sealing import SecretBox

__all__ = ["MAX_OVERLAP_S", "MAX_VALID_SECRETS", "TooManySecrets", "add_secret", "reseal_all", "rotate",
           "signing_keys", "valid_secrets"]

MAX_VALID_SECRETS = 4
MAX_OVERLAP_S = 604800  # seven days: the longest a rotated-out secret keeps signing (our choice)


class TooManySecrets(Exception):
    """A rotation would leave more than :data:`MAX_VALID_SECRETS` secrets valid."""

    def __init__(self, until: datetime) -> None:
        super().__init__(f"{MAX_VALID_SECRETS} secrets are already valid")
        self.until = until


def _valid(now: datetime) -> ColumnElement[bool]:
    return or_(WebhookSecret.expires_at.is_(None), WebhookSecret.expires_at > now)


def valid_secrets(session: Session, subscription_ids: Iterable[int],
                  now: datetime) -> dict[int, list[WebhookSecret]]:
    """Each subscription's valid secrets, newest first."""
    ids = list(subscription_ids)
    found: dict[int, list[WebhookSecret]] = {i: [] for i in ids}
    if not ids:
        return found
    query = (select(WebhookSecret).where(WebhookSecret.subscription_id.in_(ids), _valid(now))
             .order_by(WebhookSecret.id.desc()))
    for row in session.scalars(query):
        found[row.subscription_id].append(row)
    return found


def add_secret(session: Session, box: SecretBox, subscription_id: int, key: bytes,
               now: datetime) -> WebhookSecret:
    """The subscription's first secret (its id must exist: flush the subscription first)."""
    row = WebhookSecret(subscription_id=subscription_id, sealed=box.seal(subscription_id, key),
                        created_at=now, expires_at=None)
    session.add(row)
    return row


def rotate(session: Session, box: SecretBox, subscription_id: int, key: bytes, *, overlap_s: int,
           now: datetime) -> WebhookSecret:
    """Make ``key`` the current secret; the others stay valid for at most ``overlap_s`` more seconds."""
    earlier = valid_secrets(session, [subscription_id], now)[subscription_id]
    ends = now + timedelta(seconds=overlap_s)
    still = [r for r in earlier if overlap_s > 0 and (r.expires_at is None or r.expires_at > now)]
    if len(still) + 1 > MAX_VALID_SECRETS:
        oldest_end = min(min(r.expires_at or ends, ends) for r in still)
        raise TooManySecrets(oldest_end)
    for row in earlier:
        row.expires_at = ends if row.expires_at is None else min(row.expires_at, ends)
    session.execute(delete(WebhookSecret).where(WebhookSecret.subscription_id == subscription_id,
                                                WebhookSecret.expires_at <= now))
    return add_secret(session, box, subscription_id, key, now)


def signing_keys(session: Session, box: SecretBox, subscription_id: int, now: datetime) -> list[bytes]:
    """The keys that sign a delivery sent ``now``, newest first (opened with the server key)."""
    rows = valid_secrets(session, [subscription_id], now)[subscription_id]
    return [box.open(subscription_id, row.sealed) for row in rows]


def reseal_all(session: Session, box: SecretBox) -> int:
    """Seal every stored secret again with the box's first key (after rotating the server key)."""
    rows = list(session.scalars(select(WebhookSecret)))
    for row in rows:
        row.sealed = box.reseal(row.sealed)
    return len(rows)
