"""Installation and board facts, their history, and the warnings an upload gave.

Revision ID: 0008_site_facts
Revises: 0007_deployment_facts
Create Date: 2026-12-02

An *expand* migration (new tables, a nullable column older code never reads): the
schema's floor is left where it is (``api.db.schema``).

- ``site_facts``: one row per job for the installation, one per board; the current
  merged facts as JSON.
- ``fact_history``: every value a fact ever had, with its upload and location.
- ``uploads.warnings``: the names an upload's input carried that were read as
  nothing (unknown or ambiguous columns and keys), so a replayed answer says the same.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0008_site_facts"
down_revision = "0007_deployment_facts"
branch_labels = None
depends_on = None

_TS = sa.DateTime(timezone=True)
_JOB_ID = sa.BigInteger().with_variant(sa.Integer(), "sqlite")


def upgrade() -> None:
    op.create_table(
        "site_facts",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("job_id", _JOB_ID, sa.ForeignKey("jobs.id"), nullable=False),
        sa.Column("scope", sa.String(20), nullable=False),
        sa.Column("board", sa.String(200), nullable=False),
        sa.Column("fields", sa.JSON(), nullable=False),
        sa.Column("updated_at", _TS, nullable=False),
        sa.Column("upload_id", sa.Integer(), sa.ForeignKey("uploads.id"), nullable=True),
        sa.UniqueConstraint("job_id", "scope", "board", name="uq_site_facts_job_scope_board"),
    )
    op.create_index("ix_site_facts_job_id", "site_facts", ["job_id"])
    op.create_table(
        "fact_history",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("fact_id", sa.Integer(), sa.ForeignKey("site_facts.id"), nullable=False),
        sa.Column("field", sa.String(64), nullable=False),
        sa.Column("value", sa.JSON(), nullable=True),
        sa.Column("upload_id", sa.Integer(), sa.ForeignKey("uploads.id"), nullable=False),
        sa.Column("location", sa.String(100), nullable=True),
        sa.Column("recorded_at", _TS, nullable=False),
    )
    op.create_index("ix_fact_history_fact_field", "fact_history", ["fact_id", "field"])
    op.create_index("ix_fact_history_upload_id", "fact_history", ["upload_id"])
    with op.batch_alter_table("uploads") as batch:
        batch.add_column(sa.Column("warnings", sa.JSON(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("uploads") as batch:
        batch.drop_column("warnings")
    op.drop_index("ix_fact_history_upload_id", table_name="fact_history")
    op.drop_index("ix_fact_history_fact_field", table_name="fact_history")
    op.drop_table("fact_history")
    op.drop_index("ix_site_facts_job_id", table_name="site_facts")
    op.drop_table("site_facts")
