"""Two ``ohmtally serve`` instances (two workers each) on one PostgreSQL database, behind one "proxy".

What an operator running two hosts needs to hold: readings posted to both are all
kept; one Idempotency-Key sent to both at once is applied once; webhook events made
on both are each delivered once, by whichever instance's sender claims them; each
instance's metrics sum its own workers; and with Redis the rate limit is one count
for both. The instances are real servers (gunicorn), started as an operator would,
each with its own instance folder (as two hosts would have), on loopback ports; the
receiver is the standard library's http.server; the client addresses are
X-Forwarded-For values from the documentation ranges (RFC 5737, RFC 3849), as the
proxy in front would write them. Bounded: about 20 s, every wait has a deadline.
"""

from __future__ import annotations

import importlib.util
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
import uuid
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import httpx
import pytest
from cryptography.fernet import Fernet
from prometheus_client.parser import text_string_to_metric_families
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from api.cli.demo import free_port, wait_healthy
from api.db.schema import upgrade
from api.http.idempotency import REPLAY_HEADER
from tests.api.webhook_receiver import ALL_EVENTS, Receiver

pytestmark = [pytest.mark.postgres, pytest.mark.slow]
ROOT = Path(__file__).resolve().parents[2]
POSTGRES_ENV = "OHMTALLY_TEST_POSTGRES_URL"
LOGGERS, POSTS_EACH = 6, 5  # six field loggers, five uploads each, alternating between the instances
RATE = 40  # requests per minute per client address: above what one logger sends here


def _answers(host: str, port: int) -> bool:
    try:
        with socket.create_connection((host, port), timeout=2):
            return True
    except OSError:
        return False


def _postgres() -> str:
    base = os.environ.get(POSTGRES_ENV)
    if not base:
        pytest.skip(f"{POSTGRES_ENV} is not set")
    url = make_url(base)
    if not _answers(url.host or "127.0.0.1", url.port or 5432):
        pytest.skip(f"PostgreSQL does not answer at {url.host}:{url.port or 5432}")
    return base


def _redis() -> tuple[str, str | None]:
    """(rate-limit storage URI, why not Redis) — Redis where the client library and the server are."""
    if importlib.util.find_spec("redis") is None:
        return "memory://", "the redis client library is not installed (pip install ohmtally[redis])"
    if not _answers("127.0.0.1", 6379):
        return "memory://", "Redis does not answer at 127.0.0.1:6379"
    return "redis://127.0.0.1:6379/0", None


@dataclass
class Pair:
    bases: tuple[str, str]
    database_url: str
    receiver: Receiver
    no_redis: str | None


def _start(port: int, env: dict[str, str], log: Path) -> subprocess.Popen[bytes]:
    with log.open("wb") as sink:
        return subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind", f"127.0.0.1:{port}",
                                 "--workers", "2"], cwd=ROOT, env=env, stdout=sink, stderr=subprocess.STDOUT,
                                start_new_session=True)


def _stop(child: subprocess.Popen[bytes]) -> None:
    if child.poll() is None:
        child.send_signal(signal.SIGTERM)
        try:
            child.wait(timeout=15)
        except subprocess.TimeoutExpired:
            os.killpg(child.pid, signal.SIGKILL)
            child.wait(timeout=5)


@pytest.fixture(scope="module")
def pair(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Pair]:
    base = _postgres()
    schema = f"ohmtally_two_{uuid.uuid4().hex[:10]}"
    admin = create_engine(base)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    url = make_url(base).update_query_dict({"options": f"-csearch_path={schema}"}).render_as_string(
        hide_password=False)
    receiver = Receiver().start()
    children: list[subprocess.Popen[bytes]] = []
    folder = tmp_path_factory.mktemp("two-instances")
    try:
        upgrade(url)
        storage, no_redis = _redis()
        shared = {**os.environ, "OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off",
                  "OHMTALLY_WEBHOOK_ALLOW_PRIVATE": "on", "OHMTALLY_WEBHOOK_RETRY_BASE_S": "1",
                  "OHMTALLY_ENCRYPTION_KEY": Fernet.generate_key().decode(),
                  "OHMTALLY_TRUSTED_PROXIES": "1", "OHMTALLY_RATE_LIMIT": f"{RATE}/minute",
                  "OHMTALLY_RATE_LIMIT_STORAGE": storage, "OHMTALLY_LOG_LEVEL": "WARNING"}
        shared.pop("PROMETHEUS_MULTIPROC_DIR", None)
        ports = (free_port(), free_port())
        for name, port in zip("ab", ports, strict=True):
            (folder / name).mkdir()
            children.append(_start(port, {**shared, "OHMTALLY_INSTANCE_PATH": str(folder / name)},
                                   folder / f"{name}.log"))
        bases = tuple(f"http://127.0.0.1:{port}" for port in ports)
        for base_url, child, name in zip(bases, children, "ab", strict=True):
            if not wait_healthy(base_url, child, timeout=30):
                pytest.fail(f"instance {name} did not start:\n{(folder / f'{name}.log').read_text()[-3000:]}")
            assert httpx.get(f"{base_url}/v1/ready", timeout=5).status_code == 200
        yield Pair((bases[0], bases[1]), url, receiver, no_redis)
    finally:
        for child in children:
            _stop(child)
        receiver.stop()
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
        admin.dispose()


def _client(address: str) -> dict[str, str]:
    return {"X-Forwarded-For": address}


