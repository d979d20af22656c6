"""A full disk is answered 507 Insufficient Storage with a problem, never 500; the body is kept as a
rejected upload where it could be stored at all.

Sources: RFC 4918 §11.5 (507 Insufficient Storage), SQLite's result codes (SQLITE_FULL, 13:
"database or disk is full"; PRAGMA max_page_count makes it happen for real), PostgreSQL's
Appendix A error codes (53100 disk_full).
"""

from __future__ import annotations

import sqlite3
import sys
from collections.abc import Callable
from typing import Any

import psycopg
import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import event, text
from sqlalchemy.exc import OperationalError

from api.errors import storage_full

pytestmark = pytest.mark.postgres

CSV = b"board,circuit,zs_ohm\n" + b"".join(b"DB1,%d,0.41\n" % n for n in range(50))


def _full(backend: str) -> OperationalError:
    """The exception each backend's driver raises, wrapped as SQLAlchemy wraps it."""
    if backend == "sqlite":
        cause: Exception = sqlite3.OperationalError("database or disk is full")
        cause.sqlite_errorcode = sqlite3.SQLITE_FULL  # type: ignore[attr-defined]
    else:
        cause = psycopg.errors.DiskFull("could not extend file: No space left on device")
    return OperationalError("INSERT INTO field_history …", {}, cause)


def test_disk_full_is_recognised_under_each_name(backend: str) -> None:
    """SQLITE_FULL, SQLSTATE 53100 and ENOSPC are a full disk; a locked database is not."""
    assert storage_full(_full(backend))
    assert storage_full(OSError(28, "No space left on device"))
    assert not storage_full(OperationalError("x", {}, sqlite3.OperationalError("database is locked")))


def test_disk_full_while_merging_is_507_and_keeps_the_body(client: FlaskClient, backend: str,
                                                         monkeypatch: pytest.MonkeyPatch) -> None:
    """The merge fails for want of space: 507 insufficient_storage, the body kept as rejected with
    that reason, nothing merged (on SQLite and PostgreSQL)."""
    job_id = client.post("/v1/jobs", json={"reference": "FULL", "site": "s"}).get_json()["id"]

    def no_space(*_args: Any, **_kwargs: Any) -> Any:
        raise _full(backend)

    monkeypatch.setattr(sys.modules["api.routes.readings"], "merge_items", no_space)
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=CSV, content_type="text/csv")
    assert answer.status_code == 507 and answer.mimetype == "application/problem+json"
    problem = answer.get_json()
    assert problem["code"] == "insufficient_storage" and problem["kept"] is True
    assert answer.headers["Retry-After"] == "60"
    monkeypatch.undo()
    uploads = client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]
    assert [(u["id"], u["status"]) for u in uploads] == [(problem["upload"]["id"], "rejected")]
    assert uploads[0]["rejected"][0]["code"] == "insufficient_storage"
    assert client.get(f"/v1/jobs/{job_id}/uploads/{uploads[0]['id']}").get_data() == CSV
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []


def test_disk_full_at_commit_is_507_saying_nothing_was_kept(
        db_url: str, app_factory: Callable[..., Flask], backend: str,
        monkeypatch: pytest.MonkeyPatch) -> None:
    """A commit that fails for space (the WAL cannot grow) → 507 kept=false, and indeed nothing stored."""
    # as in production: an unexpected exception reaches the error handler instead of the test
    client = app_factory(db_url, PROPAGATE_EXCEPTIONS=False).test_client()
    job_id = client.post("/v1/jobs", json={"reference": "FULL", "site": "s"}).get_json()["id"]
    from sqlalchemy.orm import Session

    real_commit = Session.commit

    def failing_commit(self: Session) -> None:
        if self.info.get("failed_once"):
            real_commit(self)
            return
        self.info["failed_once"] = True
        raise _full(backend)

    monkeypatch.setattr(Session, "commit", failing_commit)
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=CSV, content_type="text/csv")
    monkeypatch.undo()
    assert answer.status_code == 507 and answer.get_json()["kept"] is False
    assert client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"] == []


def test_a_really_full_sqlite_database_is_507(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """SQLite with PRAGMA max_page_count at its current size: the insert fails with SQLITE_FULL for
    real, and the answer is 507, not 500; the database is unharmed (reads work)."""
    if not db_url.startswith("sqlite"):
        pytest.skip("max_page_count is SQLite's")
    app = app_factory(db_url, PROPAGATE_EXCEPTIONS=False)
    client = app.test_client()
    job_id = client.post("/v1/jobs", json={"reference": "FULL", "site": "s"}).get_json()["id"]
    engine = app.extensions["ohmtally.engine"]
    with engine.connect() as connection:
        pages = connection.execute(text("PRAGMA page_count")).scalar_one()
    engine.dispose()

    @event.listens_for(engine, "connect")
    def _cap(dbapi_connection: Any, _record: Any) -> None:
        dbapi_connection.execute(f"PRAGMA max_page_count={pages}")

    big = b"board,circuit,description\n" + b"".join(b"DB1,%d,%s\n" % (n, b"x" * 900) for n in range(400))
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=big, content_type="text/csv")
    assert answer.status_code == 507, answer.get_data(as_text=True)[:300]
    assert answer.get_json()["code"] == "insufficient_storage"
    assert client.get(f"/v1/jobs/{job_id}").status_code == 200
