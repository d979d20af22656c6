"""The capture session: a reader thread (port → spool), a forwarder thread (spool → API), and the
main thread showing status and handling Ctrl-C.

Invariants:
- The reader never waits on the network: it only appends to the spool and
  wakes the forwarder, so a slow or absent API never slows reading the port.
- First Ctrl-C (or SIGTERM): stop reading, close the port, then forward what
  is spooled, skipping the batching linger, until it is sent or ``drain_s``
  seconds pass without a batch settling.
  Second Ctrl-C: stop at once. Either way every line read is already in the
  spool; whatever was not sent goes at the next start (same keys).
- Exit status (as ``ohmtally verify``): 1 if a circuit failed this session;
  else 2 if lines were rejected or remain unsent; else 0.
"""

from __future__ import annotations

import signal
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from types import FrameType
from typing import Any

from ..cli import EXIT_BAD_INPUT, EXIT_FAIL, EXIT_OK
from .context import ContextKeeper
from .forwarder import BatchRejected, BatchRetrying, BatchSent, Forwarder, ForwardEvent, Halted, run_forwarder
from .reader import PortReader, start_reader_thread
from .serial_source import open_serial_source, translate_event
from .spool import Spool
from .status import JsonReporter, LiveReporter, QuietReporter, Reporter, Tally, verdict_line
from .transport import HttpTransport

__all__ = ["Session", "SessionResult", "run_session"]

# The CLI's statuses; 2 ("bad input") here means lines rejected or still unsent.
EXIT_UNSENT = EXIT_BAD_INPUT

# (tally, stop-reading event, wake-the-forwarder) -> the started reader thread
StartReader = Callable[[Tally, threading.Event, Callable[[], None]], threading.Thread]


@dataclass(frozen=True, slots=True, kw_only=True)
class SessionResult:
    status: int
    tally: dict[str, Any]


