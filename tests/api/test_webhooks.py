"""Webhook subscriptions, the target policy, signatures and what each event says.

External references:
- The signature is checked with the Python recipe printed in
  README.md ("Checking the signature"), extracted from the file and run as is, on the
  standard library's hmac/hashlib (RFC 2104 HMAC, FIPS 180-4 SHA-256); a
  second check uses a hand-built HMAC with the standard library directly.
- Address classes come from the standard library's ipaddress module and the
  RFCs it implements: loopback 127.0.0.0/8 and ::1 (RFC 1122, RFC 4291),
  private 10/8 (RFC 1918), link-local 169.254/16 (RFC 3927).
- Verdict outcomes: engine.verify on the same records (the API adds nothing).
Circuits and sites are invented.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import re
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select

from api.db.models import Organisation, WebhookDelivery, WebhookEvent, WebhookSubscription
from api.webhooks.delivery import DeliveryConfig, run_once
from tests.api.webhook_receiver import ALL_EVENTS, FAST, Receiver

README = Path(__file__).resolve().parents[2] / "README.md"


def readme_recipe() -> Callable[..., bool]:
    """The `verify_ohmtally` function exactly as README.md prints it."""
    text = README.read_text(encoding="utf-8")
    block = next(b for b in re.findall(r"```python\n(.*?)```", text, re.S) if "def verify_ohmtally" in b)
    namespace: dict[str, Any] = {}
    exec(compile(block, str(README), "exec"), namespace)  # the documented code, unchanged
    recipe: Callable[..., bool] = namespace["verify_ohmtally"]
    return recipe


def subscribe(client: FlaskClient, url: str, events: list[str] | None = None, **extra: Any) -> dict[str, Any]:
    response = client.post("/v1/webhooks", json={"url": url, "events": events or ALL_EVENTS, **extra})
    assert response.status_code == 201, response.get_json()
    body: dict[str, Any] = response.get_json()
    return body


def test_subscription_shows_its_secret_once(hooks: FlaskClient) -> None:
    """POST answers 201 with a generated secret and Location; GET and the list never show the secret."""
    created = hooks.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/x", "events": ["job.created"]})
    assert created.status_code == 201
    body = created.get_json()
    assert len(body["secret"]) >= 32 and created.headers["Location"] == f"/v1/webhooks/{body['id']}"
    one = hooks.get(f"/v1/webhooks/{body['id']}").get_json()
    listed = hooks.get("/v1/webhooks").get_json()["items"]
    assert "secret" not in one and all("secret" not in item for item in listed)
    assert one["events"] == ["job.created"] and [i["id"] for i in listed] == [body["id"]]
    given = subscribe(hooks, "http://127.0.0.1:9/y", secret="s" * 20)
    assert given["secret"] == "s" * 20


def test_delete_removes_the_subscription_and_its_deliveries(hooks: FlaskClient, hook_app: Flask) -> None:
    """DELETE answers 204; the subscription is then a 404 and its pending deliveries are gone."""
    sub = subscribe(hooks, "http://127.0.0.1:9/x")
    hooks.post("/v1/jobs", json={"reference": "W-1", "site": "Invented site"})
    assert hooks.delete(f"/v1/webhooks/{sub['id']}").status_code == 204
    assert hooks.get(f"/v1/webhooks/{sub['id']}").status_code == 404
    with hook_app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)).all() == []


@pytest.mark.parametrize("url, code", [
    ("http://127.0.0.1:8080/hook", "private_address"),     # loopback, RFC 1122
    ("http://[::1]/hook", "private_address"),              # loopback, RFC 4291
    ("http://10.1.2.3/hook", "private_address"),           # private, RFC 1918
    ("http://169.254.169.254/latest", "private_address"),  # link-local, RFC 3927
    ("http://localhost:8000/hook", "private_address"),     # a name that resolves to loopback
    ("ftp://example.invalid/hook", "bad_url"),
    ("http://user:pw@1.1.1.1/hook", "bad_url"),
    ("not a url", "bad_url"),
])
def test_private_and_bad_targets_are_refused_by_default(client: FlaskClient, url: str, code: str) -> None:
    """With ALLOW_PRIVATE off, loopback, private and link-local targets and non-http URLs are a 422."""
    response = client.post("/v1/webhooks", json={"url": url, "events": ["job.created"]})
    assert response.status_code == 422, response.get_json()
    assert response.get_json()["errors"][0] == {**response.get_json()["errors"][0], "pointer": "/url",
                                                "code": code}


def test_a_public_address_literal_is_accepted(client: FlaskClient) -> None:
    """A public IPv4 literal passes the policy (no DNS needed, nothing is sent at subscription time)."""
    response = client.post("/v1/webhooks", json={"url": "https://1.1.1.1/hook", "events": ["job.created"]})
    assert response.status_code == 201


def test_bad_subscription_bodies_name_the_field(hooks: FlaskClient) -> None:
    """An unknown event, an empty list or a short secret is a 422 pointing at that member."""
    for body, pointer in [({"url": "http://127.0.0.1/", "events": ["job.deleted"]}, "/events/0"),
                          ({"url": "http://127.0.0.1/", "events": []}, "/events"),
                          ({"url": "http://127.0.0.1/", "events": ["job.created"], "secret": "short"},
                           "/secret")]:
        response = hooks.post("/v1/webhooks", json=body)
        assert response.status_code == 422
        assert [e["pointer"] for e in response.get_json()["errors"]] == [pointer]


def test_send_time_policy_refuses_what_subscription_time_allowed(hooks: FlaskClient, hook_app: Flask,
                                                                 receiver: Receiver) -> None:
    """A worker with the policy on refuses a loopback target at send time; nothing arrives, error kept."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    hooks.post("/v1/jobs", json={"reference": "W-2", "site": "Invented site"})
    strict = DeliveryConfig(allow_private=False, timeout_s=2, retry_base_s=60)
    assert run_once(hook_app.extensions["ohmtally.db"], strict) == 1
    assert receiver.receipts == []
    delivery = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries").get_json()["items"][0]
    assert delivery["status"] == "pending" and delivery["attempts"] == 1
    assert delivery["last_error"].startswith("refused:") and "127.0.0.1" in delivery["last_error"]


