"""Migration 0005 seals the plain-text secrets of earlier versions, and never writes one back.

External references: a migrated subscription's deliveries are checked with the Standard
Webhooks reference library (``standardwebhooks``), given ``whsec_`` + the standard base64
of the old secret's UTF-8 bytes, the key the old signatures were made with (RFC 2104).
Each backend gets a database of its own (an SQLite file; a PostgreSQL schema).
"""

from __future__ import annotations

import base64
import os
import uuid
from collections.abc import Callable, Iterator
from datetime import UTC, datetime
from pathlib import Path

import pytest
from alembic import command
from cryptography.fernet import Fernet
from flask import Flask
from sqlalchemy import create_engine, inspect, text
from sqlalchemy.engine import make_url
from standardwebhooks.webhooks import Webhook

from api.db.schema import alembic_config, upgrade
from api.webhooks.sealing import SecretBox
from tests.api.conftest import POSTGRES_ENV
from tests.api.test_webhooks import deliver
from tests.api.webhook_receiver import Receiver

pytestmark = pytest.mark.postgres

BEFORE, THIS = "0004_webhooks_sync", "0005_webhook_secrets"
OLD_SECRET = "an-old-plain-secret-chosen-by-a-user-0042"  # invented; the kind 0004 accepted


@pytest.fixture
def own_url(backend: str, tmp_path: Path) -> Iterator[str]:
    """An empty database of this test's own, on the backend under test."""
    if backend == "sqlite":
        yield f"sqlite:///{tmp_path / 'migrated.sqlite3'}"
        return
    base = os.environ[POSTGRES_ENV]
    schema = f"ohmtally_migration_{uuid.uuid4().hex[:12]}"
    admin = create_engine(base)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    try:
        yield make_url(base).update_query_dict({"options": f"-csearch_path={schema}"}).render_as_string(
            hide_password=False)
    finally:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
        admin.dispose()


def _old_subscription(url: str, target: str) -> int:
    """A database at 0004 holding one subscription with a plain-text secret, as 0004 stored it."""
    upgrade(url, BEFORE)
    engine = create_engine(url)
    try:
        with engine.begin() as connection:
            org = connection.execute(text("SELECT id FROM organisations WHERE slug = 'local'")).scalar_one()
            connection.execute(text(
                "INSERT INTO webhook_subscriptions (organisation_id, url, events, secret, created_at) "
                "VALUES (:org, :url, :events, :secret, :at)"),
                {"org": org, "url": target, "events": '["job.created"]', "secret": OLD_SECRET,
                 "at": datetime.now(UTC)})
            sub_id: int = connection.execute(text("SELECT id FROM webhook_subscriptions")).scalar_one()
    finally:
        engine.dispose()
    return sub_id


def _columns(url: str, table: str) -> list[str]:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return [c["name"] for c in inspect(connection).get_columns(table)]
    finally:
        engine.dispose()


def _sealed(url: str) -> list[tuple[int, str]]:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return [(r[0], r[1]) for r in connection.execute(text(
                "SELECT subscription_id, sealed FROM webhook_secrets"))]
    finally:
        engine.dispose()


def test_plain_secrets_are_sealed_and_keep_signing(own_url: str, receiver: Receiver, tmp_path: Path,
                                                   monkeypatch: pytest.MonkeyPatch,
                                                   app_factory: Callable[..., Flask]) -> None:
    """Upgrading a 0004 database with a key set: the plain column is gone, the stored token is not the
    secret and opens to its bytes with that key, and the subscription's deliveries verify with
    whsec_ + base64 of the old secret."""
    sub_id = _old_subscription(own_url, receiver.url)
    key = Fernet.generate_key().decode()
    monkeypatch.setenv("OHMTALLY_ENCRYPTION_KEY", key)
    upgrade(own_url, THIS)
    assert "secret" not in _columns(own_url, "webhook_subscriptions")
    ((owner, sealed),) = _sealed(own_url)
    assert owner == sub_id and OLD_SECRET not in sealed
    assert base64.b64encode(OLD_SECRET.encode()).decode() not in sealed
    assert SecretBox([key]).open(sub_id, sealed) == OLD_SECRET.encode("utf-8")
    upgrade(own_url)  # on to the newest revision, so an app serves it
    app = app_factory(own_url, OHMTALLY_ENCRYPTION_KEY=key, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    app.test_client().post("/v1/jobs", json={"reference": "M-1", "site": "Invented site"})
    assert deliver(app) == 1
    (receipt,) = receiver.receipts
    as_whsec = "whsec_" + base64.b64encode(OLD_SECRET.encode("utf-8")).decode()
    assert Webhook(as_whsec).verify(receipt.body, receipt.headers)["type"] == "job.created"


def test_without_a_key_the_migration_changes_nothing(own_url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """With plain secrets to seal, auth on and no key, the upgrade stops with the reason, and the database
    is still at 0004 with its plain column and no secrets table (nothing half done)."""
    _old_subscription(own_url, "http://127.0.0.1:9/x")
    monkeypatch.delenv("OHMTALLY_ENCRYPTION_KEY", raising=False)
    monkeypatch.setenv("OHMTALLY_AUTH", "on")
    with pytest.raises(RuntimeError, match="OHMTALLY_ENCRYPTION_KEY is not set"):
        upgrade(own_url, THIS)
    assert "secret" in _columns(own_url, "webhook_subscriptions")
    engine = create_engine(own_url)
    try:
        with engine.connect() as connection:
            assert "webhook_secrets" not in inspect(connection).get_table_names()
            assert connection.execute(text("SELECT version_num FROM alembic_version")).scalar_one() == BEFORE
    finally:
        engine.dispose()


def test_downgrade_refuses_to_write_secrets_back_in_plain_text(own_url: str,
                                                               monkeypatch: pytest.MonkeyPatch) -> None:
    """Down to 0004 is refused while a secret exists; with none, it restores the 0004 layout."""
    _old_subscription(own_url, "http://127.0.0.1:9/x")
    monkeypatch.setenv("OHMTALLY_ENCRYPTION_KEY", Fernet.generate_key().decode())
    upgrade(own_url, THIS)
    with pytest.raises(RuntimeError, match="plain text"):
        command.downgrade(alembic_config(own_url), BEFORE)
    assert _sealed(own_url) != []
    engine = create_engine(own_url)
    try:
        with engine.begin() as connection:
            connection.execute(text("DELETE FROM webhook_secrets"))
            connection.execute(text("DELETE FROM webhook_subscriptions"))
    finally:
        engine.dispose()
    command.downgrade(alembic_config(own_url), BEFORE)
    assert "secret" in _columns(own_url, "webhook_subscriptions")
