"""ohmtally's own line format: ``key=value`` pairs, with an optional checksum suffix.

Format (one reading line)::

    board=DB1 circuit=3 zs=0.82Ω r1+r2=0.41 "ir l-e"=">999 MΩ" desc="Kitchen ring" *4F2A

- pairs are separated by spaces, tabs or ``;``; spaces around ``=`` are allowed;
- a key is a field name or any alias of :mod:`adapters.aliases`; a key with
  spaces, or a value with spaces or ``;``, is quoted with ``"…"`` (``\\"``
  inside) or ``'…'``;
- a value may carry its unit (``zs=350mΩ``), else it is in the field's unit;
- a line starting with ``#`` is a comment, except one starting with ``#%``:
  a directive, ``#% decimal=comma``, ``#% board=DB2 circuit=4`` (the lines
  adapter's reader says what each key does);
- a line starting with the word ``installation`` states the installation's
  facts (``installation earthing=TT ra=62``); a line naming a ``board`` and
  no ``circuit`` states that board's facts (``board=DB2 zdb=0.41``).

Checksum (optional): the line ends with ``*`` and four hex digits, the
CRC-16/CCITT-FALSE (polynomial 0x1021, initial value 0xFFFF, no reflection, no
final XOR; ``binascii.crc_hqx(data, 0xFFFF)``) of the line's bytes before the
``*``, with spaces and tabs just before the ``*`` left out. Upper or lower case
hex is accepted. A line whose checksum does not match is rejected on its own.

Invariants: pure functions of the line's bytes or text; nothing here raises
for any input (:func:`parse_pairs` returns a problem instead).
"""

from __future__ import annotations

import binascii
import re
from dataclasses import dataclass

__all__ = [
    "DIRECTIVE",
    "ChecksumResult",
    "PairsResult",
    "append_checksum",
    "check_suffix",
    "check_text_suffix",
    "checksum",
    "format_pairs",
    "parse_pairs",
]

DIRECTIVE = "#%"  # a line starting so declares how the lines after it read (see the adapters README)

_SUFFIX = re.compile(rb"\*([0-9A-Fa-f]{4})[ \t]*$")
_TEXT_SUFFIX = re.compile(r"\*([0-9A-Fa-f]{4})[ \t]*$")
_PAIR = re.compile(
    r"""(?P<key>"(?:[^"\\]|\\.)*"|'[^']*'|[^\s;="']+)\s*=\s*
        (?P<value>"(?:[^"\\]|\\.)*"|'[^']*'|[^\s;"']*)""",
    re.VERBOSE,
)
_SEPARATORS = re.compile(r"[ \t;]*")
_UNESCAPE = re.compile(r"\\(.)")


def checksum(payload: bytes) -> str:
    """The four upper-case hex digits of CRC-16/CCITT-FALSE over ``payload``."""
    return f"{binascii.crc_hqx(payload, 0xFFFF):04X}"


def append_checksum(line: str, encoding: str = "utf-8") -> str:
    """``line`` with its checksum suffix: what a logger writing our format sends."""
    payload = line.rstrip(" \t")
    return f"{payload} *{checksum(payload.encode(encoding))}"


@dataclass(frozen=True, slots=True)
class ChecksumResult:
    payload: bytes  # the line without the suffix
    present: bool
    ok: bool
    given: str | None = None
    expected: str | None = None


def check_suffix(raw: bytes) -> ChecksumResult:
    """Split off and verify a checksum suffix; a line without one is ``present=False, ok=True``."""
    match = _SUFFIX.search(raw)
    if match is None:
        return ChecksumResult(raw, present=False, ok=True)
    payload = raw[: match.start()].rstrip(b" \t")
    given = match.group(1).decode("ascii").upper()
    expected = checksum(payload)
    return ChecksumResult(payload, present=True, ok=given == expected, given=given, expected=expected)


def check_text_suffix(text: str, encoding: str) -> tuple[str, ChecksumResult]:
    """:func:`check_suffix` for a line decoded before splitting (UTF-16): the sum is over its bytes."""
    match = _TEXT_SUFFIX.search(text)
    if match is None:
        return text, ChecksumResult(b"", present=False, ok=True)
    payload = text[: match.start()].rstrip(" \t")
    given = match.group(1).upper()
    expected = checksum(payload.encode(encoding))
    return payload, ChecksumResult(b"", present=True, ok=given == expected, given=given, expected=expected)


@dataclass(frozen=True, slots=True)
class PairsResult:
    pairs: list[tuple[str, str]]
    problem: str | None = None
    column: int | None = None  # 1-based column of the problem


def _unquote(token: str) -> str:
    if len(token) >= 2 and token[0] == token[-1] == '"':
        return _UNESCAPE.sub(r"\1", token[1:-1])
    if len(token) >= 2 and token[0] == token[-1] == "'":
        return token[1:-1]
    return token


def parse_pairs(text: str) -> PairsResult:
    """The ``(key, value)`` pairs of one line, in order, or where the syntax breaks."""
    pairs: list[tuple[str, str]] = []
    pos = _SEPARATORS.match(text, 0).end()  # type: ignore[union-attr]  # [ \t;]* always matches
    end = len(text)
    while pos < end:
        match = _PAIR.match(text, pos)
        if match is None:
            return PairsResult(pairs, f"expected key=value at column {pos + 1}", pos + 1)
        pairs.append((_unquote(match.group("key")), _unquote(match.group("value"))))
        after = match.end()
        sep = _SEPARATORS.match(text, after).end()  # type: ignore[union-attr]
        if sep == after and after < end:
            return PairsResult(pairs, f"expected a space, tab or ';' at column {after + 1}", after + 1)
        pos = sep
    return PairsResult(pairs)


_NEEDS_QUOTES = re.compile(r"""[\s;="'\\]""")


def _quoted(token: str) -> str:
    if token and not _NEEDS_QUOTES.search(token):
        return token
    if not token:
        return '""'
    return '"' + token.replace("\\", "\\\\").replace('"', '\\"') + '"'


def format_pairs(pairs: list[tuple[str, str]]) -> str:
    """``key=value`` pairs written so that :func:`parse_pairs` reads them back exactly."""
    return " ".join(f"{_quoted(key)}={_quoted(value)}" for key, value in pairs)
