"""SQLite writers queue on a flock beside the database (api.db), held exactly for a transaction.

Checked against the kernel's own lock state: a probe descriptor asks ``flock``
for the lock without waiting (LOCK_NB), which fails while a writer holds it.
"""

from __future__ import annotations

import fcntl
import os
import threading
import time
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import text
from sqlalchemy.orm import Session

from api.db.schema import upgrade
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


def test_reads_and_an_answered_key_never_wait_for_a_writer(app_factory: Any, tmp_path: Path) -> None:
    """While another process holds the writer lock (a long post), GET answers and a resent keyed post
    is replayed at once: reads and the key look-up use the reader engine and take no writer lock."""
    url = f"sqlite:///{tmp_path / 'shared.sqlite3'}"
    upgrade(url)
    client = app_factory(url).test_client()
    job = client.post("/v1/jobs", json={"reference": "L", "site": "Invented site"}).get_json()["id"]
    keyed = {"Idempotency-Key": "k-1"}
    first = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data="board=A circuit=1 zs=0.4\n",
                        content_type="text/plain", headers=keyed)
    holder = make_engine(url)  # a writer of another "process": BEGIN IMMEDIATE and the flock
    with holder.connect() as writer:
        writer.exec_driver_sql("SELECT 1")  # BEGIN IMMEDIATE: the writer lock is now held
        started = time.monotonic()
        assert client.get(f"/v1/jobs/{job}/verdicts").status_code == 200
        again = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data="board=A circuit=1 zs=0.4\n",
                            content_type="text/plain", headers=keyed)
        waited = time.monotonic() - started
        writer.rollback()
    holder.dispose()
    assert again.get_data() == first.get_data() and "Ohmtally-Replay" in again.headers
    assert waited < 2.0  # the busy timeout is 30 s: a wait for the writer would show
