"""The ``lines`` adapter: text lines from a serial port or logger → record fragments.

Invariants (beyond those of :mod:`adapters.base`):
- Lines are split on bytes (CR, LF, CRLF) before anything else, so every fault
  — a bad checksum, a byte that does not decode, a stray control byte, a line
  too long, a syntax error — costs that one line only.
- Order of checks per line: length, checksum (on the raw bytes, as sent),
  decoding, control bytes, then the format (ours or a regex profile).
- ``board`` and ``circuit`` are sticky: once given (on a context line of their
  own, or on a reading line) they hold for the lines after it until given
  again. Giving a new board forgets the circuit unless the same line gives one.
- A line with only ``board``/``circuit`` is a context line (:class:`Skipped`).
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Iterator
from typing import IO, Any, ClassVar

from .aliases import field_for_label
from .base import AdapterOptions, Fragment, LineError, Result, Skipped
from .cells import CellParser, CellProblem
from .encoding import checked_encoding
from .line_format import check_suffix, parse_pairs
from .line_profiles import CompiledLineProfile, compile_line_profile
from .line_split import iter_split_lines
from .profiles import RegexProfile, get_profile

__all__ = ["LinesAdapter"]

# C0 controls other than TAB, and DEL: noise on a serial line, never part of a reading
_CONTROL = re.compile(r"[\x00-\x08\x0a-\x1f\x7f]")


class LinesAdapter:
    name: ClassVar[str] = "lines"
    description: ClassVar[str] = ("Text lines from a serial port or logger: ohmtally's key=value line "
                                  "format with optional CRC-16 checksum, or regex line profiles")
    media_types: ClassVar[tuple[str, ...]] = ("text/plain",)
    extensions: ClassVar[tuple[str, ...]] = (".txt", ".log")

    def read(self, stream: IO[bytes], options: AdapterOptions) -> Iterator[Result]:
        profile: RegexProfile | None = None
        if options.profile:
            found = get_profile(options.profile, kind="regex", profile_dir=options.profile_dir)
            assert isinstance(found, RegexProfile)
            profile = found
        encoding = checked_encoding(options.encoding) or (profile.encoding if profile else None) or "utf-8"
        decimal_comma = bool(options.decimal_comma if options.decimal_comma is not None
                             else profile is not None and profile.decimal == ",")
        parser = _LineParser(decimal_comma=decimal_comma,
                             compiled=compile_line_profile(profile, decimal_comma=decimal_comma)
                             if profile else None,
                             comment=profile.comment if profile else "#",
                             defaults=dict(profile.defaults) if profile else {})
        number = 0
        for split in iter_split_lines(stream, options.max_line_length):
            number += 1
            raw = split.data
            if number == 1 and raw.startswith(codecs.BOM_UTF8):
                raw = raw[len(codecs.BOM_UTF8):]
            if split.overlong:
                yield LineError(line=number, code="line_too_long",
                                reason=f"the line is longer than {options.max_line_length} bytes")
                continue
            yield from parser.line(number, raw, encoding)


class _LineParser:
    def __init__(self, *, decimal_comma: bool, compiled: CompiledLineProfile | None, comment: str,
                 defaults: dict[str, str]) -> None:
        self.decimal_comma = decimal_comma
        self.compiled = compiled
        self.comment = comment
        self.board: str | None = defaults.get("board")
        self.circuit: str | None = defaults.get("circuit")
        self.parsers: dict[str, CellParser] = {}

    def line(self, number: int, raw: bytes, encoding: str) -> Iterator[Result]:
        check = check_suffix(raw)
        if not check.ok:
            yield LineError(line=number, code="bad_checksum", text=_show(raw),
                            reason=f"checksum {check.given} does not match the line "
                                   f"(expected {check.expected})")
            return
        try:
            text = check.payload.decode(encoding)
        except UnicodeDecodeError as exc:
            yield LineError(line=number, code="bad_encoding", text=_show(raw),
                            reason=f"byte {check.payload[exc.start]:#04x} at column {exc.start + 1} "
                                   f"is not valid {encoding}")
            return
        control = _CONTROL.search(text)
        if control:
            yield LineError(line=number, code="control_bytes", text=_show(raw),
                            reason=f"control byte {ord(control.group()):#04x} "
                                   f"at column {control.start() + 1}")
            return
        stripped = text.strip()
        if not stripped:
            yield Skipped(line=number, reason="blank")
        elif self.comment and stripped.startswith(self.comment):
            yield Skipped(line=number, reason="comment")
        elif self.compiled is not None:
            yield from self._regex(number, stripped)
        else:
            yield from self._pairs(number, stripped)

    def _parser(self, name: str, unit: str | None) -> CellParser:
        key = f"{name}\x00{unit or ''}"
        parser = self.parsers.get(key)
        if parser is None:
            parser = CellParser(name, unit=unit, decimal_comma=self.decimal_comma)
            if len(self.parsers) < 1024:
                self.parsers[key] = parser
        return parser

    def _set_context(self, board: str | None, circuit: str | None) -> None:
        if board is not None and board != self.board:
            self.board, self.circuit = board, None
        if circuit is not None:
            self.circuit = circuit

    def _emit(self, number: int, values: list[tuple[str, str, CellParser]], errors: list[LineError],
              had_keys: bool) -> Iterator[Result]:
        fields: dict[str, Any] = {}
        for name, raw, parser in values:
            value = parser.parse(raw)
            if value is None:
                continue
            if type(value) is CellProblem:
                errors.append(LineError(line=number, code="bad_value", field=name, text=value.text,
                                        reason=value.reason))
            else:
                fields[name] = value
        if not values and not errors and had_keys:
            yield Skipped(line=number, reason="context")
            return
        if not self.board or not self.circuit:
            missing = "board" if not self.board else "circuit"
            yield LineError(line=number, code="missing_key", field=missing,
                            reason=f"no {missing} given on or before this line")
            return
        if fields or not errors:
            yield Fragment(board=self.board, circuit=self.circuit, fields=fields, line=number)
        yield from errors

    def _pairs(self, number: int, text: str) -> Iterator[Result]:
        parsed = parse_pairs(text)
        if parsed.problem:
            yield LineError(line=number, code="bad_syntax", text=text[:200], reason=parsed.problem)
            return
        values: list[tuple[str, str, CellParser]] = []
        errors: list[LineError] = []
        board = circuit = None
        for key, raw in parsed.pairs:
            name, unit = field_for_label(key)
            if name is None:
                errors.append(LineError(line=number, code="unknown_field", column=key, text=raw,
                                        reason=f"{key!r} is not a field or an alias of one"))
            elif name == "board":
                board = raw.strip() or None
            elif name == "circuit":
                circuit = raw.strip() or None
            else:
                values.append((name, raw, self._parser(name, unit)))
        self._set_context(board, circuit)
        yield from self._emit(number, values, errors, had_keys=board is not None or circuit is not None)

    def _regex(self, number: int, text: str) -> Iterator[Result]:
        compiled = self.compiled
        assert compiled is not None
        match = compiled.pattern.search(text)
        if match is None:
            yield LineError(line=number, code="no_match", text=text[:200],
                            reason=f"the line does not match profile {compiled.name!r}")
            return
        keys = {name: match.group(group) for group, name in compiled.key_groups if match.group(group)}
        self._set_context(keys.get("board"), keys.get("circuit"))
        values = [(name, match.group(group), parser) for group, name, parser in compiled.plan
                  if match.group(group) is not None]
        yield from self._emit(number, values, [], had_keys=bool(keys))


def _show(raw: bytes) -> str:
    return raw[:200].decode("utf-8", "backslashreplace")
