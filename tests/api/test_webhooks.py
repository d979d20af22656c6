"""Webhook subscriptions, signatures a Standard Webhooks receiver accepts, and what each event says.

External references:
- Signatures are checked by the `standardwebhooks` package (the Standard Webhooks
  project's reference Python library) exactly as a receiver uses it, and by the
  receiver snippet printed in api/webhooks/README.md, extracted and run as is.
  The library refuses a timestamp more than five minutes from its clock (its
  documented tolerance).
- Address classes come from the standard library's ipaddress module and the
  RFCs it implements: loopback 127.0.0.0/8 and ::1 (RFC 1122, RFC 4291),
  private 10/8 (RFC 1918), link-local 169.254/16 (RFC 3927).
- Verdict outcomes: engine.verify on the same records (the API adds nothing).
Circuits and sites are invented.
"""

from __future__ import annotations

import base64
import json
import re
from collections.abc import Callable
from dataclasses import replace
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
import standardwebhooks.webhooks as swh
from cryptography.fernet import Fernet
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select
from standardwebhooks.webhooks import Webhook, WebhookVerificationError

from api.db.models import Organisation, WebhookDelivery, WebhookEvent, WebhookSubscription
from api.db.models.webhooks import WebhookSecret
from api.webhooks.delivery import DeliveryConfig, run_once
from api.webhooks.sealing import box_for_app
from api.webhooks.signing import format_secret, new_secret
from tests.api.keyring import bearer, issue_key, unique_org
from tests.api.webhook_receiver import ALL_EVENTS, FAST, Receipt, Receiver

README = Path(__file__).resolve().parents[2] / "api" / "webhooks" / "README.md"


def deliver(app: Flask, config: DeliveryConfig = FAST, **kwargs: Any) -> int:
    """run_once with this app's server key, as `ohmtally serve` gives its worker threads."""
    return run_once(app.extensions["ohmtally.db"], replace(config, box=box_for_app(app)), **kwargs)


def header(receipt: Receipt, name: str) -> str:
    """A header of a receipt, by case-insensitive name (HTTP header names are)."""
    return next(v for k, v in receipt.headers.items() if k.lower() == name.lower())


def received(receiver: Receiver) -> list[tuple[str, str]]:
    """(event type, webhook-id) of every receipt, in arrival order."""
    return [(header(r, "Ohmtally-Event-Type"), header(r, "webhook-id")) for r in list(receiver.receipts)]


def readme_receiver() -> Callable[..., Any]:
    """The `verify_delivery` function exactly as api/webhooks/README.md prints it."""
    text = README.read_text(encoding="utf-8")
    block = next(b for b in re.findall(r"```python\n(.*?)```", text, re.S) if "def verify_delivery" in b)
    namespace: dict[str, Any] = {}
    exec(compile(block, str(README), "exec"), namespace)  # the documented code, unchanged
    found: Callable[..., Any] = namespace["verify_delivery"]
    return found


def subscribe(client: FlaskClient, url: str, events: list[str] | None = None, **extra: Any) -> dict[str, Any]:
    response = client.post("/v1/webhooks", json={"url": url, "events": events or ALL_EVENTS, **extra})
    assert response.status_code == 201, response.get_json()
    body: dict[str, Any] = response.get_json()
    return body


def test_subscription_shows_its_secret_once(hooks: FlaskClient) -> None:
    """POST answers 201 with a generated whsec_ secret (32 bytes) and Location; GET and the list never
    show it, only when the one valid secret was made; a strong secret of the client's is kept as given."""
    created = hooks.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/x", "events": ["job.created"]})
    assert created.status_code == 201
    body = created.get_json()
    assert body["secret"].startswith("whsec_") and len(base64.b64decode(body["secret"][6:])) == 32
    assert created.headers["Location"] == f"/v1/webhooks/{body['id']}"
    one = hooks.get(f"/v1/webhooks/{body['id']}").get_json()
    listed = hooks.get("/v1/webhooks").get_json()["items"]
    assert "secret" not in one and all("secret" not in item for item in listed)
    assert one["events"] == ["job.created"] and [i["id"] for i in listed] == [body["id"]]
    assert [s["valid_until"] for s in one["secrets"]] == [None]
    assert body["secret"][6:] not in json.dumps(one) + json.dumps(listed)
    mine = format_secret(new_secret())
    given = subscribe(hooks, "http://127.0.0.1:9/y", secret=mine)
    assert given["secret"] == mine


