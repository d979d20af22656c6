"""JSON text read strictly: every way a document could hurt the server, or be read wrongly, is
refused with an RFC 6901 pointer before anything is built from it.

Invariants:
- Nesting: at most :data:`MAX_DEPTH` arrays/objects deep. The depth is measured on the raw
  bytes (strings and escapes removed, C-speed) *before* parsing, and it is never less than the
  depth the parser would reach, so the parser never recurses past it (a 1,000-deep document
  was a ``RecursionError``, a 500).
- Size of what parsing builds: at most ``max_rows + 64`` arrays/objects and
  ``max_rows × (fields + 2) + 64`` values, counted on the same skeleton before parsing, so a
  16 MiB body of ``{}`` or ``1.5,`` cannot grow into hundreds of MB (413 ``too_many_values``).
- Numbers: integers are kept exact and lie within ±(2**53 − 1), the range every JSON
  implementation holds exactly (RFC 8259 §6; RFC 7493 §2.2); other numbers are finite doubles.
  A 5,000-digit integer, ``1e400`` and ``2**64`` are refused (``number_out_of_range``), never
  turned into a float or infinity; ``NaN`` and ``Infinity`` are not JSON (RFC 8259 §6).
- Member names are unique within an object (RFC 7493 §2.3): a repeat is ``duplicate_member``
  at the repeated member's pointer, never "last one wins".
- Strings and names hold no U+0000 (PostgreSQL text cannot store it: ``nul_character``) and no
  lone surrogate such as ``"\\ud800"`` (no character; not encodable as UTF-8: ``lone_surrogate``).
- Cost: one C-speed parse. Python-level hooks run only where a cheap scan of the bytes says a
  number may be out of range; the walk that finds pointers runs only when something was flagged.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from itertools import accumulate
from typing import Any

from api.errors import escape_pointer
from engine import FIELDS

__all__ = [
    "MAX_DEPTH",
    "SAFE_INTEGER",
    "JsonSyntaxError",
    "Parsed",
    "parse_strict",
    "parser_hazard",
    "precheck",
    "value_bounds",
]

MAX_DEPTH = 64  # our documents nest 3 deep ({"circuits": [{...}]}); 64 leaves room, 1,000 does not
SAFE_INTEGER = 2**53 - 1  # RFC 7493 §2.2: integers in [-(2**53)+1, 2**53-1] are exact everywhere
_MAX_PROBLEMS = 100  # listed in one answer; a client fixes the first and sends again

_ESCAPES = re.compile(rb"\\.", re.DOTALL)
_STRINGS = re.compile(rb'"[^"]*"')
_NOT_STRUCTURE = bytes(sorted(set(range(256)) - set(b'[]{}",')))
_DELTA = [0] * 256
_DELTA[ord("[")] = _DELTA[ord("{")] = 1
_DELTA[ord("]")] = _DELTA[ord("}")] = -1
_RISKY_NUMBER = re.compile(rb"\d{16,}|[eE][+-]?\d{3,}")  # may be out of range: parse with hooks
_SUSPECT_ESCAPE = re.compile(rb"\\u(?:0000|[dD][89a-fA-F])")  # NUL or a surrogate half, escaped
_HUGE_DIGITS = re.compile(rb"\d{4000}")  # near int()'s 4,300-digit limit: a ValueError, not a number
_TOKENS = re.compile(rb'"(?:[^"\\]|\\.)*"|[\[\]{},:]', re.DOTALL)


class JsonSyntaxError(ValueError):
    """The text is not JSON at all (the parser's own message, line and column)."""

    def __init__(self, msg: str, line: int, column: int) -> None:
        super().__init__(f"{msg} at line {line} column {column}")
        self.msg, self.line, self.column = msg, line, column


@dataclass(slots=True)
class Parsed:
    """A parsed value, or the problems that refuse it (each ``{pointer, code, reason}``)."""

    value: Any = None
    problems: list[dict[str, Any]] = field(default_factory=list)
    too_large: bool = False  # the problems are about size (413), not content (422)


@dataclass(frozen=True, slots=True)
class _Refused:
    """Stands in for a number that may not be taken, until the walk gives it a pointer."""

    text: str
    code: str
    reason: str


class _Duplicated(dict[str, Any]):
    """An object that had a member name twice; ``repeated`` lists them in order."""

    repeated: list[str]


def value_bounds(max_rows: int) -> tuple[int, int]:
    """(arrays/objects, values) one body may hold: a row is one object of at most every field."""
    return max_rows + 64, max_rows * (len(FIELDS) + 2) + 64


def _skeleton(raw: bytes) -> bytes:
    """``raw`` with escapes and strings removed: only ``[]{},`` outside strings remain."""
    return _STRINGS.sub(b"", _ESCAPES.sub(b"", raw).translate(None, _NOT_STRUCTURE))


class _Hooks:
    """The parser's hooks for one parse: they flag what the walk must then find."""

    def __init__(self) -> None:
        self.flagged = False

    def pairs(self, pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        out = dict(pairs)
        if len(out) != len(pairs):
            seen: set[str] = set()
            marked = _Duplicated(pairs)
            marked.repeated = [k for k, _v in pairs if k in seen or seen.add(k)]  # type: ignore[func-returns-value]
            self.flagged = True
            return marked
        return out

    def integer(self, text: str) -> Any:
        digits = len(text) - text.startswith("-")
        if digits > 16 or abs(int(text)) > SAFE_INTEGER:
            self.flagged = True
            return _Refused(text if len(text) <= 40 else text[:20] + "…" + text[-8:],
                            "number_out_of_range", f"an integer of {digits} digits; integers must lie "
                            f"within ±{SAFE_INTEGER} (2^53 − 1) to be exact in every JSON reader")
        return int(text)

    def real(self, text: str) -> Any:
        value = float(text)
        if value in (float("inf"), float("-inf")):
            self.flagged = True
            return _Refused(text[:40], "number_out_of_range", "a number beyond the range of a double")
        return value

    def constant(self, text: str) -> Any:
        self.flagged = True
        return _Refused(text, "not_a_number", f"{text} is not a JSON number (RFC 8259 §6)")


def parse_strict(raw: bytes, text: str, *, max_rows: int, prechecked: bool = False) -> Parsed:
    """Parse ``text`` (the decoded ``raw``); raise :class:`JsonSyntaxError` if it is not JSON.

    ``prechecked``: the caller already ran :func:`precheck` on a body holding ``raw`` (NDJSON lines).
    """
    if not prechecked:
        refused = precheck(raw, max_rows=max_rows)
        if refused is not None:
            return refused
    hooks = _Hooks()
    risky = _RISKY_NUMBER.search(raw) is not None  # else the C parser's own int/float are exact and finite
    integer: Callable[[str], Any] | None = hooks.integer if risky else None
    real: Callable[[str], Any] | None = hooks.real if risky else None
    try:
        value = json.loads(text, object_pairs_hook=hooks.pairs, parse_constant=hooks.constant,
                           parse_int=integer, parse_float=real)
    except json.JSONDecodeError as exc:
        raise JsonSyntaxError(exc.msg, exc.lineno, exc.colno) from None
    if hooks.flagged or _SUSPECT_ESCAPE.search(raw):
        return Parsed(value=value, problems=_walk(value))
    return Parsed(value=value)


def precheck(raw: bytes, *, max_rows: int) -> Parsed | None:
    """Refuse, before parsing, a body that would build too much or nest too deep; ``None`` if fine."""
    skeleton = _skeleton(raw)
    most_containers, most_values = value_bounds(max_rows)
    containers = skeleton.count(b"[") + skeleton.count(b"{")
    values = containers + skeleton.count(b",")
    if containers > most_containers or values > most_values:
        what = (f"{containers} arrays/objects (at most {most_containers})" if containers > most_containers
                else f"about {values} values (at most {most_values})")
        return Parsed(too_large=True, problems=[{
            "pointer": "", "code": "too_many_values",
            "reason": f"the document holds {what}: OHMTALLY_MAX_ROWS rows of every field"}])
    if _too_deep(skeleton, containers):
        pointer, offset = _deep_point(raw)
        line = raw.count(b"\n", 0, offset) + 1
        return Parsed(problems=[{"pointer": pointer, "code": "too_deep", "line": line,
                                 "reason": f"nested more than {MAX_DEPTH} arrays/objects deep"}])
    return None


def _too_deep(skeleton: bytes, containers: int) -> bool:
    if containers <= MAX_DEPTH:
        return False
    brackets = skeleton.translate(None, b",")
    return max(accumulate(map(_DELTA.__getitem__, brackets)), default=0) > MAX_DEPTH


def parser_hazard(raw: bytes) -> str | None:
    """Why a plain JSON parser must not be given ``raw`` (a syntax-broken text it would still
    recurse into or convert): nesting past :data:`MAX_DEPTH`, or a digit run past Python's
    integer-conversion limit. ``None``: any parser fails on it cleanly, or reads it."""
    skeleton = _skeleton(raw)
    if _too_deep(skeleton, skeleton.count(b"[") + skeleton.count(b"{")):
        return f"nested more than {MAX_DEPTH} arrays/objects deep"
    if _HUGE_DIGITS.search(raw):
        return "holds a number of thousands of digits"
    return None


def _text_problem(text: str) -> tuple[str, str] | None:
    if "\x00" in text:
        return "nul_character", "holds U+0000 (NUL), which no text field can store"
    if any("\ud800" <= ch <= "\udfff" for ch in text):
        return "lone_surrogate", "holds a lone surrogate (an escape such as \\ud800 that is no character)"
    return None


def _walk(document: Any) -> list[dict[str, Any]]:
    """Every refused value, repeated name and bad string, in document order, with its pointer."""
    problems: list[dict[str, Any]] = []
    stack: list[tuple[Any, str]] = [(document, "")]
    while stack and len(problems) < _MAX_PROBLEMS:
        value, pointer = stack.pop()
        if isinstance(value, _Refused):
            problems.append({"pointer": pointer, "code": value.code, "reason": value.reason,
                             "text": value.text})
        elif isinstance(value, str):
            found = _text_problem(value)
            if found:
                problems.append({"pointer": pointer, "code": found[0], "reason": f"the string {found[1]}"})
        elif isinstance(value, dict):
            for name in getattr(value, "repeated", ()):
                problems.append({"pointer": f"{pointer}/{_shown(name)}", "code": "duplicate_member",
                                 "reason": "this member name appears more than once in its object"})
            children = []
            for name, item in value.items():
                where = f"{pointer}/{_shown(name)}"
                found = _text_problem(name)
                if found:
                    problems.append({"pointer": where, "code": found[0],
                                     "reason": f"the member name {found[1]}"})
                children.append((item, where))
            stack.extend(reversed(children))
        elif isinstance(value, list):
            stack.extend(reversed([(item, f"{pointer}/{i}") for i, item in enumerate(value)]))
    return problems[:_MAX_PROBLEMS]


def _shown(name: str) -> str:
    """A member name as a pointer token; NUL and lone surrogates written as ``\\u…`` escapes, so the
    pointer itself can be stored and encoded."""
    if _text_problem(name) is None:
        return escape_pointer(name)
    return escape_pointer("".join(f"\\u{ord(ch):04x}" if ch == "\x00" or "\ud800" <= ch <= "\udfff" else ch
                                  for ch in name))


def _deep_point(raw: bytes) -> tuple[str, int]:
    """The pointer and byte offset of the first array/object nested deeper than :data:`MAX_DEPTH`.

    A token walk in Python, run only to explain a refusal, and only as far as that point.
    """
    stack: list[list[Any]] = []  # per open container: [is_array, index or name, expecting a name]
    for match in _TOKENS.finditer(raw):
        token = match.group()
        if token in (b"[", b"{"):
            if len(stack) >= MAX_DEPTH:
                return "".join("/" + (str(s[1]) if s[0] else _shown(s[1])) for s in stack), match.start()
            stack.append([token == b"[", 0 if token == b"[" else "", token == b"{"])
        elif token in (b"]", b"}"):
            if stack:
                stack.pop()
        elif token == b",":
            if stack and stack[-1][0]:
                stack[-1][1] += 1
            elif stack:
                stack[-1][2] = True
        elif token.startswith(b'"') and stack and not stack[-1][0] and stack[-1][2]:
            try:
                stack[-1][1] = json.loads(token.decode("utf-8", "replace"))
            except ValueError:
                stack[-1][1] = token.decode("utf-8", "replace").strip('"')
            stack[-1][2] = False
    return "", len(raw)
