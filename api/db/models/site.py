"""Tables for the facts recorded once per installation and once per board (migration 0008).

Invariants:
- ``site_facts`` holds one row per job for the installation (``scope`` ``installation``,
  ``board`` the empty string) and one per board (``scope`` ``board``); ``(job_id, scope,
  board)`` is unique. ``fields`` is the current merged record as JSON, readings in their
  ``Reading.to_json()`` form, exactly as ``engine.site`` writes and reads it.
- ``fact_history`` has one row for every value a fact ever had, with the upload it came
  in (a PUT, a readings body carrying board-fact lines, a site document) and where in it;
  a cleared value (a PUT that leaves it out) is a row with ``null``. The latest row of a
  field equals the current value.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, ForeignKey, Index, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column

from api.db.models.base import Base, UtcDateTime, utcnow
from api.db.models.jobs import JOB_ID

__all__ = ["BOARD_SCOPE", "INSTALLATION_SCOPE", "FactHistory", "SiteFacts"]

INSTALLATION_SCOPE = "installation"
BOARD_SCOPE = "board"


class SiteFacts(Base):
    __tablename__ = "site_facts"
    __table_args__ = (UniqueConstraint("job_id", "scope", "board", name="uq_site_facts_job_scope_board"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    job_id: Mapped[int] = mapped_column(JOB_ID, ForeignKey("jobs.id"), index=True)
    scope: Mapped[str] = mapped_column(String(20))  # installation | board
    board: Mapped[str] = mapped_column(String(200), default="")  # "" for the installation
    fields: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    updated_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    upload_id: Mapped[int | None] = mapped_column(ForeignKey("uploads.id"), default=None)


class FactHistory(Base):
    __tablename__ = "fact_history"
    __table_args__ = (Index("ix_fact_history_fact_field", "fact_id", "field"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    fact_id: Mapped[int] = mapped_column(ForeignKey("site_facts.id"))
    field: Mapped[str] = mapped_column(String(64))
    value: Mapped[Any] = mapped_column(JSON, nullable=True)
    upload_id: Mapped[int] = mapped_column(ForeignKey("uploads.id"), index=True)
    location: Mapped[str | None] = mapped_column(String(100), default=None)
    recorded_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
