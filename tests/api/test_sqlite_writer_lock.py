"""SQLite writers queue on a flock beside the database (api.db), held exactly for a transaction.

Checked against the kernel's own lock state: a probe descriptor asks ``flock``
for the lock without waiting (LOCK_NB), which fails while a writer holds it.
"""

from __future__ import annotations

import fcntl
import os
import threading
from pathlib import Path

import pytest
from sqlalchemy import text
from sqlalchemy.orm import Session

from api.db.session import make_engine


def _free(path: Path) -> bool:
    fd = os.open(path, os.O_RDWR | os.O_CREAT)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        return False
    finally:
        os.close(fd)  # drops the probe's lock if it got one
    return True


@pytest.fixture
def engine(tmp_path: Path):  # type: ignore[no-untyped-def]
    engine = make_engine(f"sqlite:///{tmp_path / 'w.sqlite3'}")
    with engine.begin() as connection:
        connection.execute(text("CREATE TABLE t (x INTEGER)"))
    yield engine
    engine.dispose()


def test_held_for_the_transaction_and_released_after_commit(engine, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    """As the app uses it: a Session hands its connection back at every commit and rollback."""
    lock = tmp_path / "w.sqlite3-writers.lock"
    assert _free(lock)
    with Session(engine) as session:
        session.execute(text("INSERT INTO t VALUES (1)"))  # autobegin: BEGIN IMMEDIATE
        assert not _free(lock)
        session.commit()
        assert _free(lock)
        session.execute(text("SELECT 1"))
        assert not _free(lock)
        session.rollback()
        assert _free(lock)


def test_a_second_writer_waits_for_the_first_then_proceeds(engine) -> None:  # type: ignore[no-untyped-def]
    order: list[str] = []
    started = threading.Event()

    def second() -> None:
        started.set()
        with engine.begin() as connection:  # blocks on the flock until the first commits
            order.append("second began")
            connection.execute(text("INSERT INTO t VALUES (2)"))

    with engine.connect() as connection:
        connection.execute(text("INSERT INTO t VALUES (1)"))
        thread = threading.Thread(target=second)
        thread.start()
        started.wait(5)
        thread.join(0.3)  # it cannot get in while the first holds the lock
        order.append("first commits")
        connection.commit()
    thread.join(10)
    assert order == ["first commits", "second began"]
    with engine.connect() as connection:
        assert sorted(x for (x,) in connection.execute(text("SELECT x FROM t"))) == [1, 2]
