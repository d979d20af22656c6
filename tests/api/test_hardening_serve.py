"""Against a real `ohmtally serve` (gunicorn, two workers): a chunked body over the size limit is
refused whole; the rate limit is the configured one whatever the worker count (memory://
divides it, redis:// shares it); each instance has its own control socket, or none.

Sources: RFC 9112 §7.1 (chunked transfer coding), RFC 9110 §15.5.14 (413), RFC 6585 §4 (429);
gunicorn's settings reference (control_socket, control_socket_disable, since 25.1).
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import uuid
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest

from api.cli.demo import free_port, wait_healthy
from api.db.schema import upgrade

ROOT = Path(__file__).resolve().parents[2]
REDIS = ("127.0.0.1", 6379)


def _redis_answers() -> bool:
    try:
        with socket.create_connection(REDIS, timeout=1) as probe:
            probe.sendall(b"PING\r\n")
            return probe.recv(16).startswith(b"+PONG")
    except OSError:
        return False


class Served:
    def __init__(self, tmp_path: Path, *args: str, **env: str) -> None:
        url = f"sqlite:///{tmp_path / f'served-{uuid.uuid4().hex[:6]}.sqlite3'}"
        upgrade(url)
        self.port = free_port()
        self.base = f"http://127.0.0.1:{self.port}"
        full_env = {**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "WARNING",
                    "OHMTALLY_WEBHOOK_WORKER": "off", "OHMTALLY_DATABASE_URL": url,
                    "OHMTALLY_INSTANCE_PATH": str(tmp_path), **env}
        self.log = tmp_path / f"serve-{self.port}.log"
        with self.log.open("wb") as log:  # a file, not a pipe: a full pipe would stall the server
            self.child = subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind",
                                           f"127.0.0.1:{self.port}", "--workers", "2", *args],
                                          cwd=ROOT, env=full_env, stderr=log)

    def __enter__(self) -> Served:
        if not wait_healthy(self.base, self.child):
            self.stop()
            raise AssertionError("ohmtally serve did not come up: " + self.log.read_text()[-2000:])
        return self

    def stop(self) -> None:
        self.child.terminate()
        try:
            self.child.wait(timeout=20)
        except subprocess.TimeoutExpired:
            self.child.kill()

    def __exit__(self, *_exc: object) -> None:
        self.stop()


@pytest.fixture
def limited(tmp_path: Path) -> Iterator[Served]:
    with Served(tmp_path, OHMTALLY_RATE_LIMIT="") as served:
        yield served


def _csv_chunks(rows: int) -> Iterator[bytes]:
    yield b"board,circuit,zs_ohm,description\n"
    for start in range(0, rows, 1000):
        yield b"".join(b"DB1,%d,0.41,%s\n" % (n, b"x" * 1000) for n in range(start, min(rows, start + 1000)))


def test_a_chunked_body_over_the_limit_is_refused_whole_by_a_real_server(limited: Served) -> None:
    """20,000 rows of ~1 KB (20.7 MB) sent chunked to `serve` (limit 16 MiB): 413 body_too_large, not
    kept, nothing merged (it was cut at 16 MiB and answered 200 with 16,190 circuits merged)."""
    with httpx.Client(base_url=limited.base, timeout=60) as client:
        job = client.post("/v1/jobs", json={"reference": "CHUNK", "site": "s"}).json()
        started = time.perf_counter()
        try:
            answer = client.post(f"/v1/jobs/{job['id']}/readings", content=_csv_chunks(20_000),
                                 headers={"Content-Type": "text/csv"})
        except httpx.TransportError:  # the server may close once it has refused: nothing was taken
            answer = None
        elapsed = time.perf_counter() - started
        if answer is not None:
            assert answer.status_code == 413, answer.text[:300]
            assert answer.json()["code"] == "body_too_large" and answer.json()["kept"] is False
        assert client.get(f"/v1/jobs/{job['id']}/circuits").json()["circuits"] == []
        assert client.get(f"/v1/jobs/{job['id']}/uploads").json()["uploads"] == []
        assert elapsed < 30
        small = b"board,circuit,zs_ohm\n" + b"".join(b"DB1,%d,0.41\n" % n for n in range(100))
        taken = client.post(f"/v1/jobs/{job['id']}/readings", content=iter([small[:500], small[500:]]),
                            headers={"Content-Type": "text/csv"})  # chunked and within the limit
        assert taken.status_code == 200 and taken.json()["accepted"] == 100


def _admitted(base: str, count: int) -> int:
    """Requests admitted out of ``count``, each on a new connection (so both workers take some)."""
    ok = 0
    for _ in range(count):
        with httpx.Client(base_url=base, timeout=10) as client:
            status = client.get("/v1/jobs").status_code
        assert status in (200, 429)
        ok += status == 200
    return ok


def test_two_workers_with_a_memory_store_never_admit_more_than_the_limit(tmp_path: Path) -> None:
    """RATE_LIMIT=10/minute, memory://, `serve --workers 2`: at most 10 of 40 requests pass (each
    worker counts alone and allows 5); it let 20 through."""
    with Served(tmp_path, OHMTALLY_RATE_LIMIT="10/minute") as served:
        admitted = _admitted(served.base, 40)
    assert 5 <= admitted <= 10, admitted


def test_two_workers_sharing_redis_admit_exactly_the_limit(tmp_path: Path) -> None:
    """RATE_LIMIT=10/minute with redis:// (a real redis-server): exactly 10 of 40 requests pass."""
    if not _redis_answers():
        pytest.skip("no redis-server answers on 127.0.0.1:6379 (Debian's redis-server package)")
    prefix = f"ohmtally-test-{uuid.uuid4().hex[:8]}"
    with Served(tmp_path, OHMTALLY_RATE_LIMIT="10/minute", OHMTALLY_RATE_LIMIT_PREFIX=prefix,
                OHMTALLY_RATE_LIMIT_STORAGE="redis://127.0.0.1:6379/0") as served:
        admitted = _admitted(served.base, 40)
    assert admitted == 10


