"""Initial schema: organisations (seeded with "local"), jobs, uploads, circuits, field history.

Revision ID: 0001_initial
Revises:
Create Date: 2026-12-01
"""

from __future__ import annotations

from datetime import UTC, datetime

import sqlalchemy as sa
from alembic import op

revision = "0001_initial"
down_revision = None
branch_labels = None
depends_on = None

_TS = sa.DateTime(timezone=True)


def upgrade() -> None:
    organisations = op.create_table(
        "organisations",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("slug", sa.String(64), nullable=False, unique=True),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("created_at", _TS, nullable=False),
    )
    op.create_table(
        "jobs",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("organisation_id", sa.Integer(), sa.ForeignKey("organisations.id"), nullable=False),
        sa.Column("reference", sa.String(200), nullable=False),
        sa.Column("site", sa.Text(), nullable=False),
        sa.Column("ruleset", sa.String(100), nullable=False),
        sa.Column("external_ref", sa.String(200), nullable=True),
        sa.Column("created_at", _TS, nullable=False),
        sa.Column("updated_at", _TS, nullable=False),
    )
    op.create_index("ix_jobs_organisation_id", "jobs", ["organisation_id"])
    op.create_index("ix_jobs_reference", "jobs", ["reference"])
    op.create_table(
        "uploads",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("job_id", sa.Integer(), sa.ForeignKey("jobs.id"), nullable=False),
        sa.Column("content_type", sa.String(200), nullable=False),
        sa.Column("adapter", sa.String(100), nullable=True),
        sa.Column("profile", sa.String(200), nullable=True),
        sa.Column("sha256", sa.String(64), nullable=False),
        sa.Column("size", sa.Integer(), nullable=False),
        sa.Column("body", sa.LargeBinary(), nullable=False),
        sa.Column("received_at", _TS, nullable=False),
        sa.Column("status", sa.String(20), nullable=False),
        sa.Column("accepted", sa.Integer(), nullable=False),
        sa.Column("rejected", sa.JSON(), nullable=False),
    )
    op.create_index("ix_uploads_job_id", "uploads", ["job_id"])
    op.create_table(
        "circuits",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("job_id", sa.Integer(), sa.ForeignKey("jobs.id"), nullable=False),
        sa.Column("board", sa.String(200), nullable=False),
        sa.Column("circuit", sa.String(200), nullable=False),
        sa.Column("fields", sa.JSON(), nullable=False),
        sa.Column("updated_at", _TS, nullable=False),
        sa.Column("upload_id", sa.Integer(), sa.ForeignKey("uploads.id"), nullable=True),
        sa.UniqueConstraint("job_id", "board", "circuit", name="uq_circuits_job_key"),
    )
    op.create_index("ix_circuits_job_id", "circuits", ["job_id"])
    op.create_table(
        "field_history",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("circuit_id", sa.Integer(), sa.ForeignKey("circuits.id"), nullable=False),
        sa.Column("field", sa.String(64), nullable=False),
        sa.Column("value", sa.JSON(), nullable=False),
        sa.Column("upload_id", sa.Integer(), sa.ForeignKey("uploads.id"), nullable=False),
        sa.Column("location", sa.String(100), nullable=True),
        sa.Column("recorded_at", _TS, nullable=False),
    )
    op.create_index("ix_field_history_circuit_field", "field_history", ["circuit_id", "field"])
    op.create_index("ix_field_history_upload_id", "field_history", ["upload_id"])
    # Every job belongs to an organisation; until API keys name others, it is this one.
    op.bulk_insert(organisations, [
        {"slug": "local", "name": "Local organisation", "created_at": datetime.now(UTC)},
    ])


def downgrade() -> None:
    op.drop_table("field_history")
    op.drop_table("circuits")
    op.drop_table("uploads")
    op.drop_table("jobs")
    op.drop_table("organisations")
