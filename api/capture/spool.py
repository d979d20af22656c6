"""The capture spool: every line read from the meter, durable before it is sent.

Invariants:
- A line is committed (WAL, ``synchronous=FULL``: the commit returns only after
  the write-ahead log is fsynced) by :meth:`Spool.append` *before* any code can
  send it. One transaction per line: a power cut loses at most the line whose
  commit had not yet returned, never one already acknowledged.
- Row ids are never reused (``AUTOINCREMENT``), so an idempotency key derived
  from them names one batch of lines for the life of the spool file.
- A line belongs to at most one open batch. The batch (its key and members) is
  committed before the first send, so a resend after a crash or restart sends
  the same lines under the same key; the server's idempotency then makes the
  resend harmless.
- A spool belongs to one job: opening it for another is refused
  (:class:`SpoolMismatch`), so lines never drift to the wrong job. The API URL
  is kept as the last one used (``--replay`` without ``--api`` uses it).
- Nothing is deleted. Rejected lines stay, with the server's code and reason,
  until a person replays them (``--replay``).
- Every line is stored with the context in force before and after it (a
  ``#%`` directive line, :mod:`api.capture.context`), in the same transaction
  as the line, so a batch can always carry its board and circuit: after a
  pause longer than the linger, a reconnect, a restart, or a ``--replay`` of
  lines far apart. A spool written before contexts were kept gets them
  rebuilt, in order, when it is opened for writing.
"""

from __future__ import annotations

import sqlite3
import threading
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .context import EMPTY_CONTEXT, ContextKeeper

__all__ = [
    "BatchRows",
    "Spool",
    "SpoolCounts",
    "SpoolError",
    "SpoolMismatch",
    "SpoolRow",
    "batch_key",
]

UNSENT, SENT, LINE_REJECTED, REJECTED = "unsent", "sent", "line_rejected", "rejected"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS lines (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    text TEXT NOT NULL,
    read_at REAL NOT NULL,
    state TEXT NOT NULL DEFAULT 'unsent'
        CHECK (state IN ('unsent', 'sent', 'line_rejected', 'rejected')),
    batch TEXT,
    code TEXT,
    reason TEXT,
    sent_at REAL,
    ctx_before TEXT,
    ctx_after TEXT
);
CREATE INDEX IF NOT EXISTS lines_state ON lines (state, id);
CREATE TABLE IF NOT EXISTS events (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    at REAL NOT NULL,
    kind TEXT NOT NULL,
    detail TEXT NOT NULL DEFAULT ''
);
"""


class SpoolError(Exception):
    """Root of the spool's errors."""

    code = "spool_error"


class SpoolMismatch(SpoolError):
    """The spool file was made for another job."""

    code = "spool_mismatch"


@dataclass(frozen=True, slots=True, kw_only=True)
class SpoolRow:
    id: int
    text: str
    read_at: float
    state: str
    batch: str | None = None
    code: str | None = None
    reason: str | None = None
    ctx_before: str | None = None  # the directive line in force before this line (None: not known)
    ctx_after: str | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class BatchRows:
    """Lines assigned to one batch, in spool order, with the batch's idempotency key."""

    key: str
    rows: tuple[SpoolRow, ...]

    def _layout(self) -> tuple[list[str], list[int | None]]:
        """Body lines, and for each the index of the row it carries (None: a context directive).

        The server reads a body on its own, from an empty context: a row whose context before it is
        not what the server would have reached is preceded by the directive that sets it, so each
        batch is self-contained (one directive at the top of a batch of consecutive lines, one
        before each jump in a replay of lines far apart)."""
        lines: list[str] = []
        owners: list[int | None] = []
        state: str | None = EMPTY_CONTEXT
        for index, row in enumerate(self.rows):
            if row.ctx_before is not None and row.ctx_before != state:
                lines.append(row.ctx_before)
                owners.append(None)
            lines.append(row.text)
            owners.append(index)
            state = row.ctx_after
        return lines, owners

    @property
    def body(self) -> str:
        return "".join(f"{line}\n" for line in self._layout()[0])

    def row_at(self, line: int) -> int | None:
        """The index in ``rows`` of the row on body line ``line`` (from 1), or None (a directive)."""
        owners = self._layout()[1]
        return owners[line - 1] if 1 <= line <= len(owners) else None


@dataclass(frozen=True, slots=True, kw_only=True)
class SpoolCounts:
    total: int
    unsent: int
    sent: int
    line_rejected: int
    rejected: int
    discarded_partials: int

    def as_dict(self) -> dict[str, int]:
        return {name: getattr(self, name) for name in self.__slots__}


def batch_key(spool_id: str, row_ids: Sequence[int], round_: int) -> str:
    """The idempotency key of a batch: the spool's id, the first and last row id, the replay round.

    Deterministic in its inputs, so the same assignment always yields the same
    key; the replay round makes a deliberate re-send a new request.
    """
    suffix = f"-r{round_}" if round_ else ""
    return f"ohmtally-capture-{spool_id}-{row_ids[0]}-{row_ids[-1]}-n{len(row_ids)}{suffix}"


