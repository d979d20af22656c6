"""Deployment facts: the schema's floor for rolling deploys, and the settings hosts must share.

Revision ID: 0007_deployment_facts
Revises: 0006_job_identity
Create Date: 2026-12-02

An *expand* migration (it only adds a table older code never reads). It records
the first floor, ``schema.serves_from``: from here on, a build whose head is this
revision or newer boots on any newer database whose floor it reaches
(``api.db.schema``). The floor is this revision itself, not an older one: builds
before it do not read the table and refuse every revision but their own head.

How a later migration keeps a rolling deploy working:

- expand (add a table, a nullable column, an index; fill new columns from old ones):
  leave the floor alone; old code keeps serving while new code rolls out.
- contract (drop or rename what old code uses, make a column NOT NULL, change a
  meaning): end ``upgrade`` with ``raise_floor(op.get_bind(), revision)`` and
  ``downgrade`` with ``raise_floor(op.get_bind(), <the floor before>)``; deploy it
  only after every host runs code that no longer needs what it removes.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

from api.db.schema import raise_floor

revision = "0007_deployment_facts"
down_revision = "0006_job_identity"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "deployment_facts",
        sa.Column("name", sa.String(100), primary_key=True),
        sa.Column("value", sa.Text(), nullable=False),
        sa.Column("recorded_by", sa.String(200), nullable=True),
        sa.Column("recorded_at", sa.DateTime(timezone=True), nullable=False),
    )
    raise_floor(op.get_bind(), revision)


def downgrade() -> None:
    op.drop_table("deployment_facts")
