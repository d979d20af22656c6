"""The capture spool: durability settings, batch assignment, settlement, replay (no threads)."""

from __future__ import annotations

import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from api.capture.spool import BatchRows, Spool, SpoolMismatch, batch_key


def _spool(tmp_path: Path, **kw: object) -> Spool:
    return Spool(tmp_path / "s.sqlite", job="J1", api="http://x", clock=lambda: 100.0, **kw)  # type: ignore[arg-type]


def test_spool_uses_wal_and_full_sync(tmp_path: Path) -> None:
    """The spool runs WAL with synchronous=FULL (2), the SQLite setting that fsyncs the log on every
    commit (SQLite docs, "PRAGMA synchronous": FULL = 2)."""
    spool = _spool(tmp_path)
    assert spool._db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert spool._db.execute("PRAGMA synchronous").fetchone()[0] == 2


def test_appended_line_survives_a_killed_process(tmp_path: Path) -> None:
    """A line whose append returned is on disk even when the process dies at once without closing
    (os._exit skips every clean-up)."""
    path = tmp_path / "s.sqlite"
    root = str(Path(__file__).resolve().parents[2])
    code = (f"import os,sys; sys.path.insert(0, {root!r}); from api.capture.spool import Spool; "
            f"s = Spool({str(path)!r}, job='J1'); s.append('board=DB1 circuit=1 zs=0.4'); os._exit(9)")
    assert subprocess.run([sys.executable, "-c", code], timeout=30).returncode == 9
    rows = sqlite3.connect(path).execute("SELECT text, state FROM lines").fetchall()
    assert rows == [("board=DB1 circuit=1 zs=0.4", "unsent")]


def test_spool_refuses_another_job(tmp_path: Path) -> None:
    """A spool made for one job cannot be opened for another, so lines never go to the wrong job."""
    _spool(tmp_path).close()
    with pytest.raises(SpoolMismatch):
        Spool(tmp_path / "s.sqlite", job="J2")


def test_open_batch_is_reused_with_its_key_after_reopen(tmp_path: Path) -> None:
    """A batch assigned before a crash comes back, after reopening, with the same rows and key even
    though more lines were spooled since (a resend must repeat the first request exactly)."""
    spool = _spool(tmp_path)
    for n in range(5):
        spool.append(f"board=DB1 circuit={n} zs=0.{n}")
    first = spool.next_batch(3)
    assert first is not None and [r.id for r in first.rows] == [1, 2, 3]
    spool.append("board=DB1 circuit=9 zs=0.9")
    spool.close()
    reopened = _spool(tmp_path)
    again = reopened.next_batch(3)
    assert again == first
    assert again.key == batch_key(reopened.spool_id, [1, 2, 3], 0)


def test_settle_sent_records_per_line_rejections(tmp_path: Path) -> None:
    """Line n of the posted body maps to the batch's n-th spool row when the API rejects it."""
    spool = _spool(tmp_path)
    for text in ("board=DB1 circuit=1 zs=0.4", "garbage", "board=DB1 circuit=2 zs=0.5"):
        spool.append(text)
    batch = spool.next_batch(50)
    assert batch is not None and batch.body.splitlines()[1] == "garbage"
    spool.settle_sent(batch, {2: ("no_key", "no board/circuit")})
    states = [(r.text, r.state, r.code) for r in spool.rows()]
    assert states == [("board=DB1 circuit=1 zs=0.4", "sent", None),
                      ("garbage", "line_rejected", "no_key"),
                      ("board=DB1 circuit=2 zs=0.5", "sent", None)]
    assert spool.next_batch(50) is None


