"""Alembic environment for ohmtally: online migrations only, URL from the config.

``api.db.alembic_config`` builds the config in code, so no alembic.ini is needed
at the top level; ``api/alembic.ini`` exists for running the ``alembic`` tool
by hand (``alembic -c api/alembic.ini -x url=... revision``).
"""

from __future__ import annotations

from alembic import context
from sqlalchemy import create_engine, pool

import api.db.schema  # noqa: F401  (puts deployment_facts on the metadata, so autogenerate keeps it)
from api.db.models import Base

config = context.config
target_metadata = Base.metadata


def _url() -> str:
    from_cli = context.get_x_argument(as_dictionary=True).get("url")
    url = from_cli or config.get_main_option("sqlalchemy.url")
    if not url:
        raise SystemExit("no database URL: pass -x url=... or use `ohmtally db upgrade`")
    return url


def run_migrations_online() -> None:
    connectable = config.attributes.get("connection")
    if connectable is not None:
        _run(connectable)
        return
    engine = create_engine(_url(), poolclass=pool.NullPool)
    with engine.connect() as connection:
        _run(connection)


def _run(connection: object) -> None:
    context.configure(
        connection=connection,  # type: ignore[arg-type]
        target_metadata=target_metadata,
        render_as_batch=True,  # SQLite cannot ALTER most things; batch mode copies tables
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    raise SystemExit("offline (SQL script) migrations are not supported; run them online")
run_migrations_online()
