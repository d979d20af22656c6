"""Leases, retry times and webhook-timestamp come from the database's clock, not the sending host's.

External references:
- The skew is real, not simulated: a second `ohmtally deliver` process runs under
  libfaketime (Debian's ``faketime`` package), which shifts every clock call of that
  process by ten minutes; the test first shows the shift in that process. PostgreSQL's
  clock is the server's, so the two processes see one database time.
- Receivers refuse a webhook-timestamp more than five minutes from their clock (the
  Standard Webhooks reference library, ``standardwebhooks``), so a delivery sent by the
  skewed host verifies only if its timestamp is the database's.
SQLite runs inside each process: its clock is that process's host clock, and one host
has one clock, so the skew test is for PostgreSQL (skipped on SQLite, saying so).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from collections.abc import Callable
from datetime import timedelta
from pathlib import Path

import pytest
from cryptography.fernet import Fernet
from flask import Flask
from sqlalchemy import select
from standardwebhooks.webhooks import Webhook

from api.db.models import WebhookDelivery
from api.webhooks.clock import database_now
from api.webhooks.delivery import DeliveryConfig, _claim
from api.webhooks.sealing import box_for_app
from tests.api.test_webhooks import deliver, subscribe
from tests.api.webhook_receiver import Receiver

pytestmark = pytest.mark.postgres

ROOT = Path(__file__).resolve().parents[2]
SKEW_S = 600  # ten minutes: more than a lease (3 × 2 s + 30 s here) and than a receiver's tolerance
CONFIG = DeliveryConfig(allow_private=True, timeout_s=2, retry_base_s=300)


def _only_delivery(app: Flask) -> WebhookDelivery:
    with app.extensions["ohmtally.db"]() as session:
        (row,) = session.scalars(select(WebhookDelivery)).all()
        return row


def test_lease_and_retry_times_are_the_databases(hook_app: Flask, receiver: Receiver) -> None:
    """A claim's lease ends lease_s after the database's now; a failed attempt's retry is due backoff after
    the database's now (both within a second of what the database says)."""
    hooks = hook_app.test_client()
    subscribe(hooks, receiver.url, ["job.created"])
    hooks.post("/v1/jobs", json={"reference": "C-1", "site": "Invented site"})
    factory = hook_app.extensions["ohmtally.db"]
    with factory() as session:
        assert _claim(session, "worker-A", CONFIG) != []
        now = database_now(session)
    row = _only_delivery(hook_app)
    assert row.claimed_by == "worker-A" and row.claimed_until is not None
    assert abs((row.claimed_until - now).total_seconds() - CONFIG.lease_s) < 1
    with factory() as session:  # release A's lease, as if A had died and its lease run out
        session.get_one(WebhookDelivery, row.id).claimed_until = database_now(session) - timedelta(seconds=1)
        session.commit()
    receiver.fail_next = 1
    assert deliver(hook_app, CONFIG) == 1
    failed = _only_delivery(hook_app)
    with factory() as session:
        now = database_now(session)
    assert failed.last_attempt_at is not None and abs((now - failed.last_attempt_at).total_seconds()) < 1
    assert (failed.next_attempt_at - failed.last_attempt_at).total_seconds() == CONFIG.retry_base_s


def _skewed_deliver(db_url: str, key: str, tmp_path: Path) -> tuple[int, str]:
    """`ohmtally deliver --once` in a process whose clock runs SKEW_S ahead: (exit status, stderr)."""
    env = {**os.environ, "OHMTALLY_DATABASE_URL": db_url, "OHMTALLY_ENCRYPTION_KEY": key,
           "OHMTALLY_AUTH": "off", "OHMTALLY_WEBHOOK_ALLOW_PRIVATE": "on", "OHMTALLY_WEBHOOK_TIMEOUT_S": "2",
           "OHMTALLY_WEBHOOK_RETRY_BASE_S": "300", "OHMTALLY_LOG_LEVEL": "WARNING",
           "OHMTALLY_INSTANCE_PATH": str(tmp_path),
           "FAKETIME_DONT_FAKE_MONOTONIC": "1"}  # a wall clock off; timers (monotonic) keep working
    command = ["faketime", "-f", f"+{SKEW_S}s", sys.executable, "-m", "api.cli", "deliver", "--once"]
    done = subprocess.run(command, cwd=ROOT, env=env, capture_output=True, text=True, timeout=60)
    return done.returncode, done.stderr


def test_a_skewed_host_neither_steals_a_live_lease_nor_sends_early(
        backend: str, db_url: str, tmp_path: Path, receiver: Receiver,
        app_factory: Callable[..., Flask]) -> None:
    """A worker whose clock is ten minutes ahead: sends nothing while another worker's lease is live,
    nothing while a retry is not yet due by the database, and once it is due sends it with a
    webhook-timestamp a receiver on the right time accepts."""
    if backend != "postgres":
        pytest.skip("SQLite's clock is the process's own: one host, one clock (PostgreSQL's is shared)")
    if shutil.which("faketime") is None:
        pytest.skip("the faketime command (Debian package faketime) is not installed")
    shown = subprocess.run(["faketime", "-f", f"+{SKEW_S}s", sys.executable, "-c",
                            "import time; print(time.time())"], capture_output=True, text=True, check=True)
    key = Fernet.generate_key().decode()
    app = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=key, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    factory = app.extensions["ohmtally.db"]
    with factory() as session:
        assert float(shown.stdout) - database_now(session).timestamp() > SKEW_S - 30  # the skew is real
    sub = subscribe(app.test_client(), receiver.url, ["job.created"])
    app.test_client().post("/v1/jobs", json={"reference": "C-2", "site": "Invented site"})
    with factory() as session:  # worker A (right clock) holds a live lease
        assert len(_claim(session, "worker-A", CONFIG)) == 1

    status, err = _skewed_deliver(db_url, key, tmp_path)
    assert status == 0 and "0 attempt(s)" in err, err
    assert receiver.receipts == [] and _only_delivery(app).claimed_by == "worker-A"

    with factory() as session:  # A's attempt failed: the retry is due in 300 s by the database
        row = session.get_one(WebhookDelivery, _only_delivery(app).id)
        now = database_now(session)
        row.claimed_by, row.claimed_until = None, None
        row.attempts, row.last_attempt_at, row.next_attempt_at = 1, now, now + timedelta(seconds=300)
        session.commit()
    status, err = _skewed_deliver(db_url, key, tmp_path)
    assert status == 0 and "0 attempt(s)" in err, err  # its own clock says due; the database's does not
    assert receiver.receipts == []

    with factory() as session:  # now the retry is due
        row = session.get_one(WebhookDelivery, _only_delivery(app).id)
        row.next_attempt_at = database_now(session) - timedelta(seconds=1)
        session.commit()
    status, err = _skewed_deliver(db_url, key, tmp_path)
    assert status == 0 and "1 attempt(s)" in err, err
    (receipt,) = receiver.receipts
    assert Webhook(sub["secret"]).verify(receipt.body, receipt.headers)["type"] == "job.created"
    assert _only_delivery(app).status == "delivered"
    assert box_for_app(app) is not None
