"""Webhook signing secrets: encrypted at rest with a server key, of a minimum strength, refused when weak.

External references:
- The Standard Webhooks specification: symmetric secrets are 24 to 64 random
  bytes, shown as ``whsec_`` + base64; deliveries are checked with its reference
  Python library (``standardwebhooks``).
- Fernet keys are 32 bytes of URL-safe base64 (the Fernet specification, as the
  ``cryptography`` package implements it: ``Fernet.generate_key``).
- "A dump alone yields nothing": every stored column of every webhook table is
  read back raw with SQL and searched for the secret in each form it could take
  (whsec_ text, base64, hex, the raw bytes).
Circuits and sites are invented.
"""

from __future__ import annotations

import base64
import gc
import os
import stat
import warnings
from collections.abc import Callable
from pathlib import Path

import pytest
from cryptography.fernet import Fernet
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import create_engine, inspect, select, text
from standardwebhooks.webhooks import Webhook

from api.db.models.webhooks import WebhookSecret
from api.settings import SettingsError, load_settings
from api.webhooks.sealing import KEY_FILE, SecretBox, SecretUnreadable, ServerKeyFileError, box_for_app
from api.webhooks.secret_store import reseal_all
from api.webhooks.signing import format_secret, new_secret, parse_secret
from tests.api.keyring import bearer, issue_key, unique_org
from tests.api.test_webhooks import deliver, subscribe
from tests.api.webhook_receiver import Receiver

pytestmark = pytest.mark.postgres


def _b64(raw: bytes) -> str:
    return "whsec_" + base64.b64encode(raw).decode()


def _every_stored_text(url: str) -> str:
    """Every value of every column of every webhook table, as the database gives it (a 'dump')."""
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            tables = [t for t in inspect(connection).get_table_names() if t.startswith("webhook_")]
            values = [str(v) for t in tables for row in connection.execute(text(f"SELECT * FROM {t}"))
                      for v in row]
    finally:
        engine.dispose()
    return "\n".join(values)


def test_a_dump_of_the_database_holds_no_usable_secret(hooks: FlaskClient, hook_app: Flask,
                                                       db_url: str) -> None:
    """The secret (whsec_, base64, hex or raw) is in no stored column; the stored token opens only with
    the server key, and not with another one."""
    sub = subscribe(hooks, "http://127.0.0.1:9/x")
    raw = parse_secret(sub["secret"])
    dump = _every_stored_text(db_url)
    for form in (sub["secret"], sub["secret"][6:], raw.hex(), raw.decode("latin-1")):
        assert form not in dump
    with hook_app.extensions["ohmtally.db"]() as session:
        (row,) = session.scalars(select(WebhookSecret)).all()
    assert row.sealed in dump  # the column read is the one that holds the secret, sealed
    box = box_for_app(hook_app)
    assert box is not None and box.open(sub["id"], row.sealed) == raw
    with pytest.raises(SecretUnreadable):
        SecretBox([Fernet.generate_key().decode()]).open(sub["id"], row.sealed)


def test_a_token_moved_to_another_subscription_does_not_open() -> None:
    """A sealed secret names its subscription: opened as another subscription's, it is refused."""
    box = SecretBox([Fernet.generate_key().decode()])
    sealed = box.seal(7, b"k" * 8 + new_secret())
    assert box.open(7, sealed).startswith(b"k" * 8)
    with pytest.raises(SecretUnreadable, match="another subscription"):
        box.open(8, sealed)
    assert "redacted" in repr(box)


@pytest.mark.parametrize("secret, code", [
    ("a" * 16, "invalid"),                                     # the issue's example: not even whsec_
    (_b64(b"a" * 16), "invalid"),                              # 16 bytes: below the spec's 24
    (_b64(b"a" * 32), "weak_secret"),                          # long enough, one distinct value
    (_b64(b"correct horse battery staple"), "weak_secret"),    # typed text: 13 distinct values
    (_b64(os.urandom(23)), "invalid"),                         # random but one byte short
    (_b64(os.urandom(65)), "weak_secret"),                     # above the spec's 64 bytes
    ("whsec_" + "A" * 32, "weak_secret"),                      # 24 zero bytes: the pattern's shortest
    ("whsec_" + "!" * 40, "invalid"),                          # not base64
])
def test_weak_or_malformed_secrets_are_refused(hooks: FlaskClient, secret: str, code: str) -> None:
    """A client's secret that is not whsec_ + base64 of 24–64 bytes taking ≥ 16 distinct values is a 422
    pointing at /secret (``invalid`` where the documented pattern already says no, ``weak_secret`` where
    only the decoded bytes do), and no subscription is made."""
    response = hooks.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/x", "events": ["job.created"],
                                                "secret": secret})
    assert response.status_code == 422, response.get_json()
    assert [(e["pointer"], e["code"]) for e in response.get_json()["errors"]] == [("/secret", code)]
    assert hooks.get("/v1/webhooks").get_json()["items"] == []


