"""Webhook delivery: at least once, in order per job, retried with backoff, never sent twice at once.

External references:
- Verdict outcomes come from engine.verify on the same records; which
  outcome a record has follows BS 7671 Reg. 643.6 for polarity (recorded as
  incorrect fails, recorded as correct passes; the other checks of a record
  with no other readings are incomplete).
- The backoff is checked against the schedule api/webhooks/README.md ("Delivery guarantees") documents:
  wait = base × 2^(n−1) after the n-th failure, capped (derived from that formula).
- The receiver is the standard library's http.server on a loopback port.
Everything runs on loopback with OHMTALLY_WEBHOOK_ALLOW_PRIVATE on, bounded in time.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import httpx
import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select
from sqlalchemy.orm import Session
from standardwebhooks.webhooks import Webhook

from api.cli.demo import free_port, wait_healthy
from api.db.models import WebhookDelivery, WebhookEvent
from api.db.schema import upgrade
from api.webhooks.delivery import DeliveryConfig, backoff_s, run_once
from api.webhooks.sealing import box_for_app
from engine import NOTICE, build_record, verify
from tests.api.test_webhooks import deliver, header, received
from tests.api.webhook_receiver import ALL_EVENTS, FAST, Receiver

ROOT = Path(__file__).resolve().parents[2]


def _subscribe(client: FlaskClient, url: str, events: list[str] | None = None) -> dict[str, Any]:
    response = client.post("/v1/webhooks", json={"url": url, "events": events or ALL_EVENTS})
    assert response.status_code == 201
    body: dict[str, Any] = response.get_json()
    return body


def _job(client: FlaskClient, reference: str) -> int:
    response = client.post("/v1/jobs", json={"reference": reference, "site": "Invented site"})
    job_id: int = response.get_json()["id"]
    return job_id


def _post(client: FlaskClient, job_id: int, *circuits: dict[str, Any]) -> dict[str, Any]:
    response = client.post(f"/v1/jobs/{job_id}/readings", json={"circuits": list(circuits)})
    assert response.status_code == 200, response.get_json()
    body: dict[str, Any] = response.get_json()
    return body


def _deliver_until(app: Flask, receiver: Receiver, count: int, config: DeliveryConfig = FAST,
                   within_s: float = 10.0) -> None:
    deadline = time.monotonic() + within_s
    while len(receiver.receipts) < count and time.monotonic() < deadline:
        deliver(app, config)
        time.sleep(0.02)
    assert len(receiver.receipts) >= count, f"only {len(receiver.receipts)} of {count} arrived"


def _bodies(receiver: Receiver) -> list[dict[str, Any]]:
    return [json.loads(r.body) for r in receiver.receipts]


def _outbox(app: Flask) -> list[tuple[int | None, str, str]]:
    """(job id, type, event id) of every event, in the order the changes committed."""
    with app.extensions["ohmtally.db"]() as session:
        return [(e.job_id, e.type, e.event_id) for e in session.scalars(select(WebhookEvent)
                                                                         .order_by(WebhookEvent.id))]


def test_a_receiver_down_for_a_while_gets_every_event_in_order(hooks: FlaskClient, hook_app: Flask,
                                                               receiver: Receiver) -> None:
    """Events of two jobs made while the receiver is down all arrive once it is back, each job's in order."""
    _subscribe(hooks, receiver.url)
    receiver.stop()  # connection refused from now on
    first, second = _job(hooks, "D-1"), _job(hooks, "D-2")
    _post(hooks, first, {"board": "DB1", "circuit": "1", "polarity_ok": True})
    _post(hooks, second, {"board": "DB1", "circuit": "1", "polarity_ok": False})
    _post(hooks, first, {"board": "DB1", "circuit": "1", "polarity_ok": False})
    for _ in range(4):
        deliver(hook_app)
        time.sleep(0.06)
    failed = hooks.get("/v1/webhooks/1/deliveries?status=pending").get_json()["items"]
    assert failed and max(d["attempts"] for d in failed) >= 2
    assert all(d["last_error"] for d in failed if d["attempts"])
    receiver.start()
    expected = _outbox(hook_app)
    _deliver_until(hook_app, receiver, len(expected))
    got = [(b["type"], b["id"]) for b in _bodies(receiver)]
    assert sorted(got) == sorted((t, i) for _j, t, i in expected)  # every event, none twice
    for job_id in (first, second):
        in_order = [(t, i) for j, t, i in expected if j == job_id]
        assert [g for g in got if g in in_order] == in_order
    assert hooks.get("/v1/webhooks/1/deliveries?status=pending").get_json()["items"] == []


