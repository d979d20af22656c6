"""Webhooks (subscriptions, a durable outbox, deliveries) and sync (job revision, external refs).

Revision ID: 0004_webhooks_sync
Revises: 0003_api_keys
Create Date: 2026-12-01

- ``webhook_subscriptions``: per organisation; the secret signs deliveries and
  is kept in the clear because signing needs it (it is shown to the client once).
- ``webhook_events``: the outbox. A row is written in the same transaction as
  the change it reports, with the exact JSON body every delivery sends.
- ``webhook_deliveries``: one row per (event, subscription), fanned out in that
  same transaction; the worker claims rows with a lease (``claimed_until``).
- ``jobs.revision``: bumped on every change of a job; the verdicts' ETag.
- ``jobs.external_ref`` indexed for ``GET /v1/jobs?external_ref=``;
  ``jobs.updated_at`` indexed for ``?updated_since=``; ``circuits.external_ref`` added.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0004_webhooks_sync"
down_revision = "0003_api_keys"
branch_labels = None
depends_on = None

_TS = sa.DateTime(timezone=True)


def upgrade() -> None:
    op.create_table(
        "webhook_subscriptions",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("organisation_id", sa.Integer(), sa.ForeignKey("organisations.id"), nullable=False),
        sa.Column("url", sa.String(2000), nullable=False),
        sa.Column("events", sa.JSON(), nullable=False),
        sa.Column("secret", sa.String(200), nullable=False),
        sa.Column("description", sa.String(200), nullable=True),
        sa.Column("created_at", _TS, nullable=False),
    )
    op.create_index("ix_webhook_subscriptions_organisation_id", "webhook_subscriptions", ["organisation_id"])
    op.create_table(
        "webhook_events",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("event_id", sa.String(36), nullable=False),
        sa.Column("organisation_id", sa.Integer(), sa.ForeignKey("organisations.id"), nullable=False),
        sa.Column("job_id", sa.Integer(), sa.ForeignKey("jobs.id"), nullable=True),
        sa.Column("type", sa.String(50), nullable=False),
        sa.Column("body", sa.Text(), nullable=False),
        sa.Column("created_at", _TS, nullable=False),
        sa.UniqueConstraint("event_id", name="uq_webhook_events_event_id"),
    )
    op.create_index("ix_webhook_events_job_id", "webhook_events", ["job_id"])
    op.create_table(
        "webhook_deliveries",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("subscription_id", sa.Integer(),
                  sa.ForeignKey("webhook_subscriptions.id", ondelete="CASCADE"), nullable=False),
        sa.Column("event_pk", sa.Integer(), sa.ForeignKey("webhook_events.id"), nullable=False),
        sa.Column("job_id", sa.Integer(), nullable=True),
        sa.Column("status", sa.String(20), nullable=False),
        sa.Column("attempts", sa.Integer(), nullable=False),
        sa.Column("next_attempt_at", _TS, nullable=False),
        sa.Column("claimed_by", sa.String(64), nullable=True),
        sa.Column("claimed_until", _TS, nullable=True),
        sa.Column("last_attempt_at", _TS, nullable=True),
        sa.Column("last_status_code", sa.Integer(), nullable=True),
        sa.Column("last_error", sa.Text(), nullable=True),
        sa.Column("delivered_at", _TS, nullable=True),
        sa.Column("created_at", _TS, nullable=False),
    )
    op.create_index("ix_webhook_deliveries_status_next", "webhook_deliveries", ["status", "next_attempt_at"])
    op.create_index("ix_webhook_deliveries_order", "webhook_deliveries", ["subscription_id", "job_id", "id"])
    op.create_index("ix_webhook_deliveries_event_pk", "webhook_deliveries", ["event_pk"])
    with op.batch_alter_table("jobs") as batch:
        batch.add_column(sa.Column("revision", sa.Integer(), nullable=False, server_default="1"))
        batch.create_index("ix_jobs_updated_at", ["updated_at"])
        batch.create_index("ix_jobs_external_ref", ["external_ref"])
    with op.batch_alter_table("circuits") as batch:
        batch.add_column(sa.Column("external_ref", sa.String(200), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("circuits") as batch:
        batch.drop_column("external_ref")
    with op.batch_alter_table("jobs") as batch:
        batch.drop_index("ix_jobs_external_ref")
        batch.drop_index("ix_jobs_updated_at")
        batch.drop_column("revision")
    op.drop_table("webhook_deliveries")
    op.drop_table("webhook_events")
    op.drop_table("webhook_subscriptions")
