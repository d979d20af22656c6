"""Streaming JSON: the records of a list, of a site document, or of NDJSON.

A site document is ``{"installation": {...}, "boards": [...], "circuits": [...]}``
(any of them, in any order; other members such as ``ruleset`` are the caller's):
its ``circuits`` and ``boards`` are streamed item by item, each item tagged
with its ``kind``; its ``installation`` is one item.

Invariants:
- Text is decoded in chunks and records are cut out one at a time with
  ``json.JSONDecoder.raw_decode``; only one record (at most ``max_record``
  characters) and one chunk are held, so memory is constant in the number of
  records.
- A record that does not parse is one :class:`JsonItem` with ``problem`` set;
  reading resumes at the next record (in a list: after the next ``}`` that is
  followed by ``,``; in NDJSON: at the next line), so good records after a bad
  one still come through. Records are flat objects, so ``},`` ends one.
- Objects after a top-level document are read as NDJSON (an NDJSON input
  whose first line is a site document), never dropped.
- Line numbers count from 1 at the start of the input and name the line where
  a record (or a problem) starts; CR, LF and CRLF each end one line (as in
  the other adapters). Pointers follow RFC 6901 (``/circuits/3``).
"""

from __future__ import annotations

import codecs
import json
import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import IO, Any

from engine import FIELDS

__all__ = ["JsonItem", "iter_json_records"]

_CHUNK = 1 << 16
_WS = re.compile(r"[ \t\r\n]*")
_RESYNC_LIST = re.compile(r"\}[ \t\r\n]*,")  # the end of a (flat) record and its comma
_DECODER = json.JSONDecoder()
_RECORD_KEYS = frozenset(FIELDS)  # a top-level object starting with one of these is a record
_STREAMED = {"circuits": "circuit", "boards": "board"}  # a site document's lists, read item by item


def _line_ends(text: str, start: int, end: int) -> int:
    """Line ends in ``text[start:end]``: LF, CR and CRLF count one each."""
    return text.count("\n", start, end) + text.count("\r", start, end) - text.count("\r\n", start, end)


@dataclass(frozen=True, slots=True)
class JsonItem:
    line: int
    pointer: str
    value: Any = None
    problem: str | None = None
    code: str = "bad_json"
    kind: str = "circuit"  # what the value is: "circuit", "board" or "installation" (a site document's)


class _Text:
    """A sliding window over decoded text, with line counting for what has been dropped."""

    def __init__(self, stream: IO[bytes], encoding: str) -> None:
        self._stream = stream
        self._decoder = codecs.getincrementaldecoder(encoding)(errors="replace")
        self.buf = ""
        self.pos = 0
        self.eof = False
        self._dropped_lines = 0

    def more(self) -> bool:
        if self.eof:
            return False
        chunk = self._stream.read(_CHUNK)
        text = self._decoder.decode(chunk or b"", final=not chunk)
        if not chunk:
            self.eof = True
        if self.pos:
            self._dropped_lines += _line_ends(self.buf, 0, self.pos)
            self.buf = self.buf[self.pos:]
            self.pos = 0
        self.buf += text
        return bool(text) or not self.eof

    def skip_ws(self) -> str:
        """The next non-space character ('' at the end), keeping ``pos`` on it."""
        while True:
            self.pos = _WS.match(self.buf, self.pos).end()  # type: ignore[union-attr]  # always matches
            if self.pos < len(self.buf):
                return self.buf[self.pos]
            if not self.more():
                return ""

    def line(self) -> int:
        return self._dropped_lines + _line_ends(self.buf, 0, self.pos) + 1

    def decode(self, max_record: int) -> tuple[Any, str | None]:
        """One JSON value at ``pos`` (reading more text as needed), or a problem."""
        while True:
            try:
                value, end = _DECODER.raw_decode(self.buf, self.pos)
            except json.JSONDecodeError as exc:
                # the value may simply be cut by the window's end: read on, up to max_record
                if not self.eof and len(self.buf) - self.pos <= max_record:
                    self.more()
                    continue
                if len(self.buf) - self.pos > max_record:
                    return None, f"a record is longer than {max_record} characters"
                return None, f"{exc.msg} (line {exc.lineno + self._dropped_lines})"
            if end >= len(self.buf) and not self.eof and isinstance(value, int | float):
                # a number at the end of the window may continue in the next chunk
                self.more()
                continue
            self.pos = end
            return value, None

    def resync(self, pattern: re.Pattern[str]) -> bool:
        """Move past the next match of ``pattern``; False at the end of input."""
        while True:
            match = pattern.search(self.buf, self.pos + 1)
            if match:
                self.pos = match.end()
                return True
            if self.eof:
                self.pos = len(self.buf)
                return False
            keep = max(self.pos, len(self.buf) - 64)  # a match may straddle two chunks
            self.pos = keep
            self.more()