def test_a_lost_answer_redelivers_the_same_event_id_and_body(hooks: FlaskClient, hook_app: Flask,
                                                             receiver: Receiver) -> None:
    """A receiver that took the event but answered 500 gets it again: same webhook-id, same body."""
    sub = _subscribe(hooks, receiver.url, ["job.created"])
    receiver.fail_next = 1
    _job(hooks, "L-1")
    _deliver_until(hook_app, receiver, 2)
    first, again = receiver.receipts
    assert header(first, "webhook-id") == header(again, "webhook-id")
    assert first.body == again.body
    (delivery,) = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries").get_json()["items"]
    assert delivery["status"] == "delivered" and delivery["attempts"] == 2
    assert delivery["last_status_code"] == 204 and delivery["last_error"] is None


def test_a_later_event_waits_for_the_earlier_one_of_its_job(hooks: FlaskClient, hook_app: Flask,
                                                            receiver: Receiver) -> None:
    """While a job's first event keeps failing, its second is not sent; another job's event is."""
    _subscribe(hooks, receiver.url, ["job.created", "readings.accepted"])
    receiver.fail_next = 1000
    blocked = _job(hooks, "O-1")
    _post(hooks, blocked, {"board": "DB1", "circuit": "1", "polarity_ok": True})
    slow = DeliveryConfig(allow_private=True, timeout_s=2, retry_base_s=0.05, retry_max_s=0.05)
    for _ in range(3):
        deliver(hook_app, slow)
        time.sleep(0.06)
    assert {t for t, _id in received(receiver)} == {"job.created"}
    receiver.fail_next = 0
    free = _job(hooks, "O-2")
    _deliver_until(hook_app, receiver, len(receiver.receipts) + 3, slow)
    delivered = [(json.loads(r.body)["type"]) for r in receiver.receipts[-3:]]
    assert delivered.count("readings.accepted") == 1 and delivered.count("job.created") == 2
    created_for = {json.loads(r.body)["data"]["job"]["id"] for r in receiver.receipts[-3:]
                   if json.loads(r.body)["type"] == "job.created"}
    assert created_for == {blocked, free}  # the other job's event went too


def test_verdict_changed_fires_exactly_when_an_outcome_changes(hooks: FlaskClient, hook_app: Flask,
                                                               receiver: Receiver) -> None:
    """New circuits and changed outcomes send verdict.changed; a post that changes no outcome sends none."""
    _subscribe(hooks, receiver.url, ["verdict.changed"])
    job = _job(hooks, "V-1")
    good = {"board": "DB1", "circuit": "1", "polarity_ok": True}
    other = {"board": "DB1", "circuit": "2", "polarity_ok": True}
    _post(hooks, job, good, other)
    _deliver_until(hook_app, receiver, 2)
    fresh = _bodies(receiver)
    expected_first = {v.key: v.outcome.value for v in verify([build_record(good)[0], build_record(other)[0]])}
    assert {(b["data"]["board"], b["data"]["circuit"]): (b["data"]["previous"], b["data"]["outcome"])
            for b in fresh} == {key: (None, outcome) for key, outcome in expected_first.items()}

    _post(hooks, job, {"board": "DB1", "circuit": "1", "description": "Invented kitchen sockets"})
    deliver(hook_app)
    assert len(receiver.receipts) == 2  # the description changes no outcome: nothing sent
    with hook_app.extensions["ohmtally.db"]() as session:
        assert len(session.scalars(select(WebhookEvent)).all()) == 2

    _post(hooks, job, {"board": "DB1", "circuit": "1", "polarity_ok": False})
    _deliver_until(hook_app, receiver, 3)
    changed = _bodies(receiver)[2]["data"]
    after = verify([build_record({**good, "polarity_ok": False})[0], build_record(other)[0]])
    assert changed["previous"] == expected_first[("DB1", "1")]
    assert changed["outcome"] == next(v.outcome.value for v in after if v.key == ("DB1", "1")) == "fail"
    assert (changed["board"], changed["circuit"]) == ("DB1", "1")
    assert changed["notice"] == NOTICE  # an outcome travels with the safety caution
    deliver(hook_app)
    assert len(receiver.receipts) == 3  # DB1/2 did not change: no event for it


