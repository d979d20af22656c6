"""Rotating a subscription's signing secret: an overlap with both signatures, and no delivery dropped.

External references:
- The Standard Webhooks specification: during a rotation the sender signs with
  the old and the new secret and sends both signatures, space-separated, in
  ``webhook-signature``; a receiver accepts any one that matches. Checked with
  its reference Python library (``standardwebhooks``), given one secret at a time.
Circuits and sites are invented.
"""

from __future__ import annotations

import time
from datetime import datetime

import pytest
from flask import Flask
from flask.testing import FlaskClient
from standardwebhooks.webhooks import Webhook, WebhookVerificationError

from api.webhooks.signing import format_secret, new_secret
from tests.api.test_webhooks import deliver, header, subscribe
from tests.api.webhook_receiver import FAST, Receiver

pytestmark = pytest.mark.postgres


def _rotate(client: FlaskClient, sub_id: int, **body: object) -> dict[str, object]:
    response = client.post(f"/v1/webhooks/{sub_id}/secret", json=body)
    assert response.status_code == 200, response.get_json()
    answer: dict[str, object] = response.get_json()
    return answer


def _verifies(secret: str, receipt_body: bytes, headers: dict[str, str]) -> bool:
    try:
        Webhook(secret).verify(receipt_body, headers)
    except WebhookVerificationError:
        return False
    return True


def test_during_the_overlap_both_secrets_verify(hooks: FlaskClient, hook_app: Flask,
                                                receiver: Receiver) -> None:
    """After a rotation with an overlap, each delivery carries two v1 signatures (new first); the library
    accepts it with the old secret and with the new one, and not with a third."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    rotated = _rotate(hooks, sub["id"], overlap_s=3600)
    assert rotated["secret"] != sub["secret"] and str(rotated["secret"]).startswith("whsec_")
    valid = rotated["secrets"]
    assert isinstance(valid, list) and [s["valid_until"] is None for s in valid] == [True, False]
    until = datetime.fromisoformat(valid[1]["valid_until"]) - datetime.fromisoformat(valid[0]["created_at"])
    assert 3599 <= until.total_seconds() <= 3601
    hooks.post("/v1/jobs", json={"reference": "R-1", "site": "Invented site"})
    deliver(hook_app)
    (receipt,) = receiver.receipts
    signatures = header(receipt, "webhook-signature").split(" ")
    assert len(signatures) == 2 and all(s.startswith("v1,") for s in signatures)
    assert _verifies(str(rotated["secret"]), receipt.body, receipt.headers)
    assert _verifies(sub["secret"], receipt.body, receipt.headers)
    assert not _verifies(format_secret(new_secret()), receipt.body, receipt.headers)
    assert "secret" not in hooks.get(f"/v1/webhooks/{sub['id']}").get_json()


def test_pending_deliveries_survive_a_rotation(hooks: FlaskClient, hook_app: Flask,
                                               receiver: Receiver) -> None:
    """Events queued while the receiver is down, then a rotation that ends the old secret at once:
    every event still arrives, once, in order, signed by the new secret only."""
    sub = subscribe(hooks, receiver.url, ["job.created", "readings.accepted"])
    receiver.stop()
    job = hooks.post("/v1/jobs", json={"reference": "R-2", "site": "Invented site"}).get_json()
    hooks.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True}]})
    deliver(hook_app)  # refused connections: attempts recorded, nothing delivered
    pending = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries?status=pending").get_json()["items"]
    assert len(pending) == 2 and pending[0]["attempts"] >= 1
    rotated = _rotate(hooks, sub["id"], overlap_s=0)
    assert len(rotated["secrets"]) == 1  # type: ignore[arg-type]
    after = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries").get_json()["items"]
    assert [(d["id"], d["status"]) for d in after] == [(d["id"], "pending") for d in pending]
    receiver.start()
    time.sleep(0.25)  # past the FAST retry wait
    deadline = time.monotonic() + 10
    while len(receiver.receipts) < 2 and time.monotonic() < deadline:
        deliver(hook_app, FAST)
        time.sleep(0.05)
    assert [header(r, "webhook-id") for r in receiver.receipts] == [d["event_id"] for d in pending]
    for receipt in receiver.receipts:
        assert len(header(receipt, "webhook-signature").split(" ")) == 1
        assert _verifies(str(rotated["secret"]), receipt.body, receipt.headers)
        assert not _verifies(sub["secret"], receipt.body, receipt.headers)


def test_the_old_secret_stops_signing_when_its_overlap_ends(hooks: FlaskClient, hook_app: Flask,
                                                            receiver: Receiver) -> None:
    """With a one-second overlap, a delivery sent two seconds later carries the new signature only."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    rotated = _rotate(hooks, sub["id"], overlap_s=1)
    time.sleep(2)
    hooks.post("/v1/jobs", json={"reference": "R-3", "site": "Invented site"})
    deliver(hook_app)
    (receipt,) = receiver.receipts
    assert len(header(receipt, "webhook-signature").split(" ")) == 1
    assert _verifies(str(rotated["secret"]), receipt.body, receipt.headers)
    assert not _verifies(sub["secret"], receipt.body, receipt.headers)
    shown = hooks.get(f"/v1/webhooks/{sub['id']}").get_json()["secrets"]
    assert [s["valid_until"] for s in shown] == [None]


