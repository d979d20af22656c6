"""The reader: port → spool, reopening the port whenever it goes away.

Invariants:
- A complete line is appended to the spool (committed, fsynced) before the
  reader takes the next one; the forwarder is only woken afterwards.
- A partial line cut off by a disconnect is never spooled: it is counted and
  noted in the spool's event log with its text, so a person can see what the
  meter must send again.
- The port is reopened with exponential backoff (capped at a few seconds, as
  a person re-plugging a cable expects it to be picked up at once); the loop
  ends only when ``stop`` is set, and then closes the port.
- Nothing the port does raises out of :meth:`PortReader.run`.
"""

from __future__ import annotations

import contextlib
import random
import sqlite3
import threading
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any, Protocol

from .policy import Backoff
from .spool import Spool
from .status import Tally

__all__ = ["LineSource", "PortReader", "SourceEvent", "start_reader_thread"]


class LineSource(Protocol):
    def lines(self) -> Iterator[Any]: ...
    def close(self) -> None: ...


@dataclass(frozen=True, slots=True, kw_only=True)
class SourceEvent:
    """What the reader needs from one item of ``SerialLineReader.lines()``."""

    kind: str  # "line", "open", "failed" (could not open), "lost", "partial", "other"
    text: str = ""
    detail: str = ""


Translate = Callable[[Any], Sequence[SourceEvent]]


@dataclass(slots=True, kw_only=True)
class PortReader:
    open_source: Callable[[], LineSource]
    translate: Translate
    spool: Spool
    tally: Tally
    stop: threading.Event
    on_line: Callable[[], None] = lambda: None
    on_event: Callable[[str, str], None] = lambda kind, message: None
    backoff: Backoff = field(default_factory=lambda: Backoff(base_s=0.2, cap_s=3.0))
    draw: Callable[[], float] = random.random

    def run(self) -> None:
        failures = 0
        while not self.stop.is_set():
            source: LineSource | None = None
            try:
                source = self.open_source()
                outcome = self._pump(source)
            except Exception as exc:  # a port error mid-read (or at open) is a disconnect
                outcome = "failed"
                self._state("lost", f"port error: {exc}")
            finally:
                if source is not None:
                    with contextlib.suppress(Exception):  # closing a port that is gone may fail
                        source.close()
            if outcome == "failed":
                failures += 1
                wait = self.backoff.delay(failures, draw=self.draw)
                self._state("waiting", f"port not available; retry in {wait:.1f} s", quiet=failures > 1)
                self.stop.wait(wait)
            else:
                failures = 0
        self._state("closed", "port closed")

    def _pump(self, source: LineSource) -> str:
        """Read until the port goes or ``stop`` is set; say how: "failed", "lost" or "stopped"."""
        opened = False
        for item in source.lines():
            for event in self.translate(item):
                if event.kind == "line":
                    self._keep(event.text)
                elif event.kind == "partial":
                    self.spool.record_event("partial_discarded", event.detail)
                    self.tally.bump("partials")
                    self.on_event("partial", f"partial line discarded ({event.detail}); "
                                  "not sent: send that reading again")
                elif event.kind == "open":
                    opened = True
                    self._state("open", f"port open: {event.detail}")
                elif event.kind == "failed":
                    self.tally.update(port_detail=event.detail)
                    return "failed"
                elif event.kind == "lost":
                    self.spool.record_event("port_lost", event.detail)
                    self._state("lost", f"port lost: {event.detail}; reconnecting")
                    return "lost"
            if self.stop.is_set():
                return "stopped"
        # The iterator ended without saying why: treat it as a loss.
        return "lost" if opened else "failed"

    def _keep(self, text: str) -> None:
        try:
            self.spool.append(text)
        except sqlite3.Error as exc:  # disk full, file gone: say so loudly, keep reading
            self.on_event("error", f"cannot write the spool ({exc}): line NOT kept: {text!r}")
            return
        self.tally.bump("read")
        self.on_line()

    def _state(self, state: str, message: str, *, quiet: bool = False) -> None:
        if self.tally.port == state and quiet:
            return
        self.tally.update(port=state, port_detail=message)
        if not quiet:
            self.on_event("port", message)


def start_reader_thread(reader: PortReader) -> threading.Thread:
    thread = threading.Thread(target=reader.run, name="capture-reader", daemon=True)
    thread.start()
    return thread
