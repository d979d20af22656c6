"""The schema: Alembic migrations own it; the app checks the database is at a revision it can serve.

Invariants:
- The schema comes only from the migrations in ``api/db/migrations``; nothing
  calls ``create_all`` outside the tests.
- Migrations are *expand* or *contract* (operators' guide: "Rolling deploys").
  An expand migration only adds what older code ignores (a table, a nullable
  column, an index), so code one or more revisions older can still serve the
  schema it leaves. A contract migration removes or changes what older code
  uses, and raises the database's *floor*: the ``schema.serves_from`` row of
  :data:`DEPLOYMENT_FACTS`, the oldest code revision that can serve the schema
  (:func:`raise_floor`, called in the contract migration's ``upgrade``; its
  ``downgrade`` puts the previous floor back). Expand migrations never touch it.
- :func:`check_schema` (at every app start) and :func:`servable` (``GET /v1/ready``)
  decide by one rule, :meth:`SchemaWindow.refusal`: the database is servable at
  this build's head, or at a revision this build does not know (newer) whose floor
  is this build's head or one of its ancestors. A database behind this build, with
  no schema, on another line of migrations, or newer with a floor this build does
  not reach is refused with a message that says which and what to do.
- Builds before migration 0007 do not read the floor: they refuse any revision
  but their own head.
- The Alembic config is built in code (:func:`alembic_config`); ``alembic.ini``
  beside this module is only for running the ``alembic`` tool by hand.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from typing import Any

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import (
    Column,
    Connection,
    Engine,
    MetaData,
    String,
    Table,
    Text,
    insert,
    inspect,
    select,
    update,
)
from sqlalchemy.engine import make_url

from api.db.models import Base, UtcDateTime, utcnow

__all__ = [
    "DEPLOYMENT_FACTS",
    "SERVES_FROM",
    "SchemaNotCurrent",
    "SchemaState",
    "SchemaWindow",
    "alembic_config",
    "check_schema",
    "head_revision",
    "raise_floor",
    "read_state",
    "schema_window",
    "servable",
    "upgrade",
]

log = logging.getLogger("ohmtally.api")

# Facts every host serving one database reads: the schema's floor (above) and the
# fingerprints of the settings hosts must agree on (api.ops.agreement). A Core table on
# the models' metadata, so the models-match-migrations check covers it (migration 0007).
DEPLOYMENT_FACTS = Table(
    "deployment_facts", Base.metadata,
    Column("name", String(100), primary_key=True),
    Column("value", Text(), nullable=False),
    Column("recorded_by", String(200), nullable=True),
    Column("recorded_at", UtcDateTime(), nullable=False),
)
SERVES_FROM = "schema.serves_from"
# Alembic's own table, read in the readiness query; on a metadata of its own (never created by us).
_ALEMBIC_VERSION = Table("alembic_version", MetaData(), Column("version_num", String(32), primary_key=True))


class SchemaNotCurrent(RuntimeError):
    """The database's schema is not one this build can serve; ``code`` says why."""

    def __init__(self, message: str, code: str = "schema_not_servable") -> None:
        super().__init__(message)
        self.code = code


@dataclass(frozen=True, slots=True)
class SchemaState:
    """What the database says: its Alembic revision and its floor (``None`` where absent)."""

    revision: str | None
    serves_from: str | None


@dataclass(frozen=True, slots=True)
class SchemaWindow:
    """This build's migrations: its head, every revision it knows, and the head's line."""

    head: str
    known: frozenset[str]
    line: frozenset[str]  # the head and its ancestors: code at any of them is "at most this build"

    def refusal(self, state: SchemaState) -> SchemaNotCurrent | None:
        """``None`` when this build can serve a database in ``state``, else why not (not raised)."""
        current, floor = state.revision, state.serves_from
        if current == self.head:
            return None
        if current is None:
            return SchemaNotCurrent(f"has no ohmtally schema; the code needs {self.head}: run "
                                    "`ohmtally db upgrade`", "schema_missing")
        if current in self.line:
            return SchemaNotCurrent(f"is at revision {current}, older than this build's {self.head}: "
                                    "run `ohmtally db upgrade`", "schema_behind")
        if current in self.known:
            return SchemaNotCurrent(f"is at revision {current}, which is not on this build's line of "
                                    f"migrations (head {self.head})", "schema_diverged")
        if floor is None:
            return SchemaNotCurrent(f"is at revision {current}, newer than this build's {self.head}, and "
                                    "records no floor: deploy the build that migrated it",
                                    "schema_too_new")
        if floor not in self.line:
            return SchemaNotCurrent(f"is at revision {current}, which code older than revision {floor} "
                                    f"cannot serve (a contract migration); this build is at {self.head}: "
                                    "deploy a build that has that revision", "schema_too_new")
        return None


