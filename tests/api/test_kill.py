"""A real `ohmtally serve` killed (SIGKILL, whole process group) in the middle of large readings posts:
after a restart no upload is partial and nothing stored earlier is lost, on SQLite and PostgreSQL.

What makes it hold: one post is one database transaction (the upload row,
every merged value and the idempotency record commit together), and both
SQLite in WAL mode and PostgreSQL make a committed transaction durable and
an uncommitted one vanish on a crash (SQLite "Atomic Commit", PostgreSQL
WAL; common practice, relied on, not re-derived here).
"""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from typing import Any

import httpx
import pytest

from api.cli.demo import free_port
from tests.api.paging import all_pages

pytestmark = pytest.mark.postgres

ROUNDS = 3
LINES = 2500  # a post that takes a few seconds, so a kill lands inside it


def _big_body(seed: int) -> bytes:
    rng = random.Random(seed)
    return b"".join(b"board=DB%d circuit=%d zs=%.2f r1r2=%.2f\n" % (
        n % 25, n, rng.uniform(0.1, 1.5), rng.uniform(0.05, 0.9)) for n in range(LINES))


class Server:
    """`ohmtally serve` in its own process group on a free loopback port."""

    def __init__(self, db_url: str) -> None:
        self.db_url = db_url
        self.child: subprocess.Popen[bytes] | None = None
        self.base = ""

    def start(self) -> str:
        port = free_port()
        env = {**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_DATABASE_URL": self.db_url,
               "OHMTALLY_LOG_LEVEL": "WARNING", "OHMTALLY_RATE_LIMIT": ""}
        command = [sys.executable, "-c", "from api.cli import main; raise SystemExit(main())",
                   "serve", "--bind", f"127.0.0.1:{port}", "--workers", "1", "--timeout", "120"]
        self.child = subprocess.Popen(command, env=env, start_new_session=True,
                                      stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        self.base = f"http://127.0.0.1:{port}"
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            try:
                if httpx.get(f"{self.base}/v1/health", timeout=1).status_code == 200:
                    return self.base
            except httpx.HTTPError:
                time.sleep(0.1)
        raise AssertionError("the server did not come up")

    def kill(self) -> None:
        """SIGKILL the master and its workers at once: nothing gets to clean up."""
        assert self.child is not None
        os.killpg(self.child.pid, signal.SIGKILL)
        self.child.wait(timeout=10)


@pytest.fixture
def server(db_url: str) -> Iterator[Server]:
    from api.db.schema import upgrade

    upgrade(db_url)  # a PostgreSQL schema is migrated already; SQLite's copy too: a no-op
    made = Server(db_url)
    yield made
    if made.child is not None and made.child.poll() is None:
        made.kill()


def _snapshot(base: str, job_id: int) -> dict[str, Any]:
    with httpx.Client(base_url=base, timeout=60) as client:
        uploads = client.get(f"/v1/jobs/{job_id}/uploads").json()["uploads"]
        circuits = all_pages(client, f"/v1/jobs/{job_id}/circuits?history=true", "circuits")
    per_upload: dict[int, int] = {}
    for circuit in circuits:
        for values in circuit["history"].values():
            for value in values:
                per_upload[value["upload_id"]] = per_upload.get(value["upload_id"], 0) + 1
    return {"uploads": uploads, "circuits": circuits, "per_upload": per_upload}


def _assert_whole(snapshot: dict[str, Any]) -> None:
    """Every stored upload has exactly as many history rows as it says it merged: none is partial."""
    for upload in snapshot["uploads"]:
        assert snapshot["per_upload"].get(upload["id"], 0) == upload["accepted"], upload
    assert set(snapshot["per_upload"]) <= {u["id"] for u in snapshot["uploads"]}


def _records(snapshot: dict[str, Any], upload_ids: set[int]) -> dict[tuple[str, str], Any]:
    """Each circuit's history restricted to the given uploads (what those uploads wrote)."""
    out: dict[tuple[str, str], Any] = {}
    for circuit in snapshot["circuits"]:
        kept = {f: [(v["value"], v["upload_id"]) for v in vs if v["upload_id"] in upload_ids]
                for f, vs in circuit["history"].items()}
        out[(circuit["board"], circuit["circuit"])] = {f: v for f, v in kept.items() if v}
    return out


def test_sigkill_mid_post_leaves_no_partial_upload_and_loses_nothing(server: Server) -> None:
    """Kill the server 3 times inside large posts: each is all there or not at all; earlier data intact."""
    base = server.start()
    with httpx.Client(base_url=base, timeout=60) as client:
        job_id = client.post("/v1/jobs", json={"reference": "KILL", "site": "invented"}).json()["id"]
        for seed in (0, 100):  # the second post updates every circuit, as the killed ones will: time it
            started = time.monotonic()
            earlier = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", content=_big_body(seed),
                                  headers={"Content-Type": "text/plain"})
            duration = time.monotonic() - started
            assert earlier.status_code == 200 and earlier.json()["accepted"] == 2 * LINES
    killed_inside = 0
    rng = random.Random(6)
    for round_ in range(1, ROUNDS + 1):
        before = _snapshot(base, job_id)
        outcome: dict[str, Any] = {}

        def post(body: bytes, key: str, base: str = base, outcome: dict[str, Any] = outcome) -> None:
            try:
                with httpx.Client(base_url=base, timeout=120) as client:
                    outcome["response"] = client.post(
                        f"/v1/jobs/{job_id}/readings?adapter=lines", content=body,
                        headers={"Content-Type": "text/plain", "Idempotency-Key": key})
            except httpx.HTTPError as exc:
                outcome["error"] = exc

        body, key = _big_body(round_), f"kill-{round_}"
        thread = threading.Thread(target=post, args=(body, key))
        thread.start()
        time.sleep(duration * rng.uniform(0.15, 0.5))
        server.kill()
        thread.join(timeout=60)
        base = server.start()
        after = _snapshot(base, job_id)
        _assert_whole(after)
        earlier_ids = {u["id"] for u in before["uploads"]}
        assert after["uploads"][:len(before["uploads"])] == before["uploads"]  # every earlier upload kept
        assert _records(after, earlier_ids) == _records(before, earlier_ids)  # and what it wrote
        new = after["uploads"][len(before["uploads"]):]
        assert len(new) <= 1
        if "response" not in outcome:
            killed_inside += int(not new)
        print(f"round {round_}: post took {duration:.2f} s alone; answered: {'response' in outcome}; "
              f"stored: {bool(new)}")
        # The logger's resend (same key) after the restart: merged exactly once in all.
        with httpx.Client(base_url=base, timeout=120) as client:
            resent = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", content=body,
                                 headers={"Content-Type": "text/plain", "Idempotency-Key": key})
        assert resent.status_code == 200
        final = _snapshot(base, job_id)
        _assert_whole(final)
        assert len(final["uploads"]) == len(before["uploads"]) + 1
    assert killed_inside >= 1, "no kill landed inside a post: the test proved nothing"
