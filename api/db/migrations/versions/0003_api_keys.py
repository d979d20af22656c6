"""API keys per organisation (hash only), organisation-scoped Idempotency-Key records, upload hash index.

Revision ID: 0003_api_keys
Revises: 0002_upload_idempotency_key
Create Date: 2026-12-01

- ``api_keys``: the secret is never stored, only its SHA-256 (``key_hash``,
  unique, the look-up column) and a short display ``prefix``; ``scopes`` is a
  comma-separated subset of read,write,admin; ``expires_at``/``revoked_at``
  null while the key works.
- ``idempotency_records``: one row per (organisation, Idempotency-Key) with
  the request's fingerprint and the first response, written in the same
  transaction as the change it answers for.
- ``ix_uploads_job_sha256``: finds an exact re-post to a job without a key.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0003_api_keys"
down_revision = "0002_upload_idempotency_key"
branch_labels = None
depends_on = None

_TS = sa.DateTime(timezone=True)


def upgrade() -> None:
    op.create_table(
        "api_keys",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("organisation_id", sa.Integer(), sa.ForeignKey("organisations.id"), nullable=False),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("prefix", sa.String(16), nullable=False),
        sa.Column("key_hash", sa.String(64), nullable=False),
        sa.Column("scopes", sa.String(100), nullable=False),
        sa.Column("created_at", _TS, nullable=False),
        sa.Column("expires_at", _TS, nullable=True),
        sa.Column("revoked_at", _TS, nullable=True),
        sa.Column("last_used_at", _TS, nullable=True),
        sa.UniqueConstraint("key_hash", name="uq_api_keys_key_hash"),
    )
    op.create_index("ix_api_keys_organisation_id", "api_keys", ["organisation_id"])
    op.create_table(
        "idempotency_records",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("organisation_id", sa.Integer(), sa.ForeignKey("organisations.id"), nullable=False),
        sa.Column("idempotency_key", sa.String(200), nullable=False),
        sa.Column("method", sa.String(10), nullable=False),
        sa.Column("path", sa.String(2000), nullable=False),
        sa.Column("request_sha256", sa.String(64), nullable=False),
        sa.Column("status_code", sa.Integer(), nullable=True),
        sa.Column("content_type", sa.String(200), nullable=True),
        sa.Column("location", sa.String(2000), nullable=True),
        sa.Column("response_body", sa.LargeBinary(), nullable=True),
        sa.Column("created_at", _TS, nullable=False),
        sa.UniqueConstraint("organisation_id", "idempotency_key", name="uq_idempotency_org_key"),
    )
    op.create_index("ix_uploads_job_sha256", "uploads", ["job_id", "sha256"])


def downgrade() -> None:
    op.drop_index("ix_uploads_job_sha256", table_name="uploads")
    op.drop_table("idempotency_records")
    op.drop_index("ix_api_keys_organisation_id", table_name="api_keys")
    op.drop_table("api_keys")
