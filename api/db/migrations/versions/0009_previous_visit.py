"""A job's installation, the date its readings were taken, its previous visit and rename map.

Revision ID: 0009_previous_visit
Revises: 0008_site_facts
Create Date: 2026-12-02

An *expand* migration (nullable columns and an index older code never reads): the
schema's floor is left where it is (``api.db.schema``).

- ``jobs.installation_ref``: the firm's id for the installation; within an organisation,
  jobs with the same one are visits to the same installation.
- ``jobs.tested_on``: the date the readings were taken (not the date they were posted).
- ``jobs.previous_job_id``: a previous visit named explicitly (else the latest earlier
  job of the same installation is used).
- ``jobs.visit_map``: boards and circuits renamed since the previous visit
  (``{"boards": {old: new}, "circuits": {"old_board/old_circuit": "new_board/new_circuit"}}``).
- ``ix_jobs_org_installation``: a job's earlier visits are found by organisation,
  installation and date.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0009_previous_visit"
down_revision = "0008_site_facts"
branch_labels = None
depends_on = None

_JOB_ID = sa.BigInteger().with_variant(sa.Integer(), "sqlite")


def upgrade() -> None:
    with op.batch_alter_table("jobs") as batch:
        batch.add_column(sa.Column("installation_ref", sa.String(200), nullable=True))
        batch.add_column(sa.Column("tested_on", sa.Date(), nullable=True))
        batch.add_column(sa.Column("previous_job_id", _JOB_ID, nullable=True))
        batch.add_column(sa.Column("visit_map", sa.JSON(), nullable=True))
    op.create_index("ix_jobs_org_installation", "jobs", ["organisation_id", "installation_ref", "tested_on"])


def downgrade() -> None:
    op.drop_index("ix_jobs_org_installation", table_name="jobs")
    with op.batch_alter_table("jobs") as batch:
        batch.drop_column("visit_map")
        batch.drop_column("previous_job_id")
        batch.drop_column("tested_on")
        batch.drop_column("installation_ref")
