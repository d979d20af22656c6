"""Tables: organisations, jobs, circuits (current merged fields), field history, uploads.

Invariants:
- Every job belongs to an organisation; migration 0001 seeds the ``local`` one. An
  organisation's ``slug`` is chosen once, explicitly (``ohmtally keys create --org``), and
  is its identity; ``name`` is only shown (``api.http.keys``).
- A job's id is random in 1 … 2**53 − 1 (:func:`new_job_id`, migration 0006): ids are
  not a count, so a tenant's ids say nothing of anyone else's jobs, and every JSON reader
  holds them exactly. Columns holding a job id are 64-bit (:data:`JOB_ID`).
- ``circuits.fields`` holds the current merged record's fields as JSON, readings
  in their ``Reading.to_json()`` form, so ``engine.build_record`` rebuilds them
  unchanged. ``(job_id, board, circuit)`` is unique.
- ``field_history`` has one row for every field value ever received (the
  latest row of a field equals the current value), each with its upload.
- ``uploads.body`` is the request body exactly as received; it is never
  changed or deleted, so nothing a client sent is lost, even rejected rows.
  ``(job_id, idempotency_key)`` is unique: a resent body is found, not stored twice.
- The schema is owned by the Alembic migrations in ``api/db/migrations``; these
  classes must match them (a test compares them).
"""

from __future__ import annotations

import secrets
from datetime import date, datetime
from typing import Any

from sqlalchemy import (
    JSON,
    BigInteger,
    Date,
    ForeignKey,
    Index,
    Integer,
    LargeBinary,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import Mapped, mapped_column, relationship

from api.db.models.base import Base, UtcDateTime, utcnow

__all__ = ["JOB_ID", "MAX_JOB_ID", "Circuit", "FieldHistory", "Job", "Organisation", "Upload", "new_job_id"]

MAX_JOB_ID = 2**53 - 1  # RFC 7493 §2.2: the integers every JSON reader holds exactly
# BIGINT on PostgreSQL; on SQLite INTEGER, which is 64-bit already and keeps jobs.id the rowid
JOB_ID = BigInteger().with_variant(Integer(), "sqlite")


def new_job_id() -> int:
    """A random job id in 1 … 2**53 − 1 (53 bits from the OS's CSPRNG)."""
    return secrets.randbelow(MAX_JOB_ID) + 1


class Organisation(Base):
    __tablename__ = "organisations"

    id: Mapped[int] = mapped_column(primary_key=True)
    slug: Mapped[str] = mapped_column(String(64), unique=True)
    name: Mapped[str] = mapped_column(String(200))
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)


class Job(Base):
    __tablename__ = "jobs"
    # GET /v1/jobs lists one organisation's jobs by creation time, then id (migration 0006)
    __table_args__ = (Index("ix_jobs_org_created", "organisation_id", "created_at", "id"),
                      # a job's earlier visits: same organisation and installation, by date (migration 0009)
                      Index("ix_jobs_org_installation", "organisation_id", "installation_ref", "tested_on"))

    id: Mapped[int] = mapped_column(JOB_ID, primary_key=True, autoincrement=False, default=new_job_id)
    organisation_id: Mapped[int] = mapped_column(ForeignKey("organisations.id"), index=True)
    reference: Mapped[str] = mapped_column(String(200), index=True)
    site: Mapped[str] = mapped_column(Text)
    ruleset: Mapped[str] = mapped_column(String(100))
    external_ref: Mapped[str | None] = mapped_column(String(200), default=None, index=True)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    updated_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow, index=True)
    revision: Mapped[int] = mapped_column(default=1, server_default="1")  # +1 on every change (0004)
    # the previous visit (migration 0009): the installation, the date the readings were taken, an
    # explicit previous job and the boards and circuits renamed since (api/db/visits.py)
    installation_ref: Mapped[str | None] = mapped_column(String(200), default=None)
    tested_on: Mapped[date | None] = mapped_column(Date, default=None)
    previous_job_id: Mapped[int | None] = mapped_column(JOB_ID, default=None)
    visit_map: Mapped[dict[str, Any] | None] = mapped_column(JSON, default=None)

    organisation: Mapped[Organisation] = relationship()


class Upload(Base):
    __tablename__ = "uploads"
    __table_args__ = (UniqueConstraint("job_id", "idempotency_key", name="uq_uploads_job_idempotency_key"),
                      Index("ix_uploads_job_sha256", "job_id", "sha256"))  # migration 0003

    id: Mapped[int] = mapped_column(primary_key=True)
    job_id: Mapped[int] = mapped_column(JOB_ID, ForeignKey("jobs.id"), index=True)
    content_type: Mapped[str] = mapped_column(String(200))
    adapter: Mapped[str | None] = mapped_column(String(100), default=None)
    profile: Mapped[str | None] = mapped_column(String(200), default=None)
    sha256: Mapped[str] = mapped_column(String(64))
    size: Mapped[int]
    body: Mapped[bytes] = mapped_column(LargeBinary, deferred=True)  # loaded only when fetched
    received_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    status: Mapped[str] = mapped_column(String(20))  # merged | rejected
    accepted: Mapped[int] = mapped_column(default=0)
    rejected: Mapped[list[dict[str, Any]]] = mapped_column(JSON, default=list)
    # names read as nothing (migration 0008; null on uploads from before it)
    warnings: Mapped[list[dict[str, Any]] | None] = mapped_column(JSON, default=list)
    idempotency_key: Mapped[str | None] = mapped_column(String(200), default=None)  # the client's, if sent


class Circuit(Base):
    __tablename__ = "circuits"
    __table_args__ = (UniqueConstraint("job_id", "board", "circuit", name="uq_circuits_job_key"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    job_id: Mapped[int] = mapped_column(JOB_ID, ForeignKey("jobs.id"), index=True)
    board: Mapped[str] = mapped_column(String(200))
    circuit: Mapped[str] = mapped_column(String(200))
    fields: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    updated_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    upload_id: Mapped[int | None] = mapped_column(ForeignKey("uploads.id"), default=None)
    external_ref: Mapped[str | None] = mapped_column(String(200), default=None)  # the caller's id (0004)


class FieldHistory(Base):
    __tablename__ = "field_history"
    __table_args__ = (Index("ix_field_history_circuit_field", "circuit_id", "field"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    circuit_id: Mapped[int] = mapped_column(ForeignKey("circuits.id"))
    field: Mapped[str] = mapped_column(String(64))
    value: Mapped[Any] = mapped_column(JSON)
    upload_id: Mapped[int] = mapped_column(ForeignKey("uploads.id"), index=True)
    location: Mapped[str | None] = mapped_column(String(100), default=None)  # "line 12", "/circuits/3"
    recorded_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)

