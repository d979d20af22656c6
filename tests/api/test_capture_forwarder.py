"""Forwarder and retry policy: driven step by step with a scripted transport and a fake clock."""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from pathlib import Path

import pytest

from api.capture.forwarder import (
    BatchRejected,
    BatchRetrying,
    BatchSent,
    Forwarder,
    Halted,
    Idle,
    run_forwarder,
)
from api.capture.policy import Backoff, Disposition, classify, linger_wait, retry_after_seconds
from api.capture.spool import Spool
from api.capture.transport import Reply, TransportError


class ScriptedTransport:
    """Answers posts from a script; records every (key, body) it was sent."""

    def __init__(self, script: list[Reply | Exception | Callable[[str], Reply]]) -> None:
        self.script = script
        self.posts: list[tuple[str, str]] = []

    def post_lines(self, body: str, *, idempotency_key: str) -> Reply:
        self.posts.append((idempotency_key, body))
        item = self.script.pop(0) if self.script else Reply(status=200, body={"rejected": []})
        if isinstance(item, Exception):
            raise item
        return item(body) if callable(item) else item


class Clock:
    def __init__(self) -> None:
        self.now = 1_000.0

    def __call__(self) -> float:
        return self.now


@pytest.fixture()
def clock() -> Clock:
    return Clock()


def _forwarder(tmp_path: Path, clock: Clock, script: list, lines: int = 3,  # type: ignore[type-arg]
               **kw: object) -> tuple[Forwarder, ScriptedTransport, Spool]:
    spool = Spool(tmp_path / "s.sqlite", job="J", clock=clock)
    for n in range(1, lines + 1):
        spool.append(f"board=DB1 circuit={n} zs_ohm=0.{n}")
    transport = ScriptedTransport(script)
    fwd = Forwarder(spool=spool, transport=transport, clock=clock, draw=lambda: 0.0, **kw)  # type: ignore[arg-type]
    return fwd, transport, spool


@pytest.mark.parametrize(("status", "expected"), [
    # RFC 9110 §15: 2xx success, 5xx server error (transient); §15.5.9 408 Request Timeout;
    # RFC 6585 §4 429 Too Many Requests; IETF Idempotency-Key draft §2.7: 409 = same key in flight.
    (200, Disposition.SENT), (201, Disposition.SENT), (500, Disposition.RETRY),
    (503, Disposition.RETRY), (429, Disposition.RETRY), (408, Disposition.RETRY),
    (409, Disposition.RETRY), (400, Disposition.REJECT), (422, Disposition.REJECT),
    (413, Disposition.REJECT), (401, Disposition.REJECT_AND_HALT), (404, Disposition.REJECT_AND_HALT),
])
def test_classify_statuses(status: int, expected: Disposition) -> None:
    """Each status gets the treatment its RFC meaning implies (transient → retry, client error → keep)."""
    assert classify(status) is expected


@pytest.mark.parametrize(("code", "expected"), [
    ("idempotency_key_reused", Disposition.REJECT), ("idempotency_key_in_doubt", Disposition.REJECT),
    (None, Disposition.RETRY), ("something_else", Disposition.RETRY),
])
def test_409_that_can_never_succeed_is_rejected_not_retried(code: str | None, expected: Disposition) -> None:
    """Our API's 409 codes for a reused or in-doubt key are final (api/idempotency.py); a plain 409
    (key in flight, IETF Idempotency-Key draft §2.7 — from memory) is retried."""
    assert classify(409, code) is expected


def test_retry_after_both_forms() -> None:
    """Retry-After is delta-seconds or an HTTP-date (RFC 9110 §10.2.3); junk is ignored."""
    now = datetime(2026, 1, 1, 12, 0, 0, tzinfo=UTC)
    assert retry_after_seconds("7", now) == 7.0
    assert retry_after_seconds("Thu, 01 Jan 2026 12:00:30 GMT", now) == 30.0
    assert retry_after_seconds("soon", now) is None
    assert retry_after_seconds(None, now) is None


def test_backoff_doubles_with_jitter_and_cap() -> None:
    """Waits follow base·2^(n-1) scaled into [½, 1] by the jitter draw, capped (derived from the
    exponential-backoff formula in the module docstring)."""
    b = Backoff(base_s=0.5, cap_s=4.0)
    assert [b.delay(n, draw=lambda: 0.0) for n in (1, 2, 3, 4, 5)] == [0.25, 0.5, 1.0, 2.0, 2.0]
    assert b.delay(3, draw=lambda: 0.999999) == pytest.approx(2.0, abs=1e-5)
    assert b.delay(1, retry_after_s=12.0, draw=lambda: 0.0) == 12.0
    assert b.delay(1, retry_after_s=10_000.0, draw=lambda: 0.0) == b.retry_after_cap_s