def test_retries_follow_the_documented_backoff(hooks: FlaskClient, hook_app: Flask,
                                               receiver: Receiver) -> None:
    """next − last attempt is base × 2^(n−1), capped; after max_attempts the delivery is failed.
    Time passing is simulated by moving the row's times back by the wait (the times are the database's)."""
    sub = _subscribe(hooks, receiver.url, ["job.created"])
    receiver.fail_next = 1000
    _job(hooks, "B-1")
    config = DeliveryConfig(allow_private=True, timeout_s=2, retry_base_s=10, retry_max_s=35, max_attempts=5)
    waits: list[float] = []
    for _attempt in range(5):
        assert deliver(hook_app, config) == 1
        (row,) = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries").get_json()["items"]
        if row["status"] == "pending":
            wait = (datetime.fromisoformat(row["next_attempt_at"])
                    - datetime.fromisoformat(row["last_attempt_at"])).total_seconds()
            waits.append(wait)
            assert deliver(hook_app, config) == 0  # not due yet
            _wait_passes(hook_app, row["id"], timedelta(seconds=wait))
    assert waits == [10, 20, 35, 35]  # 10 × 2^0, 10 × 2^1, min(40, 35), min(80, 35)
    assert waits == [backoff_s(n, config) for n in range(1, 5)]
    assert row["status"] == "failed" and row["attempts"] == 5 and row["last_status_code"] == 500
    assert len(receiver.receipts) == 5


def _wait_passes(app: Flask, delivery_id: int, wait: timedelta) -> None:
    """As if ``wait`` had passed for this delivery: its attempt and retry times move back by it."""
    with app.extensions["ohmtally.db"]() as session:
        row = session.get(WebhookDelivery, delivery_id)
        assert row is not None and row.last_attempt_at is not None
        row.next_attempt_at -= wait
        row.last_attempt_at -= wait
        session.commit()


def test_two_workers_never_send_one_delivery_twice(hooks: FlaskClient, hook_app: Flask,
                                                   receiver: Receiver) -> None:
    """Two delivery passes racing over 12 jobs' events deliver each event exactly once (leased claims)."""
    _subscribe(hooks, receiver.url, ["job.created"])
    for n in range(12):
        _job(hooks, f"C-{n}")
    factory = hook_app.extensions["ohmtally.db"]
    config = DeliveryConfig(allow_private=True, timeout_s=2, batch=3, box=box_for_app(hook_app))
    workers = [threading.Thread(target=run_once, args=(factory, config), kwargs={"who": f"w{n}"})
               for n in range(2)]
    for worker in workers:
        worker.start()
    for worker in workers:
        worker.join(20)
    ids = [event_id for _type, event_id in received(receiver)]
    assert len(ids) == 12 and len(set(ids)) == 12


