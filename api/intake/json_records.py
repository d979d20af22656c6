"""JSON read through the ``json`` adapter (NDJSON lines, or a list / ``{"circuits": [...]}``),
screened at the API boundary before the adapter parses it.

Invariants:
- The adapter parses with Python's ``json``, which recurses into any nesting, converts a
  5,000-digit integer (``ValueError``) and keeps the last of two equal member names. Whatever
  the adapter does, the API never hands it a text that can make it raise: every body is
  screened here with :func:`api.intake.json_document.parse_strict` first.
- NDJSON (a body whose first record starts with a record field, as the adapter decides) is
  screened line by line (CR, LF, CRLF): a line refused by the screen (too deep, a number out of
  range, a repeated member name, NUL, a lone surrogate) is one rejected entry with its line and
  pointer, and the adapter is given the body with that line blanked (spaces, same length), so
  the good lines beside it are taken and every line keeps its number. A line that is merely
  malformed is left to the adapter, which reports it, unless it is a parser hazard.
- A document (a list, or an object of members such as ``circuits``) is screened whole, like a
  typed JSON body: a refused document is refused whole (422 with the pointer), since a program
  wrote it; a malformed one is left to the adapter (it resynchronises at the next record) unless
  it is a parser hazard (422).
- Size: the body's arrays/objects and values are bounded before anything is parsed (413).
"""

from __future__ import annotations

import json
import re
from typing import Any

from api.errors import ApiError
from api.intake.json_document import JsonSyntaxError, parse_strict, parser_hazard, precheck
from api.intake.line_scan import BodyLimits
from engine import FIELDS

__all__ = ["screen_json_records"]

_CONTENT = re.compile(rb"[^\r\n]+")
_FIRST_KEY = re.compile(rb'^(?:\xef\xbb\xbf)?[ \t\r\n]*\{[ \t\r\n]*("(?:[^"\\]|\\.)*")')


def _is_ndjson(body: bytes) -> bool:
    """The adapter's own rule: an object whose first member is a record field starts NDJSON."""
    found = _FIRST_KEY.match(body)
    if found is None:
        return False
    try:
        return json.loads(found.group(1).decode("utf-8", "replace")) in FIELDS
    except ValueError:
        return False


def _refusal(problems: list[dict[str, Any]], too_large: bool) -> ApiError:
    if too_large:
        return ApiError(413, "too_many_values", problems[0]["reason"], errors=problems)
    return ApiError(422, "invalid_json", f"the JSON document has {len(problems)} problem(s); nothing "
                    "was taken (a document is read whole)", errors=problems)


def screen_json_records(body: bytes, limits: BodyLimits) -> tuple[bytes, list[dict[str, Any]]]:
    """(the bytes the adapter may read, the entries the screen rejected); or the refusal."""
    refused = precheck(body, max_rows=limits.max_rows)
    if refused is not None and (refused.too_large or not _is_ndjson(body)):
        raise _refusal(refused.problems, refused.too_large)
    if not _is_ndjson(body):
        text = body.decode("utf-8-sig", "replace")
        try:
            parsed = parse_strict(body, text, max_rows=limits.max_rows, prechecked=True)
        except JsonSyntaxError as exc:
            hazard = parser_hazard(body)
            if hazard is not None:
                raise ApiError(422, "invalid_json", f"the JSON document is malformed ({exc}) and "
                               f"{hazard}", errors=[{"pointer": "", "line": exc.line, "code": "invalid_json",
                                                     "reason": hazard}]) from None
            return body, []  # malformed but harmless: the adapter reports it record by record
        if parsed.problems:
            raise _refusal(parsed.problems, parsed.too_large)
        return body, []
    return _screen_lines(body, limits, deep=refused is not None)


def _screen_lines(body: bytes, limits: BodyLimits, *, deep: bool) -> tuple[bytes, list[dict[str, Any]]]:
    lines: list[tuple[int, int, int]] = []  # (line number, start, end) of each line with content
    number, position = 1, 0
    for match in _CONTENT.finditer(body):
        start, end = match.span()
        number += (body.count(b"\n", position, start) + body.count(b"\r", position, start)
                   - body.count(b"\r\n", position, start))  # CR, LF and CRLF each end a line
        position = start
        if body[start:end].strip():
            lines.append((number, start, end))
    found = None if deep else _screen_at_once(body, lines, limits)
    if found is None:
        found = {number: _line_problems(body[start:end], limits, deep=deep) for number, start, end in lines}
    if not any(found.values()):
        return body, []
    kept = bytearray(body)
    rejected: list[dict[str, Any]] = []
    for number, start, end in lines:
        problems = found.get(number)
        if problems:
            rejected.extend({**problem, "line": number} for problem in problems)
            kept[start:end] = b" " * (end - start)
    return bytes(kept), rejected


def _screen_at_once(body: bytes, lines: list[tuple[int, int, int]],
                    limits: BodyLimits) -> dict[int, list[dict[str, Any]]] | None:
    """Every line parsed in one call, as the elements of one array (C-speed; ~20 µs a line one
    by one); ``None`` when that cannot tell the lines apart (a malformed line): then line by line."""
    joined = b"[" + b",".join(body[start:end] for _number, start, end in lines) + b"]"
    try:
        parsed = parse_strict(joined, joined.decode("utf-8", "replace").replace("\ufeff", " ", 1),
                              max_rows=limits.max_rows, prechecked=True)
    except JsonSyntaxError:
        return None
    if not isinstance(parsed.value, list) or len(parsed.value) != len(lines):
        return None
    found: dict[int, list[dict[str, Any]]] = {}
    for problem in parsed.problems:
        index, _slash, rest = problem["pointer"].lstrip("/").partition("/")
        number = lines[int(index)][0]
        found.setdefault(number, []).append({**problem, "pointer": "/" + rest if rest else ""})
    return found


def _line_problems(line: bytes, limits: BodyLimits, *, deep: bool) -> list[dict[str, Any]]:
    try:
        parsed = parse_strict(line, line.decode("utf-8-sig", "replace"), max_rows=limits.max_rows,
                              prechecked=not deep)
    except JsonSyntaxError:
        hazard = parser_hazard(line)
        return [{"pointer": "", "code": "invalid_json", "reason": hazard}] if hazard else []
    return parsed.problems
