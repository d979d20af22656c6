"""Webhook signing secrets leave ``webhook_subscriptions`` for ``webhook_secrets``, encrypted.

Revision ID: 0005_webhook_secrets
Revises: 0004_webhooks_sync
Create Date: 2026-12-02

- ``webhook_secrets``: one row per signing secret of a subscription; ``sealed``
  is the Fernet token of ``api.webhooks.sealing`` (never the secret itself);
  ``expires_at`` null for the current secret, set on earlier ones by a rotation
  (they keep signing until then).
- Existing plain-text secrets are sealed here with the server key, exactly as
  ``ohmtally serve`` would find it (``OHMTALLY_ENCRYPTION_KEY``; unset with
  ``OHMTALLY_AUTH=off``, the generated key file in the instance folder), then
  the plain ``webhook_subscriptions.secret`` column is dropped. The bytes that
  sign are the old secret's UTF-8 bytes, so a receiver keeps using it as
  ``whsec_`` + base64 of those bytes. With rows to seal and no key to seal them
  with (auth on, no key set), the migration stops before changing anything and
  says so. With no rows, no key is needed.
- Downgrade would write secrets back in plain text: it refuses while any
  secret exists (delete the subscriptions first), and otherwise restores the
  0004 layout.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

from api.app import default_instance_path
from api.settings import load_settings
from api.webhooks.sealing import load_box

revision = "0005_webhook_secrets"
down_revision = "0004_webhooks_sync"
branch_labels = None
depends_on = None

_TS = sa.DateTime(timezone=True)
_SUBSCRIPTIONS = sa.table("webhook_subscriptions", sa.column("id", sa.Integer()),
                          sa.column("secret", sa.String(200)), sa.column("created_at", _TS))
_SECRETS = sa.table("webhook_secrets", sa.column("subscription_id", sa.Integer()),
                    sa.column("sealed", sa.Text()), sa.column("created_at", _TS),
                    sa.column("expires_at", _TS))


def upgrade() -> None:
    connection = op.get_bind()
    plain = list(connection.execute(sa.select(_SUBSCRIPTIONS.c.id, _SUBSCRIPTIONS.c.secret,
                                              _SUBSCRIPTIONS.c.created_at)
                                    .order_by(_SUBSCRIPTIONS.c.id)))
    sealed: list[dict[str, object]] = []
    if plain:
        settings = load_settings()
        box = load_box(settings, settings.instance_path or default_instance_path())
        if box is None:
            raise RuntimeError(
                f"{len(plain)} webhook secret(s) are stored in plain text and must be encrypted, but "
                "OHMTALLY_ENCRYPTION_KEY is not set (and OHMTALLY_AUTH is on): set it to the key the "
                "servers will use, then run `ohmtally db upgrade` again")
        sealed = [{"subscription_id": row.id, "sealed": box.seal(row.id, row.secret.encode("utf-8")),
                   "created_at": row.created_at, "expires_at": None} for row in plain]
    # Everything that can refuse has been decided: only now does the schema change (SQLite's DDL
    # is not transactional under Alembic, so a refusal after it would leave half a migration).
    _create_secrets_table()
    if sealed:
        connection.execute(_SECRETS.insert(), sealed)
    with op.batch_alter_table("webhook_subscriptions") as batch:
        batch.drop_column("secret")


def _create_secrets_table() -> None:
    op.create_table(
        "webhook_secrets",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("subscription_id", sa.Integer(),
                  sa.ForeignKey("webhook_subscriptions.id", ondelete="CASCADE"), nullable=False),
        sa.Column("sealed", sa.Text(), nullable=False),
        sa.Column("created_at", _TS, nullable=False),
        sa.Column("expires_at", _TS, nullable=True),
    )
    op.create_index("ix_webhook_secrets_subscription_id", "webhook_secrets", ["subscription_id"])


def downgrade() -> None:
    count = op.get_bind().execute(sa.select(sa.func.count()).select_from(_SECRETS)).scalar_one()
    if count:
        raise RuntimeError(f"downgrading below 0005 would store {count} webhook secret(s) in plain text; "
                           "delete the webhook subscriptions first")
    with op.batch_alter_table("webhook_subscriptions") as batch:
        batch.add_column(sa.Column("secret", sa.String(200), nullable=False, server_default=""))
    with op.batch_alter_table("webhook_subscriptions") as batch:
        batch.alter_column("secret", server_default=None)
    op.drop_index("ix_webhook_secrets_subscription_id", table_name="webhook_secrets")
    op.drop_table("webhook_secrets")
