"""The database's clock: the one time every host serving one database agrees on.

Invariants:
- Leases, retry times, event and rotation timestamps and ``webhook-timestamp``
  are read from the database, never from the host running the code, so two
  app hosts whose clocks disagree (by more than a lease, even) still agree on
  whether a lease is live and when a retry is due.
- PostgreSQL: ``statement_timestamp()`` (the server's clock when the statement
  began). SQLite runs inside the process, so its clock *is* the host's; with
  SQLite there is one host, and nothing to disagree with.
- Timezone-aware UTC on both, with microseconds on PostgreSQL and
  milliseconds on SQLite (``strftime('%f')``).
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import func, select, type_coerce
from sqlalchemy.orm import Session
from sqlalchemy.sql.elements import ColumnElement

from api.db.models import UtcDateTime

__all__ = ["database_now", "now_expression"]


def now_expression(dialect_name: str) -> ColumnElement[datetime]:
    """The SQL that reads the database's clock on this dialect, as a UTC datetime."""
    if dialect_name == "sqlite":
        return type_coerce(func.strftime("%Y-%m-%d %H:%M:%f", "now"), UtcDateTime())
    if dialect_name == "postgresql":
        return type_coerce(func.statement_timestamp(), UtcDateTime())
    return type_coerce(func.current_timestamp(), UtcDateTime())


def database_now(session: Session) -> datetime:
    """The database's current time (one round trip)."""
    value = session.scalar(select(now_expression(session.get_bind().dialect.name)))
    if not isinstance(value, datetime):  # pragma: no cover - every supported database answers
        raise RuntimeError(f"the database told the time as {value!r}")
    return value