def test_signatures_verify_with_the_documented_recipe(hooks: FlaskClient, hook_app: Flask,
                                                      receiver: Receiver) -> None:
    """Deliveries verify with README's recipe and a stdlib HMAC; a changed body or secret fails."""
    sub = subscribe(hooks, receiver.url)
    job = hooks.post("/v1/jobs", json={"reference": "W-3", "site": "Invented site"}).get_json()
    hooks.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True}]})
    run_once(hook_app.extensions["ohmtally.db"], FAST)
    recipe = readme_recipe()
    assert len(receiver.receipts) == 3
    for receipt in receiver.receipts:
        assert recipe(sub["secret"], receipt.headers, receipt.body)
        assert not recipe(sub["secret"], receipt.headers, receipt.body + b" ")
        assert not recipe("another secret of enough length", receipt.headers, receipt.body)
        fields = dict(p.split("=", 1) for p in receipt.headers["Ohmtally-Signature"].split(","))
        mac = hmac.new(sub["secret"].encode(), fields["t"].encode() + b"." + receipt.body, hashlib.sha256)
        assert fields["v1"] == mac.hexdigest() and abs(time.time() - int(fields["t"])) < 60


def test_the_recipe_refuses_a_stale_timestamp(hooks: FlaskClient, hook_app: Flask, receiver: Receiver,
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    """A delivery that verifies now fails the recipe once the receiver's clock is 301 s on (replay window)."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    hooks.post("/v1/jobs", json={"reference": "W-4", "site": "Invented site"})
    run_once(hook_app.extensions["ohmtally.db"], FAST)
    (receipt,) = receiver.receipts
    recipe = readme_recipe()
    assert recipe(sub["secret"], receipt.headers, receipt.body)
    sent_at = int(dict(p.split("=", 1) for p in receipt.headers["Ohmtally-Signature"].split(","))["t"])
    monkeypatch.setattr(time, "time", lambda: sent_at + 301.0)
    assert not recipe(sub["secret"], receipt.headers, receipt.body)
    monkeypatch.setattr(time, "time", lambda: sent_at + 299.0)
    assert recipe(sub["secret"], receipt.headers, receipt.body)


def test_event_bodies_say_what_happened(hooks: FlaskClient, hook_app: Flask, receiver: Receiver) -> None:
    """job.created carries the job; readings.accepted the upload and counts; headers name type and id."""
    subscribe(hooks, receiver.url)
    job = hooks.post("/v1/jobs", json={"reference": "W-5", "site": "Invented site",
                                       "external_ref": "crm-5"}).get_json()
    posted = hooks.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True},
        {"board": "DB1", "circuit": "2", "polarity_ok": False}]}).get_json()
    run_once(hook_app.extensions["ohmtally.db"], FAST)
    bodies = [json.loads(r.body) for r in receiver.receipts]
    for receipt, body in zip(receiver.receipts, bodies, strict=True):
        assert receipt.headers["Ohmtally-Event"] == body["type"]
        assert receipt.headers["Ohmtally-Event-Id"] == body["id"]
        assert receipt.headers["Content-Type"] == "application/json"
    created, accepted = bodies[0], bodies[1]
    assert created["type"] == "job.created" and created["data"]["job"]["external_ref"] == "crm-5"
    assert created["data"]["job"]["id"] == job["id"]
    assert accepted["type"] == "readings.accepted"
    assert accepted["data"]["upload"]["id"] == posted["upload"]["id"]
    assert accepted["data"]["accepted"] == posted["accepted"] == 2
    assert accepted["data"]["circuits"] == [{"board": "DB1", "circuit": "1"},
                                            {"board": "DB1", "circuit": "2"}]


def test_no_subscription_no_event(client: FlaskClient, app: Flask) -> None:
    """Without a subscription, creating jobs and posting readings writes no event row."""
    job = client.post("/v1/jobs", json={"reference": "W-6", "site": "Invented site"}).get_json()
    client.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [{"board": "DB1", "circuit": "1"}]})
    with app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookEvent)).all() == []


def test_another_organisations_subscription_is_invisible(hooks: FlaskClient, hook_app: Flask) -> None:
    """A subscription of another organisation is a 404 here and gets none of this organisation's events."""
    with hook_app.extensions["ohmtally.db"]() as session:
        other = Organisation(slug="other-firm", name="Another invented firm")
        session.add(other)
        session.flush()
        row = WebhookSubscription(organisation_id=other.id, url="http://127.0.0.1:9/o",
                                  events=ALL_EVENTS, secret="x" * 32)
        session.add(row)
        session.commit()
        other_id = row.id
    assert hooks.get(f"/v1/webhooks/{other_id}").status_code == 404
    assert hooks.delete(f"/v1/webhooks/{other_id}").status_code == 404
    hooks.post("/v1/jobs", json={"reference": "W-7", "site": "Invented site"})
    with hook_app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)
                               .where(WebhookDelivery.subscription_id == other_id)).all() == []


