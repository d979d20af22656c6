"""Limits of a body read line by line (CSV, key=value lines, NDJSON), checked on its bytes before
any adapter parses it: the longest line, and how many lines there are.

Invariants:
- A line ends at CR, LF or CRLF: every line end the adapters accept (a CRLF is one end), so a
  CR-only CSV is as many lines as it has rows, never one "line too long".
- The checks are identical for every media type, adapter and transfer encoding: they see the
  bytes the body reader kept (``api.http.limits``), nothing else.
- Counting is C-speed (``bytes.count``; one ``re.split`` only once the count is within the
  limit), so a body far over the line limit costs milliseconds, not a parse (a 1M-row CSV sent
  as ``application/csv`` took 14 s and +365 MB before its 413).
- A body in UTF-16 or UTF-32 (by byte-order mark or zero bytes) is scanned as the text it
  holds, re-encoded as UTF-8, so its two-byte line ends count once.
- Refusals are 413 problems naming the limit and the line (``line_too_long``, ``too_many_rows``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from adapters.encoding import sniff_unicode
from api.errors import ApiError

__all__ = ["BodyLimits", "as_utf8", "line_count", "scan_lines"]

_LINE_END = re.compile(rb"\r\n|\r|\n")


@dataclass(frozen=True, slots=True, kw_only=True)
class BodyLimits:
    """What one body may hold (``OHMTALLY_MAX_UPLOAD_BYTES``, ``_MAX_ROWS``, ``_MAX_LINE_BYTES``,
    ``_MAX_VALUES``: field values across all its rows, which bound the work of one post)."""

    max_bytes: int
    max_rows: int
    max_line_bytes: int
    max_values: int = 100_000


def line_count(body: bytes) -> int:
    """Lines in ``body``: CR, LF and CRLF each end one; a last line without an end counts too."""
    if not body:
        return 0
    ends = body.count(b"\n") + body.count(b"\r") - body.count(b"\r\n")
    return ends + (0 if body.endswith((b"\n", b"\r")) else 1)


def as_utf8(body: bytes, charset: str | None) -> bytes:
    """``body`` itself, or for a UTF-16/32 body (byte-order mark, zero bytes, or its declared
    charset) the same text as UTF-8: the form the line and JSON screens read."""
    wide = (charset or "").lower().replace("_", "-")
    found = sniff_unicode(body[:4096])
    encoding = found if found else (wide if wide.startswith(("utf-16", "utf-32")) else None)
    if encoding is None or encoding in ("utf-8", "utf-8-sig"):
        return body
    return body.decode(encoding, "replace").encode("utf-8")


def scan_lines(body: bytes, limits: BodyLimits, *, charset: str | None = None) -> None:
    """413 if ``body`` has more lines than rows allowed (+1: a CSV header is not a row) or a line
    longer than allowed; the first line past a limit is named."""
    text = as_utf8(body, charset)
    lines = line_count(text)
    if lines > limits.max_rows + 1:
        first = limits.max_rows + 2
        raise ApiError(413, "too_many_rows", f"the body has {lines} lines; the most one body may carry "
                       f"is {limits.max_rows} rows and a header (OHMTALLY_MAX_ROWS); split it into "
                       "several posts",
                       errors=[{"line": first, "code": "too_many_rows",
                                "reason": f"more than {limits.max_rows} rows"}])
    most = limits.max_line_bytes
    lengths = [len(line) for line in _LINE_END.split(text)]
    if lengths and max(lengths) > most:
        number = next(i for i, n in enumerate(lengths) if n > most) + 1
        raise ApiError(413, "line_too_long", f"line {number} is {lengths[number - 1]} bytes; the most a "
                       f"line may hold is {most} (OHMTALLY_MAX_LINE_BYTES)",
                       errors=[{"line": number, "code": "line_too_long",
                                "reason": f"longer than {most} bytes"}])
