"""The port reader: lines to the spool, partial lines discarded, reopening after a loss (no threads)."""

from __future__ import annotations

import threading
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from api.capture.reader import PortReader, SourceEvent
from api.capture.spool import Spool
from api.capture.status import Tally


class ScriptedSource:
    def __init__(self, items: list[SourceEvent], stop: threading.Event | None = None) -> None:
        self.items = items
        self.stop = stop
        self.closed = False

    def lines(self) -> Iterator[Any]:
        yield from self.items
        if self.stop is not None:
            self.stop.set()

    def close(self) -> None:
        self.closed = True


def test_reader_spools_lines_discards_partials_and_reopens(tmp_path: Path) -> None:
    """Across a loss and a failed reopen, every complete line is spooled once, in order, and the
    partial line at the loss is counted, logged and never spooled."""
    stop = threading.Event()
    first = ScriptedSource([SourceEvent(kind="line", text="board=DB1 circuit=1 zs_ohm=0.41"),
                            SourceEvent(kind="partial", detail="14 byte(s)"),
                            SourceEvent(kind="lost", detail="device reports readiness but no data")])
    last = ScriptedSource([SourceEvent(kind="line", text="board=DB1 circuit=2 zs_ohm=0.52")], stop)
    opens: list[object] = [first, OSError("no such device"), last]

    def open_source() -> Any:
        item = opens.pop(0)
        if isinstance(item, Exception):
            raise item
        return item

    spool = Spool(tmp_path / "s.sqlite", job="J")
    tally, woken, messages = Tally(), [], []
    reader = PortReader(open_source=open_source, translate=lambda e: [e], spool=spool, tally=tally, stop=stop,
                        on_line=lambda: woken.append(1),
                        on_event=lambda kind, message: messages.append(kind), draw=lambda: 0.0)
    reader.backoff = type(reader.backoff)(base_s=0.001, cap_s=0.001)
    reader.run()
    assert [r.text for r in spool.rows()] == ["board=DB1 circuit=1 zs_ohm=0.41",
                                              "board=DB1 circuit=2 zs_ohm=0.52"]
    assert (tally.read, tally.partials, len(woken)) == (2, 1, 2)
    assert spool.counts().discarded_partials == 1
    assert first.closed and last.closed and opens == []
    assert "partial" in messages and tally.port == "closed"
