"""The schema: Alembic migrations own it; the app checks the database is at a revision it can serve.

Invariants:
- The schema comes only from the migrations in ``api/db/migrations``; nothing
  calls ``create_all`` outside the tests.
- :func:`check_schema` refuses to serve a database that is not at the newest
  revision and says to run ``ohmtally db upgrade``.
- The Alembic config is built in code (:func:`alembic_config`); ``alembic.ini``
  beside this module is only for running the ``alembic`` tool by hand.
"""

from __future__ import annotations

from importlib import resources
from typing import Any

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Engine
from sqlalchemy.engine import make_url

__all__ = ["SchemaNotCurrent", "alembic_config", "check_schema", "head_revision", "upgrade"]


class SchemaNotCurrent(RuntimeError):
    """The database is not at the newest migration."""


def alembic_config(url: str) -> Any:
    """An Alembic config built in code: no alembic.ini needed at the top level."""
    script_location = str(resources.files("api.db").joinpath("migrations"))
    config = Config()
    config.set_main_option("script_location", script_location)
    config.set_main_option("sqlalchemy.url", url.replace("%", "%%"))
    return config


def upgrade(url: str, revision: str = "head") -> None:
    command.upgrade(alembic_config(url), revision)


def head_revision(url: str) -> str | None:
    return ScriptDirectory.from_config(alembic_config(url)).get_current_head()


def check_schema(engine: Engine, url: str) -> None:
    """Raise :class:`SchemaNotCurrent` unless the database is at the newest migration."""
    with engine.connect() as connection:
        current = MigrationContext.configure(connection).get_current_revision()
    head = head_revision(url)
    if current != head:
        shown = make_url(url).render_as_string(hide_password=True)
        state = "has no ohmtally schema" if current is None else f"is at revision {current}"
        raise SchemaNotCurrent(
            f"the database {shown} {state}, the code needs {head}: run `ohmtally db upgrade` "
            "(with the same OHMTALLY_DATABASE_URL) before starting the server")
