"""A pure line splitter: chunks in, complete lines out (no I/O, as pyserial's Packetizer).

Invariants:
- Lines end at CR, LF or CRLF, as ``bytes.splitlines`` counts them; a CRLF split
  across two chunks is still one line ending (the LF after a chunk-final CR is
  swallowed), so chunk boundaries never change the lines that come out.
- A line longer than ``max_line_length`` comes out once, cut to that length and
  marked ``overlong``; the rest of it is dropped up to its line end, so memory
  is bounded by ``max_line_length`` whatever the input.
- ``flush`` hands back the unterminated tail (a file's last line); a reader of a
  live port decides whether a tail is a line (it is not: it was cut off).
- Works on ``bytes`` (ports, files) and on ``str`` (text already decoded, UTF-16).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import IO, AnyStr, Generic

__all__ = ["LineSplitter", "SplitLine", "TextLineSplitter", "iter_split_lines"]

_EOL_BYTES = re.compile(rb"\r\n|\r|\n")
_EOL_TEXT = re.compile(r"\r\n|\r|\n")


@dataclass(frozen=True, slots=True)
class SplitLine(Generic[AnyStr]):
    """One complete line, without its line ending."""

    data: AnyStr
    overlong: bool = False


class _Splitter(Generic[AnyStr]):
    _eol: re.Pattern[AnyStr]
    _cr: AnyStr
    _lf: AnyStr
    _empty: AnyStr

    def __init__(self, max_line_length: int = 65536) -> None:
        if max_line_length < 1:
            raise ValueError("max_line_length must be at least 1")
        self.max_line_length = max_line_length
        self._parts: list[AnyStr] = []
        self._held = 0  # characters held in _parts
        self._overlong = False
        self._skip_lf = False

    @property
    def pending(self) -> int:
        """Characters of an unterminated line held (the part kept, if overlong)."""
        return self._held

    def feed(self, data: AnyStr) -> list[SplitLine[AnyStr]]:
        """Complete lines found in ``data`` together with what came before it."""
        out: list[SplitLine[AnyStr]] = []
        if not data:
            return out
        if self._skip_lf:
            self._skip_lf = False
            if data[:1] == self._lf:
                data = data[1:]
                if not data:
                    return out
        pieces = self._eol.split(data)
        tail = pieces.pop()
        if pieces:
            self._hold(pieces[0])
            out.append(self._take())
            limit = self.max_line_length
            # later pieces start a fresh line: no join needed (the hot path for files)
            out.extend(SplitLine(p) if len(p) <= limit else SplitLine(p[:limit], True) for p in pieces[1:])
        self._hold(tail)
        if not tail and data[-1:] == self._cr:
            self._skip_lf = True
        return out

    def flush(self) -> SplitLine[AnyStr] | None:
        """The unterminated tail as a line, or ``None`` if there is none."""
        self._skip_lf = False
        if not self._parts and not self._overlong:
            return None
        return self._take()

    def reset(self) -> int:
        """Drop the unterminated tail; returns how many characters were dropped."""
        dropped = self._held
        self._parts, self._held, self._overlong, self._skip_lf = [], 0, False, False
        return dropped

    def _hold(self, piece: AnyStr) -> None:
        if not piece:
            return
        room = self.max_line_length - self._held
        if len(piece) > room:
            self._overlong = True
            piece = piece[:room]
            if not piece:
                return
        self._parts.append(piece)
        self._held += len(piece)

    def _take(self) -> SplitLine[AnyStr]:
        line = SplitLine(self._empty.join(self._parts), self._overlong)
        self._parts, self._held, self._overlong = [], 0, False
        return line


class LineSplitter(_Splitter[bytes]):
    """Bytes → complete lines (serial ports, files in ASCII-compatible encodings)."""

    _eol = _EOL_BYTES
    _cr = b"\r"
    _lf = b"\n"
    _empty = b""


class TextLineSplitter(_Splitter[str]):
    """Decoded text → complete lines (UTF-16 input, which cannot be split as bytes)."""

    _eol = _EOL_TEXT
    _cr = "\r"
    _lf = "\n"
    _empty = ""


def iter_split_lines(stream: IO[bytes], max_line_length: int, chunk_size: int = 1 << 16
                     ) -> Iterator[SplitLine[bytes]]:
    """Every line of a byte stream, the last one even without a line ending."""
    splitter = LineSplitter(max_line_length)
    while True:
        chunk = stream.read(chunk_size)
        if not chunk:
            break
        yield from splitter.feed(chunk)
    tail = splitter.flush()
    if tail is not None:
        yield tail