def test_with_keys_subscriptions_follow_the_key_and_need_admin(db_url: str,
                                                              app_factory: Callable[..., Flask]) -> None:
    """With OHMTALLY_AUTH=on a write key cannot subscribe (403); an admin key's subscription is its firm's."""
    from api.http.keys import create_key, organisation_named

    app = app_factory(db_url, OHMTALLY_AUTH="on", OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    secrets: dict[str, str] = {}
    with app.extensions["ohmtally.db"]() as session:
        for firm, scopes in (("Invented firm A", "read,write"), ("Invented firm A", "admin"),
                             ("Invented firm B", "admin")):
            organisation = organisation_named(session, firm, create=True)
            assert organisation is not None
            secrets[f"{firm}/{scopes}"] = create_key(session, organisation, name="t", scopes=scopes,
                                                       expires_at=None).secret
        session.commit()
    client = app.test_client()

    def as_key(name: str) -> dict[str, str]:
        return {"Authorization": f"Bearer {secrets[name]}"}

    body = {"url": "http://127.0.0.1:9/a", "events": ALL_EVENTS}
    refused = client.post("/v1/webhooks", json=body, headers=as_key("Invented firm A/read,write"))
    assert refused.status_code == 403
    made = client.post("/v1/webhooks", json=body, headers=as_key("Invented firm A/admin"))
    assert made.status_code == 201
    sub_id = made.get_json()["id"]
    own = client.get(f"/v1/webhooks/{sub_id}", headers=as_key("Invented firm A/read,write"))
    assert own.status_code == 200
    assert client.get(f"/v1/webhooks/{sub_id}", headers=as_key("Invented firm B/admin")).status_code == 404
    assert client.get("/v1/webhooks", headers=as_key("Invented firm B/admin")).get_json()["items"] == []
    client.post("/v1/jobs", json={"reference": "K-1", "site": "Invented"},
                headers=as_key("Invented firm B/admin"))
    with app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)).all() == []  # firm B's job: not firm A's event
    client.post("/v1/jobs", json={"reference": "K-2", "site": "Invented"},
                headers=as_key("Invented firm A/read,write"))
    with app.extensions["ohmtally.db"]() as session:
        assert len(session.scalars(select(WebhookDelivery)).all()) == 1
