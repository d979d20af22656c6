"""What the person (or the logger's log) sees while capturing.

Invariants:
- :class:`Tally` is the one set of counters; the reader and forwarder threads
  update it under its lock, and every reporter renders from a snapshot.
- A failing (or ``investigate``) circuit is printed as its own line the moment
  its verdict arrives, in every mode, including ``--quiet``: it is the finding
  the person on site must not miss. ``--json-log`` writes one JSON object per
  event, one per line, to stdout, for a logger's journal.
- Reporters never raise into the capture threads: a broken terminal must not
  stop lines reaching the spool.
"""

from __future__ import annotations

import contextlib
import json
import sys
import threading
import time
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, replace
from typing import IO, Any, Protocol

from rich.console import Console
from rich.live import Live
from rich.text import Text

from .forwarder import BatchRejected, BatchRetrying, BatchSent, ForwardEvent, Halted

__all__ = ["JsonReporter", "LiveReporter", "QuietReporter", "Reporter", "Tally", "verdict_line"]

_NOTEWORTHY = frozenset({"fail", "investigate"})


@dataclass(slots=True)
class Tally:
    port: str = "starting"
    port_detail: str = ""
    api: str = "idle"
    read: int = 0  # complete lines read this session
    partials: int = 0  # partial lines discarded at a disconnect this session
    unsent: int = 0  # in the spool, not yet taken by the API (all sessions)
    sent: int = 0
    rejected: int = 0  # lines rejected, by line or by batch (all sessions)
    last_verdict: str = ""
    failing: int = 0  # circuits whose latest verdict this session is fail
    _lock: threading.Lock = field(default_factory=threading.Lock, repr=False, compare=False)

    def update(self, **changes: Any) -> None:
        with self._lock:
            for name, value in changes.items():
                setattr(self, name, value)

    def bump(self, name: str, by: int = 1) -> None:
        with self._lock:
            setattr(self, name, getattr(self, name) + by)

    def snapshot(self) -> Tally:
        with self._lock:
            return replace(self, _lock=threading.Lock())

    def as_dict(self) -> dict[str, Any]:
        with self._lock:
            return {f.name: getattr(self, f.name) for f in fields(self) if not f.name.startswith("_")}


def verdict_line(verdict: Mapping[str, Any]) -> str:
    """``DB1/3 FAIL: loop_impedance 1.92 > 1.37 Ω`` — the circuit and the checks that decided it."""
    outcome = str(verdict.get("outcome", "?"))
    where = f"{verdict.get('board', '?')}/{verdict.get('circuit', '?')}"
    bad = [c for c in verdict.get("checks") or [] if isinstance(c, dict) and c.get("outcome") == outcome]
    parts = []
    for check in bad[:3]:
        text = str(check.get("check", "?"))
        if check.get("value") is not None and check.get("limit") is not None:
            text += f" {check['value']} vs limit {check['limit']} {check.get('unit') or ''}".rstrip()
        parts.append(text)
    return f"{where} {outcome.upper()}" + (f": {'; '.join(parts)}" if parts and outcome != "pass" else "")


class Reporter(Protocol):
    def event(self, kind: str, message: str, **data: Any) -> None: ...
    def forward(self, event: ForwardEvent, tally: Tally) -> None: ...
    def refresh(self, tally: Tally) -> None: ...
    def close(self, tally: Tally) -> None: ...