def test_delete_removes_the_subscription_and_its_deliveries(hooks: FlaskClient, hook_app: Flask) -> None:
    """DELETE answers 204; the subscription is then a 404 and its pending deliveries and secrets are gone."""
    sub = subscribe(hooks, "http://127.0.0.1:9/x")
    hooks.post("/v1/jobs", json={"reference": "W-1", "site": "Invented site"})
    assert hooks.delete(f"/v1/webhooks/{sub['id']}").status_code == 204
    assert hooks.get(f"/v1/webhooks/{sub['id']}").status_code == 404
    with hook_app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)).all() == []
        assert session.scalars(select(WebhookSecret)).all() == []


@pytest.mark.parametrize("url, code", [
    ("http://127.0.0.1:8080/hook", "target_not_allowed"),     # loopback, RFC 1122
    ("http://[::1]/hook", "target_not_allowed"),              # loopback, RFC 4291
    ("http://10.1.2.3/hook", "target_not_allowed"),           # private, RFC 1918
    ("http://169.254.169.254/latest", "target_not_allowed"),  # link-local, RFC 3927
    ("http://localhost:8000/hook", "target_not_allowed"),     # a name that resolves to loopback
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
    """A worker with the policy on refuses a loopback target at send time; nothing arrives; the error
    kept for the client names the stable code, and for a host name never the address it resolved to."""
    literal = subscribe(hooks, receiver.url, ["job.created"])
    named = subscribe(hooks, receiver.url.replace("127.0.0.1", "localhost"), ["job.created"])
    hooks.post("/v1/jobs", json={"reference": "W-2", "site": "Invented site"})
    strict = DeliveryConfig(allow_private=False, timeout_s=2, retry_base_s=60)
    assert deliver(hook_app, strict) == 2
    assert receiver.receipts == []
    for sub in (literal, named):
        delivery = hooks.get(f"/v1/webhooks/{sub['id']}/deliveries").get_json()["items"][0]
        assert delivery["status"] == "pending" and delivery["attempts"] == 1
        assert delivery["last_error"].startswith("refused: target_not_allowed: ")
    by_name = hooks.get(f"/v1/webhooks/{named['id']}/deliveries").get_json()["items"][0]["last_error"]
    assert "127.0.0.1" not in by_name and "::1" not in by_name


def test_deliveries_verify_with_the_standard_webhooks_library(hooks: FlaskClient, hook_app: Flask,
                                                              receiver: Receiver) -> None:
    """Every delivery verifies with standardwebhooks' Webhook(secret).verify and with the README's receiver;
    a changed body, a changed webhook-id or another secret is refused."""
    sub = subscribe(hooks, receiver.url)
    job = hooks.post("/v1/jobs", json={"reference": "W-3", "site": "Invented site"}).get_json()
    hooks.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True}]})
    deliver(hook_app)
    documented = readme_receiver()
    assert len(receiver.receipts) == 3
    for receipt in receiver.receipts:
        event = Webhook(sub["secret"]).verify(receipt.body, receipt.headers)
        assert event == json.loads(receipt.body) and event["id"] == header(receipt, "webhook-id")
        assert documented(sub["secret"], receipt.headers, receipt.body) == event
        assert header(receipt, "webhook-signature").startswith("v1,")
        assert abs(datetime.now(UTC).timestamp() - int(header(receipt, "webhook-timestamp"))) < 60
        with pytest.raises(WebhookVerificationError):
            Webhook(sub["secret"]).verify(receipt.body.replace(b'"id"', b'"Id"', 1), receipt.headers)
        with pytest.raises(WebhookVerificationError):
            Webhook(sub["secret"]).verify(receipt.body, {**receipt.headers, "webhook-id": "another"})
        with pytest.raises(WebhookVerificationError):
            Webhook(format_secret(new_secret())).verify(receipt.body, receipt.headers)
        assert documented(sub["secret"], receipt.headers, receipt.body + b" ") is None