class Session:
    """One run of ``ohmtally capture`` (or ``--replay``, with no reader)."""

    def __init__(self, *, spool: Spool, forwarder: Forwarder, reporter: Reporter,
                 start_reader: StartReader | None,
                 drain_s: float = 10.0, refresh_s: float = 0.25) -> None:
        self.spool = spool
        self.forwarder = forwarder
        self.reporter = reporter
        self.start_reader = start_reader
        self.drain_s = drain_s
        self.refresh_s = refresh_s
        self.tally = Tally()
        self.stop_reading = threading.Event()  # first Ctrl-C
        self.stop_all = threading.Event()  # second Ctrl-C, or drained
        self.draining = threading.Event()
        self._wake = threading.Event()
        self._interrupts = 0
        self._outcomes: dict[tuple[str, str], str] = {}
        self._last_progress = 0.0  # monotonic time of the last settled batch

    # -- signals ------------------------------------------------------------
    def interrupt(self, signum: int | None = None, frame: FrameType | None = None) -> None:
        """First call drains, second stops now. Safe from a signal handler (sets flags only)."""
        self._interrupts += 1
        if self._interrupts == 1:
            self.stop_reading.set()
            self.draining.set()
        else:
            self.stop_all.set()
        self._wake.set()

    # -- the forwarder thread -------------------------------------------------
    def _wait(self, seconds: float, wakeable: bool) -> bool:
        if self.stop_all.is_set() or seconds <= 0:
            return self.stop_all.is_set()
        if wakeable:
            self._wake.wait(seconds)
            self._wake.clear()
        else:
            self.stop_all.wait(seconds)
        return self.stop_all.is_set()

    def _on_forward(self, event: ForwardEvent) -> None:
        if isinstance(event, BatchSent | BatchRejected):
            self._last_progress = time.monotonic()
        if isinstance(event, BatchSent):
            self.tally.update(api="ok")
            for verdict in event.verdicts:
                self._outcomes[(str(verdict.get("board")), str(verdict.get("circuit")))] = \
                    str(verdict.get("outcome"))
                self.tally.update(last_verdict=verdict_line(verdict))
            # A circuit retested and now passing no longer counts: later readings win on the server too.
            self.tally.update(failing=sum(o == "fail" for o in self._outcomes.values()))
        elif isinstance(event, BatchRetrying):
            self.tally.update(api=f"retrying ({event.reason}) in {event.wait_s:.1f}s")
        elif isinstance(event, BatchRejected):
            self.tally.update(api=f"rejected HTTP {event.status}")
        elif isinstance(event, Halted):
            self.tally.update(api=f"stopped: {event.reason}")
        self._count()
        self.reporter.forward(event, self.tally)

    def _count(self) -> None:
        c = self.spool.counts()
        self.tally.update(unsent=c.unsent, sent=c.sent, rejected=c.rejected + c.line_rejected)

    def wake(self) -> None:
        # Called per line read: only a flag, the counts are refreshed by the main loop.
        self._wake.set()

    # -- the whole session ----------------------------------------------------
    def run(self, *, install_signals: bool = True) -> SessionResult:
        previous = {}
        if install_signals:
            for sig in (signal.SIGINT, signal.SIGTERM):
                previous[sig] = signal.signal(sig, self.interrupt)
        self._count()
        reader = self.start_reader(self.tally, self.stop_reading, self.wake) if self.start_reader else None
        if reader is None:
            self.stop_reading.set()
            self.draining.set()
        sender = threading.Thread(target=run_forwarder, name="capture-forwarder", daemon=True,
                                  kwargs={"forwarder": self.forwarder, "wait": self._wait,
                                          "on_event": self._on_forward, "draining": self.draining.is_set})
        sender.start()
        try:
            self._main_loop(reader)
        finally:
            self.stop_all.set()
            self._wake.set()
            sender.join(timeout=2.0)
            if reader is not None:
                reader.join(timeout=2.0)
            for sig, handler in previous.items():
                signal.signal(sig, handler)
            self._count()
            self.reporter.close(self.tally)
        return SessionResult(status=self._status(), tally=self.tally.as_dict())

    def _main_loop(self, reader: threading.Thread | None) -> None:
        drain_from: float | None = None
        while not self.stop_all.is_set():
            self._count()
            self.reporter.refresh(self.tally)
            if self.draining.is_set():
                if drain_from is None:
                    drain_from = time.monotonic()
                    if self._interrupts:
                        self.reporter.event("draining", f"stopping: sending what is spooled (until "
                                            f"{self.drain_s:.0f} s pass without progress; Ctrl-C again "
                                            "to quit now)")
                # Bounded: drain_s without a settled batch ends it; a working API may finish a backlog.
                stalled = time.monotonic() > max(drain_from, self._last_progress) + self.drain_s
                reader_done = reader is None or not reader.is_alive()
                pending, _ = self.spool.pending()
                if reader_done and (pending == 0 or self.forwarder.halted or stalled):
                    return
            time.sleep(self.refresh_s)

    def _status(self) -> int:
        t = self.tally.snapshot()
        if t.failing:
            return EXIT_FAIL
        return EXIT_UNSENT if (t.unsent or t.rejected) else EXIT_OK


def _reporter(mode: str) -> Reporter:
    if mode == "json":
        return JsonReporter()
    if mode == "quiet":
        return QuietReporter()
    return LiveReporter()


def run_session(*, spool: Spool, job: str, api: str, api_key: str | None, port: str | None,
                baud: int, profile: str | None, batch_lines: int, linger_s: float, drain_s: float,
                replay: bool, mode: str) -> int:
    """Wire a session from the command line's choices, run it, print a one-line summary."""
    if replay:
        spool.requeue_rejected()
    transport = HttpTransport(api, job, api_key=api_key, profile=profile)
    forwarder = Forwarder(spool=spool, transport=transport, max_lines=batch_lines, linger_s=linger_s)
    reporter = _reporter(mode)
    if profile:
        keeper = ContextKeeper(profile)
        spool.keep_context_with(keeper)
        if keeper.note:
            reporter.event("context", keeper.note)

    def start_reader(tally: Tally, stop: threading.Event, wake: Callable[[], None]) -> threading.Thread:
        assert port is not None
        reader = PortReader(open_source=lambda: open_serial_source(port, baud), translate=translate_event,
                            spool=spool, tally=tally, stop=stop, on_line=wake,
                            on_event=lambda kind, message: reporter.event(kind, message))
        return start_reader_thread(reader)

    session = Session(spool=spool, forwarder=forwarder, reporter=reporter,
                      start_reader=None if replay else start_reader, drain_s=drain_s)
    try:
        result = session.run()
    finally:
        transport.close()
        spool.close()
    t = result.tally
    reporter.event("summary", f"capture ended: {t['read']} line(s) read this session, {t['sent']} sent, "
                   f"{t['unsent']} unsent, {t['rejected']} rejected, {t['partials']} partial line(s) "
                   f"discarded (spool: {spool.path})", **t)
    return result.status