class _Base:
    """Shared handling of forwarder events; subclasses say how a message is shown."""

    def event(self, kind: str, message: str, **data: Any) -> None:
        raise NotImplementedError

    def forward(self, event: ForwardEvent, tally: Tally) -> None:
        if isinstance(event, BatchSent):
            for item in event.line_rejections:
                self.event("line_rejected", f"line rejected: {item.get('code')}: {item.get('reason')}",
                           rejection=dict(item))
            for verdict in event.verdicts:
                if verdict.get("outcome") in _NOTEWORTHY:
                    self.event("verdict", verdict_line(verdict), verdict=dict(verdict))
        elif isinstance(event, BatchRetrying):
            self.event("retrying", f"API: {event.reason}; retry {event.attempt} in {event.wait_s:.1f} s",
                       key=event.key, attempt=event.attempt, wait_s=event.wait_s, reason=event.reason)
        elif isinstance(event, BatchRejected):
            self.event("batch_rejected", f"{event.lines} line(s) rejected by the API (HTTP {event.status} "
                       f"{event.code}: {event.reason}); kept in the spool, see --show / --replay",
                       key=event.key, status=event.status, code=event.code, reason=event.reason,
                       lines=event.lines)
        elif isinstance(event, Halted):
            self.event("halted", f"forwarding stopped: {event.reason}; lines keep spooling",
                       reason=event.reason)

    def refresh(self, tally: Tally) -> None:
        pass

    def close(self, tally: Tally) -> None:
        pass


class QuietReporter(_Base):
    """``--quiet``: no status line; findings and faults only, one plain line each, to stderr."""

    _QUIET_KINDS = frozenset({"verdict", "line_rejected", "batch_rejected", "halted", "error", "summary"})

    def __init__(self, stream: IO[str] | None = None) -> None:
        self.stream = stream or sys.stderr

    def event(self, kind: str, message: str, **data: Any) -> None:
        if kind in self._QUIET_KINDS:
            with contextlib.suppress(OSError, ValueError):
                print(message, file=self.stream, flush=True)


class JsonReporter(_Base):
    """``--json-log``: one JSON object per event and a status every few seconds, on stdout."""

    def __init__(self, stream: IO[str] | None = None, *, every_s: float = 5.0) -> None:
        self.stream = stream or sys.stdout
        self.every_s = every_s
        self._last = 0.0

    def event(self, kind: str, message: str, **data: Any) -> None:
        record = {"at": round(time.time(), 3), "event": kind, "message": message, **data}
        try:
            self.stream.write(json.dumps(record, default=str) + "\n")
            self.stream.flush()
        except (OSError, ValueError):
            pass

    def refresh(self, tally: Tally) -> None:
        now = time.monotonic()
        if now - self._last >= self.every_s:
            self._last = now
            self.event("status", "status", **tally.as_dict())

    def close(self, tally: Tally) -> None:
        self.event("status", "final status", **tally.as_dict())


class LiveReporter(_Base):
    """The default: a live status line (rich) with findings printed above it as they arrive."""

    def __init__(self) -> None:
        self.console = Console(stderr=True)
        self._live = Live(console=self.console, refresh_per_second=4, transient=False)
        self._live.start()

    def event(self, kind: str, message: str, **data: Any) -> None:
        style = {"verdict": "bold red", "halted": "bold red", "batch_rejected": "red",
                 "line_rejected": "yellow", "retrying": "yellow", "port": "cyan"}.get(kind, "")
        with contextlib.suppress(OSError, ValueError):
            self.console.print(message, style=style, markup=False, highlight=False)

    def forward(self, event: ForwardEvent, tally: Tally) -> None:
        if isinstance(event, BatchRetrying) and event.attempt > 1:
            return  # the status line shows the retrying state; print only the first
        super().forward(event, tally)

    def refresh(self, tally: Tally) -> None:
        t = tally.snapshot()
        port_style = {"open": "green", "lost": "red", "waiting": "yellow"}.get(t.port, "")
        line = Text.assemble(
            ("port ", "dim"), (t.port, port_style), ("  read ", "dim"), str(t.read),
            ("  spooled ", "dim"), str(t.unsent), ("  sent ", "dim"), str(t.sent),
            ("  rejected ", "dim"), (str(t.rejected), "red" if t.rejected else ""),
            ("  api ", "dim"), t.api,
            ("  last ", "dim"), (t.last_verdict or "-", "red" if "FAIL" in t.last_verdict else ""))
        with contextlib.suppress(OSError, ValueError):
            self._live.update(line)

    def close(self, tally: Tally) -> None:
        self.refresh(tally)
        self._live.stop()
