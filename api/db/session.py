"""The database connection: one SQLAlchemy engine per app, one session per request.

Invariants:
- The default database is an SQLite file in the Flask instance folder, in WAL
  mode (readers never block the writer), with foreign keys on and a busy
  timeout, and every transaction opened ``BEGIN IMMEDIATE``: two processes
  merging into the same job queue one behind the other instead of failing
  on a lock upgrade. Before ``BEGIN IMMEDIATE`` a writer takes an exclusive
  ``flock`` on ``<database>-writers.lock``: the waiting process is woken the
  moment the lock is free, where SQLite's busy handler sleeps in steps of up
  to 100 ms (under two workers' load that made a logger's post wait ~1 s at
  p99; tests/bench). The lock is released when the connection returns to the
  pool, after its commit or rollback. A thread that already holds it (two
  sessions open at once in one thread) skips it and relies on the busy
  timeout, so it cannot deadlock on itself. PostgreSQL (``postgresql+psycopg://``) locks the job
  row instead (``repository.lock_job``).
- The app refuses to start on a database whose schema it cannot serve
  (:mod:`api.db.schema`).
- A session lives for one request and is closed at teardown.
"""

from __future__ import annotations

import os
import threading
from pathlib import Path
from typing import Any

try:
    import fcntl
except ImportError:  # not POSIX: SQLite's own busy timeout alone queues the writers
    fcntl = None  # type: ignore[assignment]

from flask import Flask, current_app, g
from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

from api.db.schema import check_schema

__all__ = [
    "database_url_for",
    "default_sqlite_url",
    "get_session",
    "init_app",
    "make_engine",
]

SQLITE_FILE = "ohmtally.sqlite3"


def default_sqlite_url(instance_path: str) -> str:
    Path(instance_path).mkdir(parents=True, exist_ok=True)
    return f"sqlite:///{Path(instance_path, SQLITE_FILE)}"


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    # The pysqlite driver's own transaction handling is switched off so that
    # the "begin" hook below decides how a transaction starts (SQLAlchemy's
    # documented recipe for SQLite locking).
    dbapi_connection.isolation_level = None
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute("PRAGMA busy_timeout=30000")
    cursor.close()


_LOCK_PATH = "ohmtally.writer_lock_path"  # connection info: where this database's writer lock is
_HOLDING = "ohmtally.writer_lock_fd"  # connection info: the descriptor holding it, while held
_THREAD = threading.local()  # .holding: this thread holds the writer lock through some connection


def _sqlite_begin(connection: Any) -> None:
    info = connection.connection.info
    path = info.get(_LOCK_PATH)
    if path is not None and not getattr(_THREAD, "holding", False):
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o600)  # one open per transaction: ~10 µs
        try:
            fcntl.flock(fd, fcntl.LOCK_EX)
        except BaseException:
            os.close(fd)
            raise
        info[_HOLDING] = fd
        _THREAD.holding = True
    try:
        connection.exec_driver_sql("BEGIN IMMEDIATE")
    except BaseException:
        _unlock(info)
        raise


def _unlock(info: dict[Any, Any]) -> None:
    fd = info.pop(_HOLDING, None)
    if fd is not None:
        _THREAD.holding = False
        os.close(fd)  # closing the descriptor drops its flock


def _release(_dbapi_connection: Any, record: Any) -> None:
    """Pool "checkin" and "close": the connection's transaction is over (committed or rolled back)."""
    if record is not None:
        _unlock(record.info)


def _writer_lock(path: str) -> Any:
    def remember(_dbapi_connection: Any, record: Any) -> None:
        record.info[_LOCK_PATH] = path

    return remember


def make_engine(url: str) -> Engine:
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        engine = create_engine(url, connect_args={"timeout": 30})
        event.listen(engine, "connect", _sqlite_pragmas)
        database = parsed.database or ""
        if fcntl is not None and database and database != ":memory:" and not database.startswith("file:"):
            event.listen(engine, "connect", _writer_lock(f"{database}-writers.lock"))
            event.listen(engine, "checkin", _release)
            event.listen(engine, "close", _release)
        event.listen(engine, "begin", _sqlite_begin)
        return engine
    return create_engine(url, pool_pre_ping=True)


def init_app(app: Flask, url: str) -> None:
    engine = make_engine(url)
    try:
        check_schema(engine, url)
    except Exception:
        engine.dispose()
        raise
    app.extensions["ohmtally.db"] = sessionmaker(engine, expire_on_commit=False)
    app.extensions["ohmtally.engine"] = engine

    @app.teardown_appcontext
    def _close(_exc: BaseException | None) -> None:
        session = g.pop("db_session", None)
        if session is not None:
            session.close()


def get_session() -> Session:
    if "db_session" not in g:
        g.db_session = current_app.extensions["ohmtally.db"]()
    session: Session = g.db_session
    return session


def database_url_for(instance_path: str, configured: str) -> str:
    """The configured URL, else the SQLite file in the instance folder."""
    return configured or default_sqlite_url(instance_path)
