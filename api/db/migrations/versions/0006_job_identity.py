"""Job ids that count nothing: random 53-bit ids in 64-bit columns; jobs listed by creation time.

Revision ID: 0006_job_identity
Revises: 0005_webhook_secrets
Create Date: 2026-12-02

- A new job's id is a random integer in 1 … 2**53 − 1 (``api.db.models.jobs.new_job_id``), so
  a tenant's ids say nothing about how many jobs others made; JSON clients still hold it
  exactly (a double's integers). Existing jobs keep their ids: clients hold them.
- PostgreSQL: ``jobs.id`` and every column that holds a job id (``uploads.job_id``,
  ``circuits.job_id``, ``webhook_events.job_id``, ``webhook_deliveries.job_id``) become
  BIGINT, and ``jobs.id`` loses its sequence, so no insert can fall back to counting.
  SQLite's INTEGER is already 64 bits (the models declare the SQLite variant INTEGER, so
  ``jobs.id`` stays the rowid and no table is rebuilt).
- ``ix_jobs_org_created`` on ``(organisation_id, created_at, id)``: the order of
  ``GET /v1/jobs`` (creation time, then id) for one organisation.
- Downgrade refuses while a job id does not fit a 32-bit INTEGER (it would be cut).
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0006_job_identity"
down_revision = "0005_webhook_secrets"
branch_labels = None
depends_on = None

_JOB_ID_COLUMNS = (("uploads", "job_id"), ("circuits", "job_id"), ("webhook_events", "job_id"),
                   ("webhook_deliveries", "job_id"))
_INT4_MAX = 2**31 - 1


def upgrade() -> None:
    op.create_index("ix_jobs_org_created", "jobs", ["organisation_id", "created_at", "id"])
    if op.get_bind().dialect.name != "postgresql":
        return
    op.alter_column("jobs", "id", type_=sa.BigInteger(), existing_type=sa.Integer(), server_default=None,
                    existing_nullable=False)
    op.execute("DROP SEQUENCE IF EXISTS jobs_id_seq")
    for table, column in _JOB_ID_COLUMNS:
        op.alter_column(table, column, type_=sa.BigInteger(), existing_type=sa.Integer())


def downgrade() -> None:
    connection = op.get_bind()
    largest = connection.execute(sa.text("SELECT max(id) FROM jobs")).scalar()
    if largest is not None and largest > _INT4_MAX:
        raise RuntimeError(f"job ids up to {largest} do not fit the 32-bit ids below 0006; "
                           "downgrading would cut them")
    if connection.dialect.name == "postgresql":
        for table, column in _JOB_ID_COLUMNS:
            op.alter_column(table, column, type_=sa.Integer(), existing_type=sa.BigInteger())
        op.alter_column("jobs", "id", type_=sa.Integer(), existing_type=sa.BigInteger(),
                        existing_nullable=False)
        op.execute("CREATE SEQUENCE jobs_id_seq OWNED BY jobs.id")
        op.execute("SELECT setval('jobs_id_seq', coalesce((SELECT max(id) FROM jobs), 0) + 1, false)")
        op.execute("ALTER TABLE jobs ALTER COLUMN id SET DEFAULT nextval('jobs_id_seq')")
    op.drop_index("ix_jobs_org_created", table_name="jobs")
