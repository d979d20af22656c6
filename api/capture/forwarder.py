"""The forwarder: spooled lines → the API, in order, one batch at a time.

Invariants:
- A line is marked sent only after a 2xx answer to the batch that holds it;
  until then it stays unsent in the spool and is resent with the same batch
  and the same Idempotency-Key (the spool fixed both before the first send).
- Batches go in spool order; a batch being retried holds back the ones after
  it, so the job sees readings in the order the meter sent them (later
  readings win on the server, so order matters).
- A per-line rejection inside a 2xx is recorded against its spool row
  (:meth:`BatchRows.row_at` maps a body line to its row, past the context
  directives the body carries); a whole-batch 4xx marks every row of the
  batch rejected, with the server's code and detail, and moves on.
- :meth:`Forwarder.step` does one unit of work and returns what happened; it
  never sleeps. :func:`run_forwarder` is the loop that waits (through an
  injected ``wait``), so the logic is tested without threads or a real clock.
"""

from __future__ import annotations

import random
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

from .policy import Backoff, Disposition, classify, linger_wait, retry_after_seconds
from .spool import BatchRows, Spool
from .transport import Reply, Transport, TransportError

__all__ = [
    "BatchRejected",
    "BatchRetrying",
    "BatchSent",
    "ForwardEvent",
    "Forwarder",
    "Halted",
    "Idle",
    "run_forwarder",
]


@dataclass(frozen=True, slots=True, kw_only=True)
class Idle:
    wait_s: float  # nothing to send yet; look again after this long (or when woken)


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchSent:
    key: str
    lines: int
    line_rejections: tuple[Mapping[str, Any], ...] = ()
    verdicts: tuple[Mapping[str, Any], ...] = ()
    upload: Any = None


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchRetrying:
    key: str
    attempt: int
    wait_s: float
    reason: str


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchRejected:
    key: str
    lines: int
    status: int
    code: str
    reason: str


@dataclass(frozen=True, slots=True, kw_only=True)
class Halted:
    reason: str


ForwardEvent = Idle | BatchSent | BatchRetrying | BatchRejected | Halted


@dataclass(slots=True, kw_only=True)
class Forwarder:
    spool: Spool
    transport: Transport
    max_lines: int = 50
    linger_s: float = 0.5
    backoff: Backoff = field(default_factory=Backoff)
    clock: Callable[[], float] = time.time
    draw: Callable[[], float] = random.random
    attempt: int = 0  # failed sends of the current batch
    halted: str | None = None

    def step(self, *, flush: bool = False) -> ForwardEvent:
        """Send the next batch once, or say why not. ``flush`` skips the linger (draining)."""
        if self.halted:
            return Halted(reason=self.halted)
        pending, oldest = self.spool.pending()
        wait = linger_wait(pending=pending, oldest_read_at=oldest, now=self.clock(),
                           max_lines=self.max_lines, linger_s=self.linger_s)
        if pending == 0 or (wait > 0 and not flush and self.attempt == 0):
            return Idle(wait_s=wait)
        batch = self.spool.next_batch(self.max_lines)
        if batch is None:
            return Idle(wait_s=self.linger_s)
        try:
            reply = self.transport.post_lines(batch.body, idempotency_key=batch.key)
        except TransportError as exc:
            return self._retry(batch, str(exc), None)
        code = reply.body.get("code") if isinstance(reply.body, dict) else None
        disposition = classify(reply.status, code if isinstance(code, str) else None)
        if disposition is Disposition.SENT:
            return self._sent(batch, reply)
        if disposition is Disposition.RETRY:
            return self._retry(batch, f"HTTP {reply.status}", reply.headers.get("retry-after"))
        return self._rejected(batch, reply, halt=disposition is Disposition.REJECT_AND_HALT)

    def _sent(self, batch: BatchRows, reply: Reply) -> BatchSent:
        self.attempt = 0
        body = reply.body if isinstance(reply.body, dict) else {}
        rejected = [r for r in body.get("rejected") or [] if isinstance(r, dict)]
        by_line: dict[int, tuple[str, str]] = {}
        for item in rejected:
            number = item.get("line")
            if isinstance(number, int) and number not in by_line:
                by_line[number] = (str(item.get("code") or "rejected"), str(item.get("reason") or ""))
        self.spool.settle_sent(batch, by_line)
        verdicts = tuple(v for v in body.get("verdicts") or [] if isinstance(v, dict))
        return BatchSent(key=batch.key, lines=len(batch.rows), line_rejections=tuple(rejected),
                         verdicts=verdicts, upload=body.get("upload"))

    def _retry(self, batch: BatchRows, reason: str, retry_after: str | None) -> BatchRetrying:
        self.attempt += 1
        after = retry_after_seconds(retry_after, datetime.fromtimestamp(self.clock(), UTC))
        wait = self.backoff.delay(self.attempt, retry_after_s=after, draw=self.draw)
        return BatchRetrying(key=batch.key, attempt=self.attempt, wait_s=wait, reason=reason)

    def _rejected(self, batch: BatchRows, reply: Reply, *, halt: bool) -> BatchRejected:
        self.attempt = 0
        body = reply.body if isinstance(reply.body, dict) else {}
        code = str(body.get("code") or f"http_{reply.status}")
        reason = str(body.get("detail") or body.get("title") or f"HTTP {reply.status}")
        self.spool.settle_rejected(batch, code, reason)
        if halt:
            self.halted = f"HTTP {reply.status} {code}: {reason}"
        return BatchRejected(key=batch.key, lines=len(batch.rows), status=reply.status,
                             code=code, reason=reason)


def run_forwarder(forwarder: Forwarder, *, wait: Callable[[float, bool], bool],
                  on_event: Callable[[ForwardEvent], None],
                  draining: Callable[[], bool] = lambda: False) -> None:
    """Step until ``wait`` reports a stop. ``wait(s, wakeable)`` sleeps up to s seconds and returns
    True when the forwarder should stop; a wakeable wait (idle, linger) ends early when a new line
    is spooled, a backoff does not, or a meter sending steadily would defeat the backoff."""
    while True:
        event = forwarder.step(flush=draining())
        if not isinstance(event, Idle):
            on_event(event)
        if isinstance(event, BatchSent | BatchRejected):
            stop = wait(0.0, True)
        elif isinstance(event, BatchRetrying):
            stop = wait(event.wait_s, False)
        else:
            stop = wait(event.wait_s if isinstance(event, Idle) else 1.0, True)
        if stop:
            return
