"""Which text encoding a file is in, and its lines decoded one at a time.

Invariants:
- Detection looks at a bounded sample (``SAMPLE_BYTES``), never the whole input.
  Order: a byte-order mark (UTF-8, UTF-16 LE/BE); else UTF-16 without a mark
  when the sample has the zero bytes of mostly-ASCII UTF-16 (one byte of every
  pair zero in at least 90 % of the pairs, the other almost never: no UTF-8 or
  single-byte text looks like that); else UTF-8 if the sample decodes as
  UTF-8; else charset-normalizer's best guess among the single-byte encodings
  meters and spreadsheets in our market write (cp1252, ISO 8859-15); else
  cp1252, which decodes nearly every byte. UTF-8 with a few bad bytes among
  many good multi-byte characters stays UTF-8 (a damaged line).
- A single-byte encoding found that way is a *guess*
  (:func:`detect_encoding_guess` says so): good enough for descriptions and
  units (``°C``, ``µ``), never trusted for a board or circuit reference (the
  CSV adapter rejects such a line unless the encoding was declared).
- UTF-16 is decoded to text before it is split into lines, and a byte-order
  mark never reaches the first line's text.
- Lines are split on CR, LF or CRLF before decoding wherever the encoding is
  ASCII-compatible, so a byte that does not decode costs its own line only
  (:class:`DecodedLine` with ``problem`` set), never its neighbours.
"""

from __future__ import annotations

import codecs
import io
from collections.abc import Iterator
from dataclasses import dataclass
from typing import IO

from .base import AdapterError
from .line_split import LineSplitter, TextLineSplitter

__all__ = [
    "SAMPLE_BYTES",
    "DecodedLine",
    "checked_encoding",
    "detect_encoding",
    "detect_encoding_guess",
    "iter_decoded_lines",
    "read_sample",
    "sniff_unicode",
]

SAMPLE_BYTES = 64 * 1024
_CHUNK = 1 << 16
_SINGLE_BYTE_CANDIDATES = ["cp1252", "iso8859_15"]
_BOMS: tuple[tuple[bytes, str], ...] = (
    (codecs.BOM_UTF8, "utf-8-sig"),
    (codecs.BOM_UTF16_LE, "utf-16-le"),
    (codecs.BOM_UTF16_BE, "utf-16-be"),
)


@dataclass(frozen=True, slots=True)
class DecodedLine:
    """One line: its number (from 1), its text, and why it could not be read, if so."""

    number: int
    text: str
    problem: str | None = None
    code: str | None = None


def read_sample(stream: IO[bytes]) -> tuple[bytes, IO[bytes]]:
    """The first ``SAMPLE_BYTES`` and a stream that replays them before the rest."""
    sample = stream.read(SAMPLE_BYTES) or b""
    return sample, io.BufferedReader(_Replay(sample, stream))


def checked_encoding(name: str | None) -> str | None:
    """A caller's encoding option, checked before any input is read (``bad_option``)."""
    if name is None:
        return None
    try:
        return codecs.lookup(name).name
    except (LookupError, TypeError) as exc:
        raise AdapterError(f"unknown encoding {name!r}", code="bad_option",
                           details={"option": "encoding"}) from exc


def sniff_unicode(sample: bytes) -> str | None:
    """A Unicode encoding the sample shows for certain (byte-order mark, UTF-16 zero bytes), else None."""
    for bom, name in _BOMS:
        if sample.startswith(bom):
            return name
    pairs = len(sample) // 2
    if pairs >= 2:
        even, odd = sample[0 : 2 * pairs : 2], sample[1 : 2 * pairs : 2]
        zero_even, zero_odd = even.count(0), odd.count(0)
        if zero_odd >= 0.9 * pairs and zero_even <= 0.1 * pairs:
            return "utf-16-le"
        if zero_even >= 0.9 * pairs and zero_odd <= 0.1 * pairs:
            return "utf-16-be"
    return None


def detect_encoding_guess(sample: bytes) -> tuple[str, bool]:
    """The codec name to read the input with, and whether it is a guess (see the module's order)."""
    found = sniff_unicode(sample)
    if found is not None:
        return found, False
    if _is_utf8(sample) or _mostly_utf8(sample):
        return "utf-8", False
    # measured start-up cost: charset_normalizer ≈ 24 ms (python -X importtime); most inputs are
    # UTF-8 and never need it
    from charset_normalizer import from_bytes

    try:
        best = from_bytes(sample, cp_isolation=_SINGLE_BYTE_CANDIDATES).best()
    except Exception:  # a detector failure must not fail the input; cp1252 reads anything
        best = None
    return (best.encoding if best is not None else "cp1252"), True


def detect_encoding(sample: bytes) -> str:
    """The codec name to read the input with (see the module's order of tests)."""
    return detect_encoding_guess(sample)[0]


