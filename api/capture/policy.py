"""What the forwarder does with an answer, and how long it waits: pure functions, no I/O, no clock.

Invariants:
- Every HTTP status maps to exactly one :class:`Disposition`. 2xx settles the
  batch as sent; 5xx, 429, 408 and 409 (another request with the same
  Idempotency-Key is still in progress) are retried; every other status
  rejects the batch, which stays in the spool marked rejected.
- A 409 whose problem code says the key can never succeed
  (``idempotency_key_reused``: the key names another body;
  ``idempotency_key_in_doubt``: the server took it but kept no answer) rejects
  the batch instead: retrying it would loop for ever. ``--show`` reports it and
  ``--replay`` resends it under a new key once a person has looked.
- 401, 403 and 404 also *halt* forwarding: every later batch would meet the
  same refusal (bad key, no such job), so later lines stay unsent rather than
  each being marked rejected, and a restart with the fault fixed sends them.
- A retry waits at least what ``Retry-After`` says (RFC 9110 §10.2.3; seconds
  or an HTTP date), capped so a wrong header cannot stall a site for hours;
  otherwise exponential backoff with jitter, so many loggers that lost the
  same server do not come back in step.
"""

from __future__ import annotations

import enum
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from email.utils import parsedate_to_datetime

__all__ = ["Backoff", "Disposition", "classify", "linger_wait", "retry_after_seconds"]

_RETRY_STATUSES = frozenset({408, 409, 429})
_HALT_STATUSES = frozenset({401, 403, 404})
_FINAL_CONFLICTS = frozenset({"idempotency_key_reused", "idempotency_key_in_doubt"})


class Disposition(enum.Enum):
    SENT = "sent"
    RETRY = "retry"
    REJECT = "reject"
    REJECT_AND_HALT = "reject_and_halt"


def classify(status: int, code: str | None = None) -> Disposition:
    """How the forwarder treats an HTTP status (and the problem ``code`` of its body, if any)."""
    if 200 <= status < 300:
        return Disposition.SENT
    if status == 409 and code in _FINAL_CONFLICTS:
        return Disposition.REJECT
    if status >= 500 or status in _RETRY_STATUSES:
        return Disposition.RETRY
    if status in _HALT_STATUSES:
        return Disposition.REJECT_AND_HALT
    return Disposition.REJECT


def retry_after_seconds(value: str | None, now: datetime) -> float | None:
    """Seconds to wait from a ``Retry-After`` header (delta-seconds or HTTP-date), or None."""
    if not value:
        return None
    value = value.strip()
    if value.isdigit():
        return float(value)
    try:
        when = parsedate_to_datetime(value)
    except (TypeError, ValueError):
        return None
    return max(0.0, (when - now).total_seconds())


@dataclass(frozen=True, slots=True, kw_only=True)
class Backoff:
    """Exponential backoff with jitter: attempt n waits base·2ⁿ⁻¹ (capped), scaled by a draw in [½, 1]."""

    base_s: float = 0.5
    cap_s: float = 30.0
    retry_after_cap_s: float = 300.0

    def delay(self, attempt: int, *, retry_after_s: float | None = None,
              draw: Callable[[], float]) -> float:
        """Wait before retry ``attempt`` (1 for the first retry); ``draw`` returns a float in [0, 1)."""
        exponential = min(self.cap_s, self.base_s * 2 ** max(0, attempt - 1))
        # "Equal jitter": never less than half the step, so the wait still grows.
        jittered = exponential * (0.5 + 0.5 * draw())
        if retry_after_s is not None:
            return float(min(retry_after_s, self.retry_after_cap_s))
        return float(jittered)


def linger_wait(*, pending: int, oldest_read_at: float | None, now: float,
                max_lines: int, linger_s: float) -> float:
    """Seconds to wait for more lines before sending: 0 once the batch is full or its oldest line waited."""
    if pending <= 0 or oldest_read_at is None:
        return linger_s
    if pending >= max_lines:
        return 0.0
    return max(0.0, linger_s - (now - oldest_read_at))