def test_events_commit_with_the_change_or_not_at_all(hooks: FlaskClient, hook_app: Flask,
                                                     receiver: Receiver,
                                                     monkeypatch: pytest.MonkeyPatch) -> None:
    """A post that fails before its commit leaves no event; a refused body sends no readings.accepted."""
    _subscribe(hooks, receiver.url, ["readings.accepted", "verdict.changed"])
    job = _job(hooks, "T-1")
    refused = hooks.post(f"/v1/jobs/{job}/readings", json={"ruleset": "iec-60364", "circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True}]})
    assert refused.status_code == 422  # ruleset_mismatch: the body is kept, nothing merged

    def broken_commit(*_args: Any, **_kwargs: Any) -> Any:
        raise RuntimeError("the database went away before the commit")

    # the request's unit of work commits after the answer is built (api.db.session)
    monkeypatch.setattr(Session, "commit", broken_commit)
    with pytest.raises(RuntimeError, match="went away"):  # TESTING: the test client re-raises it
        hooks.post(f"/v1/jobs/{job}/readings", json={"circuits": [
            {"board": "DB1", "circuit": "1", "polarity_ok": True}]})
    assert _outbox(hook_app) == []
    monkeypatch.undo()
    _post(hooks, job, {"board": "DB1", "circuit": "1", "polarity_ok": True})
    assert [t for _j, t, _i in _outbox(hook_app)] == ["readings.accepted", "verdict.changed"]


def test_deliver_once_command_sends_what_is_due(hooks: FlaskClient, receiver: Receiver, db_url: str,
                                                tmp_path: Path, runner: Callable[..., tuple[int, str, str]],
                                                monkeypatch: pytest.MonkeyPatch) -> None:
    """`ohmtally deliver --once` on the same database sends the pending events and exits 0."""
    _subscribe(hooks, receiver.url, ["job.created"])
    _job(hooks, "CLI-1")
    _job(hooks, "CLI-2")
    for name, value in {"DATABASE_URL": db_url, "AUTH": "off", "WEBHOOK_ALLOW_PRIVATE": "on",
                        "LOG_LEVEL": "WARNING", "INSTANCE_PATH": str(tmp_path)}.items():
        monkeypatch.setenv(f"OHMTALLY_{name}", value)
    status, _out, err = runner("deliver", "--once")
    assert status == 0, err
    assert "2 attempt(s)" in err and len(receiver.receipts) == 2
    assert runner("deliver", "--once")[0] == 0 and len(receiver.receipts) == 2  # nothing due: nothing sent


@pytest.mark.slow
def test_serve_delivers_from_its_workers(tmp_path: Path, receiver: Receiver) -> None:
    """A real `ohmtally serve --workers 2` delivers each event once, from its worker threads, in seconds,
    each verifiable with the subscription's secret (standardwebhooks)."""
    url = f"sqlite:///{tmp_path / 'served.sqlite3'}"
    upgrade(url)
    port = free_port()
    env = {**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "WARNING",
           "OHMTALLY_DATABASE_URL": url, "OHMTALLY_WEBHOOK_ALLOW_PRIVATE": "on",
           "OHMTALLY_INSTANCE_PATH": str(tmp_path)}  # its generated webhook key file goes there
    child = subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind", f"127.0.0.1:{port}",
                              "--workers", "2"], cwd=ROOT, env=env)
    base = f"http://127.0.0.1:{port}"
    try:
        assert wait_healthy(base, child), "ohmtally serve did not come up"
        with httpx.Client(base_url=base, timeout=10) as client:
            made = client.post("/v1/webhooks", json={"url": receiver.url, "events": ["job.created"]})
            assert made.status_code == 201
            for n in range(4):
                started = time.monotonic()
                assert client.post("/v1/jobs", json={"reference": f"S-{n}", "site": "Invented"}
                                   ).status_code == 201
                assert time.monotonic() - started < 2  # the request does not wait for the delivery
        deadline = time.monotonic() + 15
        while len(receiver.receipts) < 4 and time.monotonic() < deadline:
            time.sleep(0.1)
        time.sleep(1.5)  # a second, duplicate send would have arrived by now
        ids = [event_id for _type, event_id in received(receiver)]
        assert len(ids) == 4 and len(set(ids)) == 4
        for receipt in receiver.receipts:  # both workers opened the secret with the one generated key
            Webhook(made.json()["secret"]).verify(receipt.body, receipt.headers)
    finally:
        child.terminate()
        child.wait(timeout=20)
