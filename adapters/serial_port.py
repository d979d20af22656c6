"""Reading complete lines from a serial port (or loop://, socket://, rfc2217://).

The port-reading loop is thin; the line splitting is :class:`LineSplitter`,
pure and tested on its own (as pyserial separates its Packetizer from the
ReaderThread that feeds it).

Invariants:
- ``lines()`` yields :class:`LineEvent` for every complete line, in order, and
  :class:`PortEvent` for what happens to the port (``opened``, ``disconnected``,
  ``error``, ``closed``, and ``idle`` on a read timeout when asked for). It
  never raises for a port fault: a disconnect is an event, then the iterator ends.
- A read timeout is not a fault: reading goes on (the timeout only bounds how
  long ``close()`` from another thread takes to be noticed).
- A line cut off by a disconnect is not a line: its bytes are counted in the
  ``disconnected`` event (``dropped``), never yielded as a :class:`LineEvent`.
- Blank lines (a CRLF pair sent as CR, LF …) are dropped unless asked for.
"""

from __future__ import annotations

import contextlib
import threading
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any, Literal

import serial  # type: ignore[import-untyped]  # pyserial ships no type hints

from .line_split import LineSplitter

__all__ = ["LineEvent", "LineSplitter", "PortEvent", "SerialLineReader"]

PortEventKind = Literal["opened", "disconnected", "error", "closed", "idle"]


@dataclass(frozen=True, slots=True)
class LineEvent:
    """One complete line as received, without its line ending."""

    data: bytes
    number: int  # 1-based count of lines yielded by this reader
    overlong: bool = False  # cut to max_line_length; the rest was dropped

    @property
    def text(self) -> str:
        return self.data.decode("utf-8", "replace")


@dataclass(frozen=True, slots=True)
class PortEvent:
    kind: PortEventKind
    reason: str = ""
    dropped: int = 0  # bytes of an unterminated line lost with the port


class SerialLineReader:
    """``SerialLineReader("loop://")``, ``("/dev/ttyUSB0", baudrate=19200)``, ``("socket://h:p")``."""

    def __init__(self, url: str, *, baudrate: int = 9600, bytesize: int = 8, parity: str = "N",
                 stopbits: float = 1, timeout: float = 0.2, xonxoff: bool = False, rtscts: bool = False,
                 max_line_length: int = 4096, read_size: int = 4096, keep_blank: bool = False,
                 idle_events: bool = False, port: Any = None) -> None:
        self.url = url
        self.settings = {"baudrate": baudrate, "bytesize": bytesize, "parity": parity,
                         "stopbits": stopbits, "timeout": timeout, "xonxoff": xonxoff, "rtscts": rtscts}
        self.splitter = LineSplitter(max_line_length)
        self.read_size = read_size
        self.keep_blank = keep_blank
        self.idle_events = idle_events
        self._port: Any = port
        self._closing = threading.Event()
        self._count = 0

    @property
    def port(self) -> Any:
        """The open ``serial.Serial`` (opened on first use); for a test to write into ``loop://``."""
        if self._port is None:
            self._port = serial.serial_for_url(self.url, **self.settings)
        return self._port

    def close(self) -> None:
        """Stop ``lines()`` at its next read and close the port (safe from another thread)."""
        self._closing.set()
        port = self._port
        if port is not None:
            with contextlib.suppress(serial.SerialException, OSError):
                port.close()

    def __enter__(self) -> SerialLineReader:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def lines(self) -> Iterator[LineEvent | PortEvent]:
        try:
            port = self.port
        except (serial.SerialException, OSError, ValueError) as exc:
            yield PortEvent("error", f"cannot open {self.url}: {exc}")
            return
        yield PortEvent("opened", self.url)
        while not self._closing.is_set():
            try:
                waiting = port.in_waiting
                data = port.read(max(1, min(waiting, self.read_size)) if waiting else 1)
                if data and port.in_waiting:  # take what has already arrived in one go
                    data += port.read(min(port.in_waiting, self.read_size))
            except (serial.SerialException, OSError, TypeError, AttributeError) as exc:
                # TypeError/AttributeError: pyserial's loop:// and posix ports raise these
                # when closed under a blocked read from another thread
                if self._closing.is_set():
                    break
                yield PortEvent("disconnected", str(exc) or type(exc).__name__, self.splitter.reset())
                return
            if not data:
                if self.idle_events:
                    yield PortEvent("idle", "read timeout")
                continue
            for line in self.splitter.feed(data):
                if not line.data and not self.keep_blank:
                    continue
                self._count += 1
                yield LineEvent(line.data, self._count, line.overlong)
        yield PortEvent("closed", "closed by the reader", self.splitter.reset())