class Spool:
    """A SQLite file of captured lines. Thread-safe: one connection behind a lock."""

    def __init__(self, path: str | Path, *, job: str | None = None, api: str | None = None,
                 clock: Callable[[], float] | None = None, read_only: bool = False) -> None:
        self.path = Path(path)
        self._clock = clock or time.time
        self._lock = threading.RLock()
        if read_only:
            if not self.path.exists():
                raise SpoolError(f"no spool at {self.path}")
            uri = f"file:{self.path}?mode=ro"
            self._db = sqlite3.connect(uri, uri=True, check_same_thread=False,
                                       isolation_level=None)
        else:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            self._db = sqlite3.connect(self.path, check_same_thread=False, isolation_level=None)
            # WAL: the reader's per-line commit does not block --show; FULL:
            # fsync the log on every commit, so a returned append survives a power cut.
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=FULL")
            self._db.executescript(_SCHEMA)
        self._db.row_factory = sqlite3.Row
        if not read_only:
            self._migrate()
        self.spool_id = self._bind(job, api, read_only)
        self._keeper = ContextKeeper()
        if not read_only:
            self._resume_context()

    # -- set-up -------------------------------------------------------------
    def _bind(self, job: str | None, api: str | None, read_only: bool) -> str:
        have = self.meta().get("job")
        if job is not None and have is not None and have != job:
            raise SpoolMismatch(f"spool {self.path} belongs to job {have!r}, not {job!r}")
        if not read_only:
            with self._tx() as db:
                db.execute("INSERT OR IGNORE INTO meta VALUES ('spool_id', ?)", (uuid.uuid4().hex[:12],))
                db.execute("INSERT OR IGNORE INTO meta VALUES ('round', '0')")
                if job is not None:
                    db.execute("INSERT OR IGNORE INTO meta VALUES ('job', ?)", (job,))
                if api is not None:  # the API last used: a server may move, the job stays
                    db.execute("INSERT OR REPLACE INTO meta VALUES ('api', ?)", (api,))
        return self.meta().get("spool_id", "")

    def _migrate(self) -> None:
        columns = {r[1] for r in self._db.execute("PRAGMA table_info(lines)")}
        with self._tx() as db:
            for name in ("ctx_before", "ctx_after"):
                if name not in columns:  # a spool from before contexts were kept
                    db.execute(f"ALTER TABLE lines ADD COLUMN {name} TEXT")

    def _resume_context(self) -> None:
        """Rebuild missing contexts (an older spool), then continue from the last line's."""
        with self._lock:
            missing = self._db.execute("SELECT COUNT(*) FROM lines WHERE ctx_after IS NULL").fetchone()[0]
        if missing:
            with self._tx() as db:
                rows = db.execute("SELECT id, text FROM lines ORDER BY id").fetchall()
                db.executemany("UPDATE lines SET ctx_before = ?, ctx_after = ? WHERE id = ?",
                               [(*self._keeper.feed(r["text"]), r["id"]) for r in rows])
            return
        with self._lock:
            last = self._db.execute("SELECT ctx_after FROM lines ORDER BY id DESC LIMIT 1").fetchone()
        if last is not None:
            self._keeper.restore(last[0])

    def keep_context_with(self, keeper: ContextKeeper) -> None:
        """Follow the context with ``keeper`` (a regex profile's) from the last spooled line on."""
        with self._lock:
            last = self._db.execute("SELECT ctx_after FROM lines ORDER BY id DESC LIMIT 1").fetchone()
            if last is not None and last[0] is not None:
                keeper.restore(last[0])
            self._keeper = keeper

    def meta(self) -> dict[str, str]:
        with self._lock:
            return {r[0]: r[1] for r in self._db.execute("SELECT key, value FROM meta")}

    @contextmanager
    def _tx(self) -> Iterator[sqlite3.Connection]:
        with self._lock:
            self._db.execute("BEGIN IMMEDIATE")
            try:
                yield self._db
            except BaseException:
                self._db.execute("ROLLBACK")
                raise
            self._db.execute("COMMIT")

    def close(self) -> None:
        with self._lock:
            self._db.close()

    # -- the reader's side --------------------------------------------------
    def append(self, text: str) -> int:
        """Commit one complete line, with its context; returns its row id once it is on disk."""
        with self._tx() as db:
            before, after = self._keeper.feed(text)
            cur = db.execute("INSERT INTO lines (text, read_at, ctx_before, ctx_after) VALUES (?, ?, ?, ?)",
                             (text, self._clock(), before, after))
        assert cur.lastrowid is not None
        return cur.lastrowid

    def record_event(self, kind: str, detail: str = "") -> None:
        """Note a port event (disconnect, partial line discarded) for ``--show``."""
        with self._tx() as db:
            db.execute("INSERT INTO events (at, kind, detail) VALUES (?, ?, ?)",
                       (self._clock(), kind, detail))

    # -- the forwarder's side -----------------------------------------------
    def next_batch(self, max_lines: int) -> BatchRows | None:
        """The open batch if one was assigned and not settled, else a new one of unsent lines."""
        with self._tx() as db:
            open_key = db.execute("SELECT batch FROM lines WHERE state = ? AND batch IS NOT NULL "
                                  "ORDER BY id LIMIT 1", (UNSENT,)).fetchone()
            if open_key is not None:
                key = open_key[0]
            else:
                ids = [r[0] for r in db.execute("SELECT id FROM lines WHERE state = ? AND batch IS NULL "
                                                "ORDER BY id LIMIT ?", (UNSENT, max_lines))]
                if not ids:
                    return None
                round_ = int(db.execute("SELECT value FROM meta WHERE key = 'round'").fetchone()[0])
                key = batch_key(self.spool_id, ids, round_)
                db.executemany("UPDATE lines SET batch = ? WHERE id = ?", [(key, i) for i in ids])
            rows = db.execute("SELECT * FROM lines WHERE batch = ? AND state = ? ORDER BY id",
                              (key, UNSENT)).fetchall()
        return BatchRows(key=key, rows=tuple(_row(r) for r in rows))

    def settle_sent(self, batch: BatchRows, line_rejections: dict[int, tuple[str, str]]) -> None:
        """The API took the batch (2xx). ``line_rejections`` maps body line number → (code, reason);
        a line that carried a context directive, not a row, has no row to mark."""
        by_row: dict[int, tuple[str, str]] = {}
        for number, why in line_rejections.items():
            index = batch.row_at(number)
            if index is not None:
                by_row.setdefault(index, why)
        now = self._clock()
        with self._tx() as db:
            for index, row in enumerate(batch.rows):
                code, reason = by_row.get(index, (None, None))
                db.execute("UPDATE lines SET state = ?, code = ?, reason = ?, sent_at = ? WHERE id = ?",
                           (LINE_REJECTED if code else SENT, code, reason, now, row.id))

    def settle_rejected(self, batch: BatchRows, code: str, reason: str) -> None:
        """The API refused the whole batch (4xx): keep the lines, marked, with why."""
        with self._tx() as db:
            db.executemany("UPDATE lines SET state = ?, code = ?, reason = ? WHERE id = ?",
                           [(REJECTED, code, reason, row.id) for row in batch.rows])

    def requeue_rejected(self) -> int:
        """For ``--replay``: rejected lines become unsent again, in a new round (new keys)."""
        with self._tx() as db:
            cur = db.execute("UPDATE lines SET state = ?, batch = NULL, code = NULL, reason = NULL "
                             "WHERE state IN (?, ?)", (UNSENT, REJECTED, LINE_REJECTED))
            db.execute("UPDATE meta SET value = CAST(value AS INTEGER) + 1 WHERE key = 'round'")
        return cur.rowcount

    def pending(self) -> tuple[int, float | None]:
        """Unsent lines and when the oldest of them was read (None when there are none)."""
        with self._lock:
            count, oldest = self._db.execute("SELECT COUNT(*), MIN(read_at) FROM lines WHERE state = ?",
                                             (UNSENT,)).fetchone()
        return int(count), oldest

    # -- inspection ---------------------------------------------------------
    def counts(self) -> SpoolCounts:
        with self._lock:
            by_state = dict(self._db.execute("SELECT state, COUNT(*) FROM lines GROUP BY state").fetchall())
            partials = self._db.execute("SELECT COUNT(*) FROM events WHERE kind = 'partial_discarded'"
                                        ).fetchone()[0]
        return SpoolCounts(total=sum(by_state.values()), unsent=by_state.get(UNSENT, 0),
                           sent=by_state.get(SENT, 0), line_rejected=by_state.get(LINE_REJECTED, 0),
                           rejected=by_state.get(REJECTED, 0), discarded_partials=partials)

    def rows(self, *, states: Sequence[str] | None = None, limit: int | None = None) -> list[SpoolRow]:
        sql = "SELECT * FROM lines"
        params: list[Any] = []
        if states:
            sql += f" WHERE state IN ({','.join('?' * len(states))})"
            params.extend(states)
        sql += " ORDER BY id"
        if limit is not None:
            sql += " LIMIT ?"
            params.append(limit)
        with self._lock:
            return [_row(r) for r in self._db.execute(sql, params)]

    def events(self, limit: int = 20) -> list[dict[str, Any]]:
        with self._lock:
            got = self._db.execute("SELECT at, kind, detail FROM events ORDER BY id DESC LIMIT ?",
                                   (limit,)).fetchall()
        return [dict(r) for r in reversed(got)]


def _row(r: sqlite3.Row) -> SpoolRow:
    return SpoolRow(id=r["id"], text=r["text"], read_at=r["read_at"], state=r["state"],
                    batch=r["batch"], code=r["code"], reason=r["reason"], ctx_before=r["ctx_before"],
                    ctx_after=r["ctx_after"])