def _scalar(url: str, query: str) -> Any:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return connection.execute(text(query)).scalar_one()
    finally:
        engine.dispose()


def _merged_uploads(base: str) -> float:
    body = httpx.get(f"{base}/v1/metrics", timeout=10).text
    for family in text_string_to_metric_families(body):
        for sample in family.samples:
            if sample.name == "ohmtally_uploads_total" and sample.labels.get("status") == "merged":
                return sample.value
    return 0.0


def test_two_instances_lose_nothing_and_apply_nothing_twice(pair: Pair) -> None:
    """30 uploads from 6 loggers alternating between the instances are all merged, every value in the
    history; one Idempotency-Key sent to both at once merges once; each webhook event is received
    exactly once; each instance's metrics count its own uploads across both of its workers."""
    a, b = pair.bases
    hook = httpx.post(f"{a}/v1/webhooks", json={"url": pair.receiver.url, "events": ALL_EVENTS}, timeout=10)
    assert hook.status_code == 201, hook.text
    jobs = [httpx.post(f"{base}/v1/jobs", json={"reference": f"TWO-{n}", "site": "Invented site"},
                       timeout=10).json()["id"] for n, base in enumerate(pair.bases)]
    sent = Counter[str]()
    errors: list[str] = []

    def logger(number: int) -> None:
        address = f"198.51.100.{number + 1}"
        with httpx.Client(timeout=30) as http:
            for post in range(POSTS_EACH):
                base = pair.bases[(number + post) % 2]
                csv = f"board,circuit,zs_ohm\nL{number},{post % 2 + 1},0.{post + 1}{number}\n"
                answer = http.post(f"{base}/v1/jobs/{jobs[number % 2]}/readings", content=csv,
                                   headers={"Content-Type": "text/csv", **_client(address)})
                if answer.status_code != 200:
                    errors.append(f"logger {number} post {post}: {answer.status_code} {answer.text[:200]}")
                sent[base] += 1

    threads = [threading.Thread(target=logger, args=(n,)) for n in range(LOGGERS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert not errors, errors

    # the same key to both instances at the same moment: one merge, two equal answers
    body = "board,circuit,zs_ohm\nKEYED,1,0.31\n"
    barrier = threading.Barrier(2)
    answers: dict[str, httpx.Response] = {}

    def keyed(base: str) -> None:
        with httpx.Client(timeout=30) as http:
            barrier.wait(timeout=10)
            answers[base] = http.post(f"{base}/v1/jobs/{jobs[0]}/readings", content=body,
                                      headers={"Content-Type": "text/csv", "Idempotency-Key": "two-hosts-1",
                                               **_client("198.51.100.99")})

    both = [threading.Thread(target=keyed, args=(base,)) for base in pair.bases]
    for thread in both:
        thread.start()
    for thread in both:
        thread.join(timeout=60)
    assert [answers[base].status_code for base in pair.bases] == [200, 200]
    assert answers[a].json() == answers[b].json()
    assert sum(REPLAY_HEADER in answers[base].headers for base in pair.bases) == 1

    # nothing lost, nothing twice: uploads per job, and every value in the circuits' history
    uploads = [len(httpx.get(f"{b}/v1/jobs/{job}/uploads", timeout=10).json()["uploads"]) for job in jobs]
    expected = [sum(POSTS_EACH for n in range(LOGGERS) if n % 2 == k) for k in (0, 1)]
    assert uploads == [expected[0] + 1, expected[1]]
    for k, job in enumerate(jobs):
        circuits = httpx.get(f"{a}/v1/jobs/{job}/circuits", params={"history": "true", "limit": 100},
                             timeout=10).json()["circuits"]
        values = sum(len(c["history"].get("zs_ohm", [])) for c in circuits)
        assert values == expected[k] + (1 if k == 0 else 0)

    # each event delivered once: wait (bounded) until no delivery is pending, then compare
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline:
        waiting = "SELECT count(*) FROM webhook_deliveries WHERE status <> 'delivered'"
        if _scalar(pair.database_url, waiting) == 0:
            break
        time.sleep(0.25)
    events = _scalar(pair.database_url, "SELECT count(*) FROM webhook_events")
    assert events >= 2 + LOGGERS * POSTS_EACH + 1  # job.created × 2, readings.accepted per merge
    received = Counter(json.loads(receipt.body)["id"] for receipt in pair.receiver.receipts)
    assert len(received) == events and set(received.values()) == {1}, received.most_common(3)

    # metrics: each instance's scrape (whichever worker answers) counts both of its workers' uploads
    for base in pair.bases:
        keyed_here = 0 if REPLAY_HEADER in answers[base].headers else 1
        merged = {_merged_uploads(base) for _ in range(4)}  # four scrapes: likely both workers answer
        assert merged == {sent[base] + keyed_here}


def test_the_rate_limit_is_one_count_for_both_instances(pair: Pair) -> None:
    """With Redis: one client sending 50 requests, half to each instance, gets exactly the limit (40)
    through and the rest 429 — the instances share one count."""
    if pair.no_redis:
        pytest.skip(pair.no_redis)
    address = f"2001:db8::{uuid.uuid4().hex[:4]}:{uuid.uuid4().hex[:4]}"  # RFC 3849: never routed
    statuses = Counter[int]()
    with httpx.Client(timeout=10) as http:
        for n in range(50):
            statuses[http.get(f"{pair.bases[n % 2]}/v1/jobs", headers=_client(address)).status_code] += 1
    assert statuses == {200: RATE, 429: 50 - RATE}