def iter_json_records(stream: IO[bytes], encoding: str, max_record: int) -> Iterator[JsonItem]:
    text = _Text(stream, encoding)
    if text.skip_ws() == "\ufeff":
        text.pos += 1
    first = text.skip_ws()
    if first == "[":
        text.pos += 1
        yield from _list(text, "", max_record)
    elif first == "{":
        yield from _object_or_ndjson(text, max_record)
    elif first:
        yield JsonItem(text.line(), "", problem="expected a list of circuits, an object with "
                       "'circuits', or one JSON object per line", code="bad_document")


def _list(text: _Text, prefix: str, max_record: int, kind: str = "circuit") -> Iterator[JsonItem]:
    index = 0
    while True:
        char = text.skip_ws()
        if char == "]":
            text.pos += 1
            return
        if char == "":
            yield JsonItem(text.line(), prefix, problem="the list is not closed with ']'")
            return
        if char == "," and index:
            text.pos += 1
            continue
        line, pointer = text.line(), f"{prefix}/{index}"
        value, problem = text.decode(max_record)
        if problem is not None:
            yield JsonItem(line, pointer, problem=problem, kind=kind)
            if not text.resync(_RESYNC_LIST):
                return
        else:
            yield JsonItem(line, pointer, value, kind=kind)
        index += 1


def _object_or_ndjson(text: _Text, max_record: int) -> Iterator[JsonItem]:
    """A document ``{"circuits": [...], ...}`` if its first key is not a record field, else NDJSON."""
    start = text.pos
    text.pos += 1
    text.skip_ws()
    key, problem = text.decode(max_record) if text.buf[text.pos:text.pos + 1] == '"' else (None, "")
    if isinstance(key, str) and problem is None and key not in _RECORD_KEYS:
        yield from _document(text, key, max_record)
        if text.skip_ws():  # objects after the document: NDJSON whose first line was a site document
            yield from _ndjson(text, max_record)
        return
    text.pos = start
    yield from _ndjson(text, max_record)


def _document(text: _Text, key: str, max_record: int) -> Iterator[JsonItem]:
    while True:
        if text.skip_ws() != ":":
            yield JsonItem(text.line(), "", problem="expected ':' after a key", code="bad_document")
            return
        text.pos += 1
        if key in _STREAMED and text.skip_ws() == "[":
            text.pos += 1
            yield from _list(text, f"/{key}", max_record, _STREAMED[key])
        elif key == "installation":
            text.skip_ws()
            line = text.line()
            value, problem = text.decode(max_record)
            if problem is not None:
                yield JsonItem(line, "/installation", problem=problem, code="bad_document")
                return
            yield JsonItem(line, "/installation", value, kind="installation")
        else:
            text.skip_ws()
            line = text.line()
            _value, problem = text.decode(max_record)  # other members (ruleset …) are the caller's
            if problem is not None:
                yield JsonItem(text.line(), f"/{key}", problem=problem, code="bad_document")
                return
            if key in _STREAMED:
                yield JsonItem(line, f"/{key}", problem=f"{key} must be a list of objects",
                               code="bad_document")
        char = text.skip_ws()
        if char == "}":
            text.pos += 1
            return
        if char == "":
            return
        if char != ",":
            yield JsonItem(text.line(), "", problem="expected ',' or '}'", code="bad_document")
            return
        text.pos += 1
        text.skip_ws()
        key, problem = text.decode(max_record)
        if problem is not None or not isinstance(key, str):
            yield JsonItem(text.line(), "", problem="expected a member name", code="bad_document")
            return


_NEWLINE = re.compile(r"\r\n?|\n")


def _ndjson(text: _Text, max_record: int) -> Iterator[JsonItem]:
    while text.skip_ws():
        line = text.line()
        value, problem = text.decode(max_record)
        if problem is not None:
            yield JsonItem(line, "", problem=problem)
            if not text.resync(_NEWLINE):
                return
        else:
            yield JsonItem(line, "", value)