def test_rejected_batch_is_kept_and_replay_uses_new_keys(tmp_path: Path) -> None:
    """A 4xx-rejected batch stays in the spool; --replay makes its lines unsent in a new round whose
    key differs (a repeated key would only fetch the stored refusal, per the IETF
    Idempotency-Key draft)."""
    spool = _spool(tmp_path)
    spool.append("a=1")
    spool.append("b=2")
    batch = spool.next_batch(50)
    assert batch is not None
    spool.settle_rejected(batch, "bad_profile", "no such profile")
    assert spool.counts().rejected == 2 and spool.pending() == (0, None)
    assert spool.requeue_rejected() == 2
    again = spool.next_batch(50)
    assert again is not None and [r.id for r in again.rows] == [1, 2]
    assert again.key != batch.key and again.key.endswith("-r1")


def test_counts_and_events(tmp_path: Path) -> None:
    """Counts split the spool by state; discarded partial lines are counted from the event log."""
    spool = _spool(tmp_path)
    spool.append("a=1")
    spool.record_event("partial_discarded", "board=DB")
    spool.record_event("port_lost", "gone")
    counts = spool.counts()
    assert (counts.total, counts.unsent, counts.discarded_partials) == (1, 1, 1)
    assert [e["kind"] for e in spool.events()] == ["partial_discarded", "port_lost"]


def test_read_only_open_does_not_create(tmp_path: Path) -> None:
    """--show on a path with no spool says so instead of creating an empty file."""
    from api.capture.spool import SpoolError

    with pytest.raises(SpoolError):
        Spool(tmp_path / "none.sqlite", read_only=True)
    assert not (tmp_path / "none.sqlite").exists()


def test_each_line_keeps_its_context_and_a_reopened_spool_continues_it(tmp_path: Path) -> None:
    """board=, circuit= and #% decimal= lines set the context each later line is stored with, also
    across a close and reopen (a restart between a board line and its circuits)."""
    spool = _spool(tmp_path)
    spool.append("board=DB2")
    spool.append("#% decimal=comma")
    spool.close()
    spool = _spool(tmp_path)
    spool.append("circuit=4")
    spool.append("zs=0,61")
    rows = spool.rows()
    assert rows[3].ctx_before == '#% board=DB2 circuit=4 decimal=comma'
    assert rows[0].ctx_before == '#% board="" circuit="" decimal=""'


def test_a_batch_of_lines_far_apart_carries_a_directive_before_each_jump(tmp_path: Path) -> None:
    """Replayed rows 2 and 4 (not 3): the body sets the context before each, so the server reads them
    as they were read in one piece; body lines map back to their rows past the directives."""
    spool = _spool(tmp_path)
    for text in ("board=DB1", "circuit=1 zs=0.5", "circuit=2", "zs=0.6"):
        spool.append(text)
    rows = spool.rows()
    batch = BatchRows(key="k", rows=(rows[1], rows[3]))
    assert batch.body.splitlines() == ['#% board=DB1 circuit="" decimal=""', "circuit=1 zs=0.5",
                                       '#% board=DB1 circuit=2 decimal=""', "zs=0.6"]
    assert [batch.row_at(n) for n in range(1, 5)] == [None, 0, None, 1]
    spool.settle_sent(batch, {4: ("bad_value", "why")})
    assert [r.state for r in spool.rows()[1:4:2]] == ["sent", "line_rejected"]


def test_a_spool_from_before_contexts_gets_them_rebuilt(tmp_path: Path) -> None:
    """A spool written by an older capture (no context columns) is given them, in order, on open."""
    path = tmp_path / "old.sqlite"
    db = sqlite3.connect(path)
    db.executescript("CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);"
                     "CREATE TABLE lines (id INTEGER PRIMARY KEY AUTOINCREMENT, text TEXT NOT NULL, "
                     "read_at REAL NOT NULL, state TEXT NOT NULL DEFAULT 'unsent', batch TEXT, code TEXT, "
                     "reason TEXT, sent_at REAL);"
                     "INSERT INTO lines (text, read_at) VALUES ('board=DB7', 1), ('circuit=3', 2);")
    db.commit()
    db.close()
    spool = Spool(path, job="J1")
    spool.append("zs=0.4")
    assert spool.rows()[2].ctx_before == '#% board=DB7 circuit=3 decimal=""'