@pytest.mark.parametrize("size", [24, 64])
def test_random_secrets_of_the_specifications_sizes_are_accepted(hooks: FlaskClient, hook_app: Flask,
                                                                 receiver: Receiver, size: int) -> None:
    """24 and 64 random bytes (the spec's bounds) are accepted, and deliveries verify with them."""
    secret = _b64(os.urandom(size))
    subscribe(hooks, receiver.url, ["job.created"], secret=secret)
    hooks.post("/v1/jobs", json={"reference": f"S-{size}", "site": "Invented site"})
    deliver(hook_app)
    (receipt,) = receiver.receipts
    assert Webhook(secret).verify(receipt.body, receipt.headers)["type"] == "job.created"


@pytest.mark.parametrize("value, says", [
    ("not base64 at all!", "base64"),
    (base64.urlsafe_b64encode(os.urandom(16)).decode(), "32 bytes, not 16"),
    (base64.urlsafe_b64encode(bytes(32)).decode(), "not random"),
    (base64.urlsafe_b64encode(b"0123456789" * 3 + b"ab").decode(), "not random"),
    (",".join([Fernet.generate_key().decode()] * 2), "twice"),
    (Fernet.generate_key().decode() + ",", "empty key"),
])
def test_a_weak_or_malformed_server_key_stops_start_up(value: str, says: str, db_url: str,
                                                       app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_ENCRYPTION_KEY that is not base64 of 32 bytes with ≥ 16 distinct values, or lists a key
    twice, is a SettingsError when the settings load (so create_app refuses), never echoing the key."""
    with pytest.raises(SettingsError, match=says) as refused:
        load_settings({"OHMTALLY_ENCRYPTION_KEY": value}, environ={})
    assert value.split(",")[0] not in str(refused.value) or not value.split(",")[0]
    with pytest.raises(SettingsError):
        app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=value)


def test_good_server_keys_load_and_stay_out_of_reprs() -> None:
    """One or two Fernet keys load; the settings' repr never shows them."""
    first, second = Fernet.generate_key().decode(), Fernet.generate_key().decode()
    settings = load_settings({"OHMTALLY_ENCRYPTION_KEY": f"{first}, {second}"}, environ={})
    assert settings.encryption_keys is not None and settings.encryption_keys.keys == (first, second)
    assert first not in repr(settings) and second not in repr(settings)
    assert load_settings({}, environ={}).encryption_keys is None


@pytest.mark.parametrize("value", ["0", "604801", "a day"])
def test_the_default_overlap_is_bounded(value: str) -> None:
    """OHMTALLY_WEBHOOK_SECRET_OVERLAP_S outside 1–604800 s (seven days) stops start-up."""
    with pytest.raises(SettingsError, match="OHMTALLY_WEBHOOK_SECRET_OVERLAP_S"):
        load_settings({"OHMTALLY_WEBHOOK_SECRET_OVERLAP_S": value}, environ={})
    longest = load_settings({"OHMTALLY_WEBHOOK_SECRET_OVERLAP_S": "604800"}, environ={})
    assert longest.webhook_secret_overlap_s == 604800


def test_unset_key_with_auth_off_uses_one_generated_key_file(db_url: str, tmp_path: Path,
                                                             app_factory: Callable[..., Flask]) -> None:
    """With no key and auth off, the first app writes one key (mode 0600) into the instance folder; a
    second app on the same folder uses the same key; a key file others may read stops the boot."""
    first = app_factory(db_url, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    sub = subscribe(first.test_client(), "http://127.0.0.1:9/x")
    key_file = tmp_path / KEY_FILE
    assert stat.S_IMODE(key_file.stat().st_mode) == 0o600
    second = app_factory(db_url)
    box = box_for_app(second)
    with second.extensions["ohmtally.db"]() as session:
        (row,) = session.scalars(select(WebhookSecret)).all()
    assert box is not None and box.open(sub["id"], row.sealed) == parse_secret(sub["secret"])
    key_file.chmod(0o644)
    with pytest.raises(ServerKeyFileError, match="chmod 600"):  # refused at boot, not at first use
        app_factory(db_url, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")


def test_unset_key_with_auth_on_stores_nothing(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """With auth on and no OHMTALLY_ENCRYPTION_KEY, subscribing is a 503 secret_key_missing and nothing
    is stored (never a plain-text fallback)."""
    app = app_factory(db_url, OHMTALLY_AUTH="on", OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    admin = bearer(issue_key(app, unique_org(), "admin")[1])
    response = app.test_client().post("/v1/webhooks", headers=admin,
                                      json={"url": "http://127.0.0.1:9/x", "events": ["job.created"]})
    assert response.status_code == 503 and response.get_json()["code"] == "secret_key_missing"
    assert "OHMTALLY_ENCRYPTION_KEY" in response.get_json()["detail"]
    assert app.test_client().get("/v1/webhooks", headers=admin).get_json()["items"] == []


def test_rotating_the_server_key_keeps_every_delivery_verifiable(db_url: str, receiver: Receiver,
                                                                 app_factory: Callable[..., Flask]) -> None:
    """NEW,OLD opens secrets sealed with OLD; after reseal_all, NEW alone opens them and deliveries still
    verify with the subscription's unchanged secret."""
    old, new = Fernet.generate_key().decode(), Fernet.generate_key().decode()
    before = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=old, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    sub = subscribe(before.test_client(), receiver.url, ["job.created"])
    both = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=f"{new},{old}", OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    box = box_for_app(both)
    assert box is not None
    with both.extensions["ohmtally.db"]() as session:
        assert reseal_all(session, box) == 1
        session.commit()
    after = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=new, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    after.test_client().post("/v1/jobs", json={"reference": "R-1", "site": "Invented site"})
    assert deliver(after) == 1
    (receipt,) = receiver.receipts
    assert Webhook(sub["secret"]).verify(receipt.body, receipt.headers)["type"] == "job.created"
    assert format_secret(parse_secret(sub["secret"])) == sub["secret"]


def test_keys_reseal_finishes_a_server_key_rotation(db_url: str, receiver: Receiver, tmp_path: Path,
                                                    app_factory: Callable[..., Flask],
                                                    runner: Callable[..., tuple[int, str, str]],
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    """`ohmtally keys reseal` with NEW,OLD seals every secret with NEW: afterwards NEW alone opens them
    and a delivery verifies with the subscription's secret; without a key set it is a usage error."""
    old, new = Fernet.generate_key().decode(), Fernet.generate_key().decode()
    before = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=old, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    sub = subscribe(before.test_client(), receiver.url, ["job.created"])
    monkeypatch.setenv("OHMTALLY_INSTANCE_PATH", str(tmp_path))
    monkeypatch.delenv("OHMTALLY_ENCRYPTION_KEY", raising=False)
    status, _out, err = runner("keys", "reseal", "--database-url", db_url)
    assert status == 3 and "OHMTALLY_ENCRYPTION_KEY" in err
    monkeypatch.setenv("OHMTALLY_ENCRYPTION_KEY", f"{new},{old}")
    status, out, _err = runner("keys", "reseal", "--database-url", db_url)
    assert status == 0 and out.startswith("1 webhook secret(s)")
    after = app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=new, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    after.test_client().post("/v1/jobs", json={"reference": "R-2", "site": "Invented site"})
    assert deliver(after) == 1
    (receipt,) = receiver.receipts
    assert Webhook(sub["secret"]).verify(receipt.body, receipt.headers)["type"] == "job.created"


def test_a_refused_boot_leaves_no_connection_open(db_url: str, tmp_path: Path,
                                                  app_factory: Callable[..., Flask]) -> None:
    """A boot refused after the database was opened (here: a key file others may read) closes what it
    opened: the caller never gets the app, so nobody else could (on PostgreSQL an open connection
    left for the collector is a ResourceWarning)."""
    app_factory(db_url)
    (tmp_path / KEY_FILE).chmod(0o644)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        with pytest.raises(ServerKeyFileError):
            app_factory(db_url)
        gc.collect()
    leaks = [str(w.message) for w in caught if issubclass(w.category, ResourceWarning)]
    assert not leaks, leaks
