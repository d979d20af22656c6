"""Idempotency and merge invariants under retries and concurrency: the result equals a sequential replay.

Invariants checked (from api/README.md, "Readings into a job": "later readings win, earlier kept in
history" and the issue's idempotency rules, not from our code):
- each distinct (key, body) is merged exactly once, however often and in
  whatever interleaving it is resent;
- the final records and every field's history equal those of posting the
  stored uploads one by one, in the order the server took them, to a fresh job.
"""

from __future__ import annotations

import random
import threading
import uuid
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.api.keyring import bearer, issue_key, unique_org

pytestmark = pytest.mark.postgres

_FIELDS = ("zs_ohm", "r1_r2_ohm", "ir_le_mohm")


def _line(board: str, circuit: int, field: str, value: float) -> str:
    return f"board={board} circuit={circuit} {field}={value:.2f}"


def _body(rng: random.Random, lines: int) -> bytes:
    # Few circuits and fields, so posts overlap and "later wins" is exercised.
    return ("\n".join(_line("DB1", rng.randint(1, 3), rng.choice(_FIELDS), rng.uniform(0.1, 2.0))
                      for _ in range(lines)) + "\n").encode()


def _post(client: FlaskClient, job_id: int, body: bytes, key: str | None, auth: dict[str, str]) -> Any:
    headers = {**auth, **({"Idempotency-Key": key} if key else {})}
    return client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=body, content_type="text/plain",
                       headers=headers)


def _state(client: FlaskClient, job_id: int, auth: dict[str, str]) -> list[dict[str, Any]]:
    circuits = client.get(f"/v1/jobs/{job_id}/circuits?history=true", headers=auth).get_json()["circuits"]
    return sorted(({"key": (c["board"], c["circuit"]), "record": c["record"],
                    "history": {f: [v["value"] for v in vs] for f, vs in c["history"].items()}}
                   for c in circuits), key=lambda c: c["key"])


def _replay_sequentially(client: FlaskClient, auth: dict[str, str], bodies: list[bytes]) -> int:
    job_id: int = client.post("/v1/jobs", json={"reference": "REPLAY", "site": "replay"},
                              headers=auth).get_json()["id"]
    for n, body in enumerate(bodies):
        assert _post(client, job_id, body, f"replay-{uuid.uuid4().hex}-{n}", auth).status_code == 200
    return job_id


def _stored_bodies(client: FlaskClient, job_id: int, auth: dict[str, str]) -> list[bytes]:
    uploads = client.get(f"/v1/jobs/{job_id}/uploads", headers=auth).get_json()["uploads"]
    return [client.get(f"/v1/jobs/{job_id}/uploads/{u['id']}", headers=auth).get_data() for u in uploads]


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 2**32 - 1), posts=st.integers(1, 6),
       plan=st.lists(st.integers(0, 5), min_size=1, max_size=14))
def test_retries_in_any_order_equal_one_post_each(auth_app: Flask, seed: int, posts: int,
                                                  plan: list[int]) -> None:
    """Any sequence of keyed (re)sends leaves the state of posting each body once, in first-send order."""
    rng = random.Random(seed)
    client = auth_app.test_client()
    auth = bearer(issue_key(auth_app, unique_org())[1])
    job_id = client.post("/v1/jobs", json={"reference": "H", "site": "h"}, headers=auth).get_json()["id"]
    bodies = [_body(rng, rng.randint(1, 5)) for _ in range(posts)]
    keys = [f"k-{uuid.uuid4().hex}" for _ in range(posts)]
    first_order: list[int] = []
    answers: dict[int, bytes] = {}
    for step in plan:
        n = step % posts
        response = _post(client, job_id, bodies[n], keys[n], auth)
        assert response.status_code == 200
        if n in answers:
            assert response.get_data() == answers[n]  # the first answer, byte for byte
        else:
            answers[n] = response.get_data()
            first_order.append(n)
    assert _stored_bodies(client, job_id, auth) == [bodies[n] for n in first_order]
    reference = _replay_sequentially(client, auth, [bodies[n] for n in first_order])
    assert _state(client, job_id, auth) == _state(client, reference, auth)


def test_twenty_threads_with_retries_equal_a_sequential_replay(auth_app: Flask) -> None:
    """20 threads post overlapping readings to one job, resending at random; counts exact, replay equal."""
    rng = random.Random(20261201)
    auth = bearer(issue_key(auth_app, unique_org())[1])
    setup = auth_app.test_client()
    created = setup.post("/v1/jobs", json={"reference": "T20", "site": "threads"}, headers=auth)
    job_id = created.get_json()["id"]
    per_thread = 3
    work = [[(f"t{t}-p{p}-{uuid.uuid4().hex[:6]}", _body(rng, rng.randint(2, 8)), rng.randint(0, 2))
             for p in range(per_thread)] for t in range(20)]
    # Every 5th thread also resends another thread's first post, racing its owner.
    for t in range(0, 20, 5):
        work[t].append((work[t + 1][0][0], work[t + 1][0][1], 1))
    failures: list[str] = []
    start = threading.Barrier(20)

    def worker(items: list[tuple[str, bytes, int]], seed: int) -> None:
        local = random.Random(seed)
        client = auth_app.test_client()
        start.wait()
        for key, body, retries in items:
            for _attempt in range(1 + retries):
                response = _post(client, job_id, body, key, auth)
                if response.status_code != 200:
                    failures.append(f"{key}: {response.status_code} {response.get_data()[:200]!r}")
                if local.random() < 0.3:
                    threading.Event().wait(local.uniform(0, 0.01))

    threads = [threading.Thread(target=worker, args=(items, n)) for n, items in enumerate(work)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    assert not failures, failures[:3]
    distinct = {key: body for items in work for key, body, _r in items}
    stored = _stored_bodies(setup, job_id, auth)
    assert len(stored) == len(distinct) == 20 * per_thread
    assert sorted(stored) == sorted(distinct.values())
    values = sum(len(body.splitlines()) for body in distinct.values())
    state = _state(setup, job_id, auth)
    assert sum(len(v) for c in state for v in c["history"].values()) == values
    reference = _replay_sequentially(setup, auth, stored)
    assert state == _state(setup, reference, auth)
