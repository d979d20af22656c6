"""Persistence: the connection and the request's unit of work (``session``), the schema's
migrations (``schema``, ``migrations/``), the tables (``models``) and every query the views
make (``repository``). Import from those modules; this package imports nothing, so that
reading the tables' types (``api.db.models``) never loads Alembic or Flask.
"""

from __future__ import annotations

__all__: list[str] = []
