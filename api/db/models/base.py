"""The declarative base every table is declared on, and UTC timestamps on every backend.

Invariants:
- One :class:`Base`, so one metadata holds every table and the models-match-migrations
  test covers them all.
- :class:`UtcDateTime` stores and returns timezone-aware UTC datetimes on SQLite
  (which keeps no zone) and PostgreSQL alike.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from sqlalchemy.orm import DeclarativeBase
from sqlalchemy.types import DateTime, TypeDecorator

__all__ = ["Base", "UtcDateTime", "utcnow"]


def utcnow() -> datetime:
    return datetime.now(UTC)


class UtcDateTime(TypeDecorator[datetime]):
    """Timezone-aware UTC datetimes on every backend (SQLite keeps no zone)."""

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Any) -> datetime | None:
        return None if value is None else value.astimezone(UTC)

    def process_result_value(self, value: datetime | None, dialect: Any) -> datetime | None:
        if value is None:
            return None
        return value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)


class Base(DeclarativeBase):
    pass