def test_the_library_refuses_a_stale_timestamp(hooks: FlaskClient, hook_app: Flask, receiver: Receiver,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    """A delivery that verifies now is refused once the receiver's clock is 301 s on, and 299 s on it is
    still accepted (the library's five-minute tolerance)."""
    sub = subscribe(hooks, receiver.url, ["job.created"])
    hooks.post("/v1/jobs", json={"reference": "W-4", "site": "Invented site"})
    deliver(hook_app)
    (receipt,) = receiver.receipts
    Webhook(sub["secret"]).verify(receipt.body, receipt.headers)
    sent_at = datetime.fromtimestamp(int(header(receipt, "webhook-timestamp")), UTC)

    def receiver_clock(offset_s: float) -> type[datetime]:
        class Clock(datetime):
            @classmethod
            def now(cls, tz: Any = None) -> Any:
                return sent_at + timedelta(seconds=offset_s)
        return Clock

    monkeypatch.setattr(swh, "datetime", receiver_clock(301))
    with pytest.raises(WebhookVerificationError, match="too old"):
        Webhook(sub["secret"]).verify(receipt.body, receipt.headers)
    assert readme_receiver()(sub["secret"], receipt.headers, receipt.body) is None
    monkeypatch.setattr(swh, "datetime", receiver_clock(299))
    assert Webhook(sub["secret"]).verify(receipt.body, receipt.headers)["type"] == "job.created"


def test_event_bodies_say_what_happened(hooks: FlaskClient, hook_app: Flask, receiver: Receiver) -> None:
    """job.created carries the job; readings.accepted the upload and counts; headers name type and id."""
    subscribe(hooks, receiver.url)
    job = hooks.post("/v1/jobs", json={"reference": "W-5", "site": "Invented site",
                                       "external_ref": "crm-5"}).get_json()
    posted = hooks.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": [
        {"board": "DB1", "circuit": "1", "polarity_ok": True},
        {"board": "DB1", "circuit": "2", "polarity_ok": False}]}).get_json()
    deliver(hook_app)
    bodies = [json.loads(r.body) for r in receiver.receipts]
    for receipt, body in zip(receiver.receipts, bodies, strict=True):
        assert header(receipt, "Ohmtally-Event-Type") == body["type"]
        assert header(receipt, "webhook-id") == body["id"]
        assert header(receipt, "Content-Type") == "application/json"
        assert not any(k.lower().startswith("ohmtally-") and k.lower() != "ohmtally-event-type"
                       for k in receipt.headers)
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
    """A subscription of another organisation is a 404 here (read, delete, rotate) and gets none of this
    organisation's events."""
    box = box_for_app(hook_app)
    assert box is not None
    with hook_app.extensions["ohmtally.db"]() as session:
        other = Organisation(slug="other-firm", name="Another invented firm")
        session.add(other)
        session.flush()
        row = WebhookSubscription(organisation_id=other.id, url="http://127.0.0.1:9/o", events=ALL_EVENTS)
        session.add(row)
        session.flush()
        session.add(WebhookSecret(subscription_id=row.id, sealed=box.seal(row.id, new_secret()),
                                  created_at=datetime.now(UTC)))
        session.commit()
        other_id = row.id
    assert hooks.get(f"/v1/webhooks/{other_id}").status_code == 404
    assert hooks.post(f"/v1/webhooks/{other_id}/secret").status_code == 404
    assert hooks.delete(f"/v1/webhooks/{other_id}").status_code == 404
    hooks.post("/v1/jobs", json={"reference": "W-7", "site": "Invented site"})
    with hook_app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)
                               .where(WebhookDelivery.subscription_id == other_id)).all() == []


def test_with_keys_subscriptions_follow_the_key_and_need_admin(db_url: str,
                                                              app_factory: Callable[..., Flask]) -> None:
    """With OHMTALLY_AUTH=on a write key cannot subscribe or rotate (403); an admin key's subscription is
    its firm's."""
    app = app_factory(db_url, OHMTALLY_AUTH="on", OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on",
                      OHMTALLY_ENCRYPTION_KEY=Fernet.generate_key().decode())
    firm_a, firm_b = unique_org("Invented firm A"), unique_org("Invented firm B")
    writer = bearer(issue_key(app, firm_a, "read,write")[1])
    admin_a = bearer(issue_key(app, firm_a, "admin")[1])
    admin_b = bearer(issue_key(app, firm_b, "admin")[1])
    client = app.test_client()
    body = {"url": "http://127.0.0.1:9/a", "events": ALL_EVENTS}
    assert client.post("/v1/webhooks", json=body, headers=writer).status_code == 403
    made = client.post("/v1/webhooks", json=body, headers=admin_a)
    assert made.status_code == 201
    sub_id = made.get_json()["id"]
    assert client.get(f"/v1/webhooks/{sub_id}", headers=writer).status_code == 200
    assert client.post(f"/v1/webhooks/{sub_id}/secret", headers=writer).status_code == 403
    assert client.get(f"/v1/webhooks/{sub_id}", headers=admin_b).status_code == 404
    assert client.get("/v1/webhooks", headers=admin_b).get_json()["items"] == []
    client.post("/v1/jobs", json={"reference": "K-1", "site": "Invented"}, headers=admin_b)
    with app.extensions["ohmtally.db"]() as session:
        assert session.scalars(select(WebhookDelivery)).all() == []  # firm B's job: not firm A's event
    client.post("/v1/jobs", json={"reference": "K-2", "site": "Invented"}, headers=writer)
    with app.extensions["ohmtally.db"]() as session:
        assert len(session.scalars(select(WebhookDelivery)).all()) == 1
