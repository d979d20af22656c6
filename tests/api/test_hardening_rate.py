"""The rate limit is the configured one whatever the process count: a per-process store divides it,
a shared Redis store counts once for all (a real redis-server; skipped, with the reason, without one).

Sources: RFC 6585 §4 (429 Too Many Requests), RFC 9110 §10.2.3 (Retry-After); the limits library's
rate-limit string syntax ("N per M unit"), which flask-limiter reads.
"""

from __future__ import annotations

import socket
import uuid
from collections.abc import Callable

import pytest
from flask import Flask

from api.http.limits import divided_limit
from api.settings import SettingsError

REDIS_URL = "redis://127.0.0.1:6379/0"


def _redis_answers() -> bool:
    try:
        with socket.create_connection(("127.0.0.1", 6379), timeout=1) as probe:
            probe.sendall(b"PING\r\n")
            return probe.recv(16).startswith(b"+PONG")
    except OSError:
        return False


@pytest.mark.parametrize(("limit", "workers", "each"), [
    ("60/minute", 2, "30 per 1 minute"),
    ("600/minute", 3, "200 per 1 minute"),
    ("10 per 2 seconds; 100/hour", 4, "2 per 2 second; 25 per 1 hour"),
    ("7/minute", 2, "3 per 1 minute"),  # rounded down: never more than configured in all
    ("60/minute", 1, "60/minute"),
    ("", 4, ""),
])
def test_a_per_process_store_divides_the_limit(limit: str, workers: int, each: str) -> None:
    """With memory://, each of N workers allows floor(limit / N): N × that ≤ the limit."""
    assert divided_limit(limit, workers) == each


def test_a_limit_too_small_to_divide_is_refused() -> None:
    """1/minute over two workers counting alone cannot be honest: refused, not rounded up."""
    with pytest.raises(SettingsError, match="cannot be shared by 2 workers"):
        divided_limit("1/minute", 2)


def test_two_processes_sharing_redis_admit_exactly_the_limit(db_url: str,
                                                             app_factory: Callable[..., Flask]) -> None:
    """Two apps (as two workers or hosts) on one Redis: RATE_LIMIT=4/minute admits 4 in all, the 5th
    on either is a 429; with memory:// they would have admitted 8."""
    if not _redis_answers():
        pytest.skip("no redis-server answers on 127.0.0.1:6379 (Debian's redis-server package)")
    shared = {"OHMTALLY_RATE_LIMIT": "4/minute", "OHMTALLY_RATE_LIMIT_STORAGE": REDIS_URL,
              "OHMTALLY_RATE_LIMIT_PREFIX": f"ohmtally-test-{uuid.uuid4().hex[:8]}", "OHMTALLY_WORKERS": "2"}
    first, second = (app_factory(db_url, **shared).test_client() for _ in range(2))
    statuses = [(first if n % 2 else second).get("/v1/jobs").status_code for n in range(8)]
    assert statuses.count(200) == 4 and statuses[4:] == [429] * 4
    limited = first.get("/v1/jobs")
    assert limited.get_json()["code"] == "rate_limited" and 1 <= int(limited.headers["Retry-After"]) <= 60


def test_an_unreachable_shared_store_falls_back_to_divided_counting(db_url: str,
                                                                   app_factory: Callable[..., Flask]) -> None:
    """Redis down (nothing listens on the port): requests are still served and limited per process
    (RATE_LIMIT / WORKERS each), never a 500."""
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    app = app_factory(db_url, OHMTALLY_RATE_LIMIT="4/minute", OHMTALLY_WORKERS="2",
                      OHMTALLY_RATE_LIMIT_STORAGE=f"redis://127.0.0.1:{port}/0")
    client = app.test_client()
    statuses = [client.get("/v1/jobs").status_code for _ in range(4)]
    assert statuses == [200, 200, 429, 429]
