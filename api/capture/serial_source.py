"""The capture reader's view of :class:`adapters.serial_port.SerialLineReader`.

Invariants:
- Only complete, whole lines become ``line`` events. An overlong line (cut by
  the splitter) is treated like a partial one: discarded and counted, never
  sent half.
- ``idle_events`` is on, so the reader gets control back at every read timeout
  (0.2 s) and notices a stop promptly even when the meter is silent.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from adapters.serial_port import LineEvent, PortEvent, SerialLineReader

from .reader import SourceEvent

__all__ = ["open_serial_source", "translate_event"]


def open_serial_source(url: str, baudrate: int) -> SerialLineReader:
    """A reader for a device path or a pyserial URL; the port opens on first read."""
    return SerialLineReader(url, baudrate=baudrate, idle_events=True)


def translate_event(item: Any) -> Sequence[SourceEvent]:
    if isinstance(item, LineEvent):
        if item.overlong:
            return (SourceEvent(kind="partial", detail=f"line {item.number} longer than the limit, "
                                f"first {len(item.data)} bytes: {item.text[:40]!r}"),)
        return (SourceEvent(kind="line", text=item.text),)
    if isinstance(item, PortEvent):
        if item.kind == "opened":
            return (SourceEvent(kind="open", detail=item.reason),)
        if item.kind == "error":
            return (SourceEvent(kind="failed", detail=item.reason),)
        if item.kind in ("disconnected", "closed"):
            partial = (SourceEvent(kind="partial", detail=f"{item.dropped} byte(s) of an unfinished line"),
                       ) if item.dropped else ()
            return (*partial, SourceEvent(kind="lost", detail=item.reason))
    return ()