def _is_utf8(sample: bytes) -> bool:
    # a sample may end inside a multi-byte character: allow up to 3 bytes cut off
    for cut in range(4):
        try:
            sample[: len(sample) - cut].decode("utf-8")
            return True
        except UnicodeDecodeError as exc:
            if exc.end < len(sample) - cut or exc.reason != "unexpected end of data":
                return False
    return False


def _mostly_utf8(sample: bytes) -> bool:
    """UTF-8 text with a few bad bytes (a damaged line): keep UTF-8, reject those lines alone."""
    text = sample.decode("utf-8", "replace")
    bad = text.count("\ufffd")
    good = sum(1 for ch in text if ch > "\x7f" and ch != "\ufffd")
    return good > 0 and good >= 4 * bad


def _ascii_compatible(encoding: str) -> bool:
    try:
        return "\n".encode(encoding) == b"\n" and "\r".encode(encoding) == b"\r"
    except (LookupError, UnicodeError):
        return False


def iter_decoded_lines(stream: IO[bytes], encoding: str, max_line_length: int
                       ) -> Iterator[tuple[DecodedLine, bool]]:
    """``(line, overlong)`` for every line of the stream, numbered from 1."""
    if _ascii_compatible(encoding):
        yield from _bytes_first(stream, encoding, max_line_length)
    else:
        yield from _text_first(stream, encoding, max_line_length)


def _bytes_first(stream: IO[bytes], encoding: str, max_line_length: int
                 ) -> Iterator[tuple[DecodedLine, bool]]:
    splitter = LineSplitter(max_line_length)
    number = 0
    first = True

    def decode(raw: bytes, overlong: bool) -> tuple[DecodedLine, bool]:
        nonlocal number, first
        number += 1
        if first:
            first = False
            if encoding == "utf-8-sig" and raw.startswith(codecs.BOM_UTF8):
                raw = raw[len(codecs.BOM_UTF8):]
        try:
            return DecodedLine(number, raw.decode("utf-8" if encoding == "utf-8-sig" else encoding)), overlong
        except UnicodeDecodeError as exc:
            if overlong and exc.reason == "unexpected end of data":
                # the cut fell inside a character; the line is reported as overlong anyway
                return DecodedLine(number, raw[: exc.start].decode(encoding, "replace")), overlong
            return (DecodedLine(number, raw.decode(encoding, "replace"), code="bad_encoding",
                                problem=f"line {number}: byte {raw[exc.start]:#04x} at column "
                                        f"{exc.start + 1} is not valid {encoding}"), overlong)

    while True:
        chunk = stream.read(_CHUNK)
        if not chunk:
            break
        for line in splitter.feed(chunk):
            yield decode(line.data, line.overlong)
    tail = splitter.flush()
    if tail is not None:
        yield decode(tail.data, tail.overlong)


def _text_first(stream: IO[bytes], encoding: str, max_line_length: int
                ) -> Iterator[tuple[DecodedLine, bool]]:
    # UTF-16 and the like: decode first (bad pairs become U+FFFD and are flagged per line)
    decoder = codecs.getincrementaldecoder(encoding)(errors="replace")
    splitter = TextLineSplitter(max_line_length)
    number = 0

    def mark(text: str, overlong: bool) -> tuple[DecodedLine, bool]:
        nonlocal number
        number += 1
        if number == 1 and text.startswith("\ufeff"):
            text = text[1:]
        if "\ufffd" in text:
            return DecodedLine(number, text, code="bad_encoding",
                               problem=f"line {number} has bytes that are not valid {encoding}"), overlong
        return DecodedLine(number, text), overlong

    while True:
        chunk = stream.read(_CHUNK)
        text = decoder.decode(chunk or b"", final=not chunk)
        for line in splitter.feed(text):
            yield mark(line.data, line.overlong)
        if not chunk:
            break
    tail = splitter.flush()
    if tail is not None:
        yield mark(tail.data, tail.overlong)


class _Replay(io.RawIOBase):
    """A sample read ahead, then the rest of the stream."""

    def __init__(self, head: bytes, rest: IO[bytes]) -> None:
        self._head = memoryview(head)
        self._rest = rest

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: memoryview | bytearray) -> int:  # type: ignore[override]
        if self._head.nbytes:
            n = min(len(buffer), self._head.nbytes)
            buffer[:n] = self._head[:n]
            self._head = self._head[n:]
            return n
        data = self._rest.read(len(buffer))
        if not data:
            return 0
        buffer[: len(data)] = data
        return len(data)

    def read(self, size: int = -1) -> bytes:
        if self._head.nbytes:
            if size is None or size < 0 or size >= self._head.nbytes:
                head = bytes(self._head)
                self._head = memoryview(b"")
                return head
            head = bytes(self._head[:size])
            self._head = self._head[size:]
            return head
        return self._rest.read(size) or b""
