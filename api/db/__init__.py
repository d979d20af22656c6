"""Persistence: the connection and session (``session``), the schema's migrations
(``schema``, ``migrations/``), the tables (``models``) and every query the views make
(``repository``)."""

from __future__ import annotations

from .schema import SchemaNotCurrent, alembic_config, check_schema, upgrade
from .session import database_url_for, default_sqlite_url, get_session, init_app, make_engine

__all__ = [
    "SchemaNotCurrent",
    "alembic_config",
    "check_schema",
    "database_url_for",
    "default_sqlite_url",
    "get_session",
    "init_app",
    "make_engine",
    "upgrade",
]