def alembic_config(url: str, script_location: str | None = None) -> Any:
    """An Alembic config built in code: no alembic.ini needed at the top level."""
    location = script_location or str(resources.files("api.db").joinpath("migrations"))
    config = Config()
    config.set_main_option("script_location", location)
    config.set_main_option("sqlalchemy.url", url.replace("%", "%%"))
    return config


def upgrade(url: str, revision: str = "head", *, script_location: str | None = None) -> None:
    command.upgrade(alembic_config(url, script_location), revision)


def head_revision(url: str = "") -> str | None:
    """This build's newest revision (``url`` is kept for older callers; the migrations are this build's)."""
    return schema_window().head


@lru_cache(maxsize=4)
def schema_window(script_location: str | None = None) -> SchemaWindow:
    """This build's migrations, read once per process (parsing them costs milliseconds)."""
    scripts = ScriptDirectory.from_config(alembic_config("sqlite://", script_location))
    head = scripts.get_current_head()
    if head is None:
        raise RuntimeError("the migrations directory has no head revision")
    known = frozenset(script.revision for script in scripts.walk_revisions())
    line = frozenset(script.revision for script in scripts.iterate_revisions(head, "base"))
    return SchemaWindow(head=head, known=known, line=line)


def read_state(connection: Connection) -> SchemaState:
    """The database's revision and floor (two short reads; the floor only where its table is)."""
    current = MigrationContext.configure(connection).get_current_revision()
    floor = None
    if current is not None and inspect(connection).has_table(DEPLOYMENT_FACTS.name):
        floor = connection.execute(select(DEPLOYMENT_FACTS.c.value)
                                   .where(DEPLOYMENT_FACTS.c.name == SERVES_FROM)).scalar_one_or_none()
    return SchemaState(revision=current, serves_from=floor)


def servable(connection: Connection) -> tuple[SchemaState, SchemaNotCurrent | None]:
    """One query for ``GET /v1/ready``: the revision and floor, and whether this build serves them."""
    window = schema_window()
    version = _ALEMBIC_VERSION
    joined = (select(version.c.version_num, DEPLOYMENT_FACTS.c.value)
              .select_from(version.outerjoin(DEPLOYMENT_FACTS, DEPLOYMENT_FACTS.c.name == SERVES_FROM)))
    rows = connection.execute(joined).all()
    state = SchemaState(rows[0][0], rows[0][1]) if rows else SchemaState(None, None)
    return state, window.refusal(state)


def check_schema(engine: Engine, url: str) -> SchemaState:
    """Raise :class:`SchemaNotCurrent` unless this build can serve the database (the rule above)."""
    with engine.connect() as connection:
        state = read_state(connection)
    refusal = schema_window().refusal(state)
    if refusal is not None:
        shown = make_url(url).render_as_string(hide_password=True)
        extra = (" (with the same OHMTALLY_DATABASE_URL) before starting the server"
                 if refusal.code in ("schema_missing", "schema_behind") else "")
        raise SchemaNotCurrent(f"the database {shown} {refusal}{extra}", refusal.code)
    if state.revision != schema_window().head:
        log.warning("serving a database at a newer revision", extra={
            "schema_revision": state.revision, "serves_from": state.serves_from,
            "code_revision": schema_window().head})
    return state


def raise_floor(connection: Connection, revision: str | None) -> None:
    """Set the floor (``schema.serves_from``) to ``revision``: a contract migration's last step.

    ``None`` removes it (the downgrade of the migration that first recorded it).
    """
    where = DEPLOYMENT_FACTS.c.name == SERVES_FROM
    if revision is None:
        connection.execute(DEPLOYMENT_FACTS.delete().where(where))
        return
    values = {"value": revision, "recorded_by": "migration", "recorded_at": utcnow()}
    if connection.execute(update(DEPLOYMENT_FACTS).where(where).values(**values)).rowcount == 0:
        connection.execute(insert(DEPLOYMENT_FACTS).values(name=SERVES_FROM, **values))
