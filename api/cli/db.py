"""``ohmtally db upgrade``: bring the database to the newest migration (Alembic, in code).

The database is ``OHMTALLY_DATABASE_URL`` or ``--database-url``, else the SQLite
file in the instance folder that ``ohmtally serve`` uses by default.
"""

from __future__ import annotations

import argparse
import sys
from typing import Any

from sqlalchemy.engine import make_url
from sqlalchemy.exc import SQLAlchemyError

from api.app import default_instance_path
from api.cli import EXIT_BAD_INPUT, EXIT_OK
from api.db.schema import upgrade
from api.db.session import database_url_for
from api.settings import load_settings

__all__ = ["register", "resolve_database_url", "run_upgrade"]


def register(sub: Any) -> None:
    p = sub.add_parser("db", help="database administration (migrations)")
    inner = p.add_subparsers(dest="db_command", metavar="ACTION", required=True)
    up = inner.add_parser("upgrade", help="apply every migration not yet applied")
    up.add_argument("--database-url", help="SQLAlchemy URL (default: OHMTALLY_DATABASE_URL, "
                    "else the SQLite file in the instance folder)")
    up.add_argument("--revision", default="head", help=argparse.SUPPRESS)
    up.set_defaults(func=run_upgrade)


def resolve_database_url(given: str | None = None) -> str:
    settings = load_settings()
    return database_url_for(settings.instance_path or default_instance_path(),
                            given or settings.database_url)


def run_upgrade(args: argparse.Namespace) -> int:
    url = resolve_database_url(args.database_url)
    shown = make_url(url).render_as_string(hide_password=True)
    try:
        upgrade(url, args.revision)
    except SQLAlchemyError as exc:
        print(f"ohmtally db upgrade: cannot migrate {shown}: {exc.__class__.__name__}: "
              f"{str(exc).splitlines()[0]}", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(f"database {shown} is at the newest revision")
    return EXIT_OK