def test_linger_waits_for_more_lines_unless_full() -> None:
    """A batch goes when full or when its oldest line has waited the linger time."""
    wait = linger_wait(pending=1, oldest_read_at=10.0, now=10.2, max_lines=50, linger_s=0.5)
    assert wait == pytest.approx(0.3)
    assert linger_wait(pending=50, oldest_read_at=10.0, now=10.0, max_lines=50, linger_s=0.5) == 0.0
    assert linger_wait(pending=2, oldest_read_at=10.0, now=11.0, max_lines=50, linger_s=0.5) == 0.0


def test_batch_waits_for_linger_then_sends_in_order(tmp_path: Path, clock: Clock) -> None:
    """Lines just read wait out the linger; then one batch carries them in spool order."""
    fwd, transport, spool = _forwarder(tmp_path, clock, [])
    assert isinstance(fwd.step(), Idle) and transport.posts == []
    clock.now += 0.6
    event = fwd.step()
    assert isinstance(event, BatchSent) and event.lines == 3
    assert transport.posts[0][1].splitlines() == [r.text for r in spool.rows()]
    assert spool.counts().sent == 3


def test_5xx_and_network_errors_retry_same_key_until_2xx(tmp_path: Path, clock: Clock) -> None:
    """500, 429 (Retry-After honoured) and a refused connection keep the lines unsent and resend the
    identical body under the identical Idempotency-Key."""
    script = [Reply(status=500), Reply(status=429, headers={"retry-after": "3"}),
              TransportError("connection refused"), Reply(status=200, body={"rejected": []})]
    fwd, transport, spool = _forwarder(tmp_path, clock, script)
    clock.now += 1
    events = [fwd.step() for _ in range(4)]
    assert [type(e) for e in events] == [BatchRetrying, BatchRetrying, BatchRetrying, BatchSent]
    assert isinstance(events[1], BatchRetrying) and events[1].wait_s == 3.0
    assert len(transport.posts) == 4 and len(set(transport.posts)) == 1  # same key, same body, four times
    assert spool.counts().sent == 3


def test_400_marks_batch_rejected_and_moves_on(tmp_path: Path, clock: Clock) -> None:
    """A 400 keeps the batch's lines in the spool, marked rejected with the problem's code, and the
    next batch still goes."""
    problem = {"code": "bad_body", "detail": "body is not text", "status": 400}
    fwd, _, spool = _forwarder(tmp_path, clock, [Reply(status=400, body=problem)],
                                       lines=4, max_lines=2)
    clock.now += 1
    first, second = fwd.step(), fwd.step()
    assert isinstance(first, BatchRejected) and (first.code, first.lines) == ("bad_body", 2)
    assert isinstance(second, BatchSent)
    assert [(r.state, r.code) for r in spool.rows()] == [
        ("rejected", "bad_body"), ("rejected", "bad_body"), ("sent", None), ("sent", None)]


def test_401_halts_and_leaves_later_lines_unsent(tmp_path: Path, clock: Clock) -> None:
    """A refused API key stops forwarding: the later lines are not marked rejected one batch at a time."""
    fwd, transport, spool = _forwarder(tmp_path, clock, [Reply(status=401, body={"code": "bad_key"})],
                                       lines=4, max_lines=2)
    clock.now += 1
    assert isinstance(fwd.step(), BatchRejected)
    assert isinstance(fwd.step(), Halted)
    assert len(transport.posts) == 1
    assert spool.counts().unsent == 2 and spool.counts().rejected == 2


def test_line_rejections_and_verdicts_come_back(tmp_path: Path, clock: Clock) -> None:
    """A 200 carrying per-line rejections and a failing verdict reports both and marks that row."""
    body = {"accepted": 2, "rejected": [{"line": 2, "code": "bad_value", "reason": "zs"}],
            "verdicts": [{"board": "DB1", "circuit": "1", "outcome": "fail", "checks": []}]}
    fwd, _, spool = _forwarder(tmp_path, clock, [Reply(status=200, body=body)])
    clock.now += 1
    event = fwd.step()
    assert isinstance(event, BatchSent) and event.verdicts[0]["outcome"] == "fail"
    assert [r.state for r in spool.rows()] == ["sent", "line_rejected", "sent"]


def test_run_forwarder_loop_sleeps_backoff_and_stops(tmp_path: Path, clock: Clock) -> None:
    """The loop sleeps the backoff the step asked for, unwakeable, and returns when told to stop."""
    fwd, _, spool = _forwarder(tmp_path, clock, [Reply(status=503), Reply(status=200, body={})])
    waits: list[tuple[float, bool]] = []

    def wait(seconds: float, wakeable: bool) -> bool:
        waits.append((seconds, wakeable))
        clock.now += max(seconds, 0.6)
        return spool.counts().unsent == 0

    seen: list[object] = []
    run_forwarder(fwd, wait=wait, on_event=seen.append)
    assert [type(e) for e in seen] == [BatchRetrying, BatchSent]
    # first retry: base 0.5 × 2⁰ × ½ (draw 0), and not cut short by newly spooled lines
    assert waits[-2][0] == pytest.approx(0.25) and waits[-2][1] is False
