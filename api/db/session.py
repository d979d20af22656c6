"""The database connection: a writer and a reader engine per app, one session per request.

Invariants:
- A request that can change something (any method but GET, HEAD, OPTIONS) gets a
  session of the writer engine; a read gets one of the reader engine. On
  PostgreSQL both are one engine. On SQLite they differ in how a transaction
  starts, so that **reads never wait for a writer**:
- The default database is an SQLite file in the Flask instance folder, in WAL
  mode (readers never block the writer, the writer never blocks readers), with
  foreign keys on and a busy timeout. A reader's transaction is a plain deferred
  ``BEGIN`` with ``PRAGMA query_only`` on: it sees the last committed state and
  can never take the writer lock. A writer's transaction is opened
  ``BEGIN IMMEDIATE``: two processes merging into the same job queue one behind
  the other instead of failing on a lock upgrade. Before ``BEGIN IMMEDIATE`` a writer takes an exclusive
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
- A session lives for one request: its one transaction (the request's unit of
  work) commits after the answer is built when the answer is a success, or when
  the view asked to keep what it refused (``g.commit_on_error``), and rolls back
  otherwise; views never commit. The session is closed at teardown.
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

from flask import Flask, Response, current_app, g, request
from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

from api.db.schema import check_schema

__all__ = [
    "close_engines",
    "database_url_for",
    "default_sqlite_url",
    "get_session",
    "init_app",
    "make_engine",
    "read_session",
    "write_session",
]

_READ_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})

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


def _sqlite_begin_read(connection: Any) -> None:
    connection.exec_driver_sql("BEGIN")


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


def _query_only(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA query_only=ON")
    cursor.close()


def make_engine(url: str, *, read_only: bool = False) -> Engine:
    """An engine for ``url``; ``read_only`` (SQLite) opens deferred, query-only transactions."""
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        engine = create_engine(url, connect_args={"timeout": 30})
        event.listen(engine, "connect", _sqlite_pragmas)
        if read_only:
            event.listen(engine, "connect", _query_only)
            event.listen(engine, "begin", _sqlite_begin_read)
            return engine
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
    reader = make_engine(url, read_only=True) if engine.dialect.name == "sqlite" else engine
    app.extensions["ohmtally.db"] = sessionmaker(engine, expire_on_commit=False)
    app.extensions["ohmtally.db.read"] = sessionmaker(reader, expire_on_commit=False)
    app.extensions["ohmtally.engine"] = engine
    app.extensions["ohmtally.engine.read"] = reader

    @app.after_request
    def _finish_unit_of_work(response: Response) -> Response:
        # The request's one transaction ends here, after the answer is built (and, for an
        # Idempotency-Key, recorded beside the change): a success commits, a refusal rolls
        # back, unless the view kept what it refused (a rejected upload: g.commit_on_error).
        session: Session | None = g.get("db_session")
        if session is not None:
            if response.status_code < 400 or g.get("commit_on_error"):
                session.commit()
            else:
                session.rollback()
        return response

    @app.teardown_appcontext
    def _close(_exc: BaseException | None) -> None:
        session = g.pop("db_session", None)
        if session is not None:
            session.close()


def close_engines(app: Flask) -> None:
    """Close the app's connection pools (the writer's and, on SQLite, the reader's)."""
    pools = (app.extensions.get("ohmtally.engine"), app.extensions.get("ohmtally.engine.read"))
    engines = {id(e): e for e in pools if e is not None}
    for engine in engines.values():
        engine.dispose()


def get_session() -> Session:
    """The request's session: a reader's for GET/HEAD/OPTIONS, else a writer's (see above)."""
    if "db_session" not in g:
        name = "ohmtally.db.read" if request.method in _READ_METHODS else "ohmtally.db"
        g.db_session = current_app.extensions[name]()
    session: Session = g.db_session
    return session


def read_session() -> Session:
    """A reader's session outside the request's own (authentication); the caller closes it."""
    factory: sessionmaker[Session] = current_app.extensions["ohmtally.db.read"]
    return factory()


def write_session() -> Session:
    """A writer's session for the rare write a read request makes (an API key's last use);
    the caller commits and closes it."""
    factory: sessionmaker[Session] = current_app.extensions["ohmtally.db"]
    return factory()


def database_url_for(instance_path: str, configured: str) -> str:
    """The configured URL, else the SQLite file in the instance folder."""
    return configured or default_sqlite_url(instance_path)