def test_a_rotation_never_lengthens_an_earlier_secrets_life(hooks: FlaskClient) -> None:
    """A second rotation with a longer overlap keeps the first secret's end; a fifth valid secret is a
    409 with Retry-After; overlap_s 0 then leaves the new secret alone."""
    sub = subscribe(hooks, "http://127.0.0.1:9/x")
    first = _rotate(hooks, sub["id"], overlap_s=60)["secrets"]
    second = _rotate(hooks, sub["id"], overlap_s=3600)["secrets"]
    assert isinstance(first, list) and isinstance(second, list)
    assert second[2]["valid_until"] == first[1]["valid_until"]  # the original secret: still 60 s
    _rotate(hooks, sub["id"], overlap_s=3600)
    full = hooks.post(f"/v1/webhooks/{sub['id']}/secret", json={"overlap_s": 3600})
    assert full.status_code == 409 and full.get_json()["code"] == "too_many_secrets"
    assert 1 <= int(full.headers["Retry-After"]) <= 60
    assert len(hooks.get(f"/v1/webhooks/{sub['id']}").get_json()["secrets"]) == 4
    alone = _rotate(hooks, sub["id"], overlap_s=0)["secrets"]
    assert isinstance(alone, list) and len(alone) == 1


def test_rotation_bodies(hooks: FlaskClient, hook_app: Flask, receiver: Receiver) -> None:
    """No body rotates with a generated secret and the default overlap (one day); a client's strong
    secret is used as given; a weak one, an overlap over seven days or below 0 is a 422 naming it."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    plain = hooks.post(f"/v1/webhooks/{sub['id']}/secret")
    assert plain.status_code == 200
    valid = plain.get_json()["secrets"]
    lasts = datetime.fromisoformat(valid[1]["valid_until"]) - datetime.fromisoformat(valid[0]["created_at"])
    assert abs(lasts.total_seconds() - 86400) <= 1
    mine = format_secret(new_secret())
    assert _rotate(hooks, sub["id"], secret=mine, overlap_s=0)["secret"] == mine
    for body, pointer in [({"secret": "whsec_" + "YWFh" * 11}, "/secret"),
                          ({"overlap_s": 604801}, "/overlap_s"), ({"overlap_s": -1}, "/overlap_s"),
                          ({"overlap": 5}, "/overlap")]:
        refused = hooks.post(f"/v1/webhooks/{sub['id']}/secret", json=body)
        assert refused.status_code == 422, body
        assert [e["pointer"] for e in refused.get_json()["errors"]] == [pointer]
    hooks.post("/v1/jobs", json={"reference": "R-4", "site": "Invented site"})
    deliver(hook_app)
    (receipt,) = receiver.receipts
    assert _verifies(mine, receipt.body, receipt.headers)