def test_a_limit_too_small_to_divide_stops_serve(tmp_path: Path) -> None:
    """RATE_LIMIT=1/minute with memory:// and two workers cannot be honest: `serve` exits 3 saying so."""
    url = f"sqlite:///{tmp_path / 'tiny.sqlite3'}"
    upgrade(url)
    done = subprocess.run([sys.executable, "-m", "api.cli", "serve", "--bind", f"127.0.0.1:{free_port()}",
                           "--workers", "2"], cwd=ROOT, capture_output=True, text=True, timeout=60,
                          env={**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_DATABASE_URL": url,
                               "OHMTALLY_RATE_LIMIT": "1/minute", "OHMTALLY_INSTANCE_PATH": str(tmp_path)})
    assert done.returncode == 3 and "cannot be shared by 2 workers" in done.stderr


def test_each_instance_has_its_own_control_socket_or_none(tmp_path: Path) -> None:
    """Two instances of one user: by default neither leaves a socket at gunicorn's shared default path
    ($XDG_RUNTIME_DIR/gunicorn.ctl), so neither removes the other's; asked for, each has its own."""
    runtime = tmp_path / "runtime"
    runtime.mkdir()
    first_dir, second_dir = tmp_path / "one", tmp_path / "two"
    first_dir.mkdir()
    second_dir.mkdir()
    with Served(first_dir, XDG_RUNTIME_DIR=str(runtime)), Served(second_dir, XDG_RUNTIME_DIR=str(runtime)):
        assert not (runtime / "gunicorn.ctl").exists()
    first_socket, second_socket = first_dir / "ctl", second_dir / "ctl"
    with Served(first_dir, "--control-socket", str(first_socket), XDG_RUNTIME_DIR=str(runtime)), \
            Served(second_dir, "--control-socket", str(second_socket), XDG_RUNTIME_DIR=str(runtime)):
        deadline = time.monotonic() + 10
        while time.monotonic() < deadline and not (first_socket.exists() and second_socket.exists()):
            time.sleep(0.1)
        assert first_socket.is_socket() and second_socket.is_socket()
    assert not (runtime / "gunicorn.ctl").exists()


def test_every_line_serve_writes_is_json(tmp_path: Path) -> None:
    """A log collector reads one format: at OHMTALLY_LOG_LEVEL=INFO, gunicorn's own lines (the
    arbiter's start, each worker's boot, the shutdown) and the app's request lines are each one
    JSON object with time, level, logger and message."""
    with Served(tmp_path, OHMTALLY_LOG_LEVEL="INFO") as served:
        assert httpx.get(f"{served.base}/v1/health", timeout=10).status_code == 200
    lines = [line for line in served.log.read_text(encoding="utf-8").splitlines() if line.strip()]
    parsed = [json.loads(line) for line in lines]  # a plain-text line fails here, naming itself
    assert all({"time", "level", "logger", "message"} <= set(entry) for entry in parsed), parsed
    loggers = {entry["logger"] for entry in parsed}
    assert "gunicorn.error" in loggers and "ohmtally.api" in loggers, loggers
    assert any(entry["message"] == "request" and entry.get("path") == "/v1/health" for entry in parsed)
