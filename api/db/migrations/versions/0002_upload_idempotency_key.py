"""Uploads remember the client's Idempotency-Key, so a resent body is answered, not merged twice.

Revision ID: 0002_upload_idempotency_key
Revises: 0001_initial
Create Date: 2026-12-01
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002_upload_idempotency_key"
down_revision = "0001_initial"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("uploads") as batch:
        batch.add_column(sa.Column("idempotency_key", sa.String(200), nullable=True))
        batch.create_unique_constraint("uq_uploads_job_idempotency_key", ["job_id", "idempotency_key"])


def downgrade() -> None:
    with op.batch_alter_table("uploads") as batch:
        batch.drop_constraint("uq_uploads_job_idempotency_key", type_="unique")
        batch.drop_column("idempotency_key")
