"""One text line at a time → results, with the context (board, circuit, decimals) it leaves behind.

Used by the ``lines`` adapter for every line it reads, and by ``ohmtally
capture`` to know which context is in force before and after each line it
spools, so a batch sent on its own can carry it (:meth:`LineContext.directive`).

Invariants:
- Order of checks per line: checksum (on the raw bytes, as sent), decoding,
  control bytes, then a directive, a comment, or the format (ours or a regex
  profile). Every fault costs that one line.
- ``board`` and ``circuit`` are sticky: once given (on a context line of their
  own, on a reading line, or in a directive) they hold for the lines after it
  until given again. Giving a new board forgets the circuit unless the same
  line gives one.
- A directive line ``#% key=value …`` changes how the lines after it read:
  ``decimal=comma|point`` (empty: back to what the options said),
  ``board=``/``circuit=`` (empty: none). Any other key, or a bad value, is a
  ``bad_directive`` error for that line and changes nothing.
- A key read as no field is a warning (once per input, see
  :mod:`adapters.name_notes`); the rest of the line is taken. A field given
  twice on one line is a ``duplicate_field`` error for that field: which value
  was meant cannot be known.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass, replace
from typing import Any

from .aliases import Label, fold, resolve_label
from .base import Fragment, InputWarning, LineError, Result, Skipped
from .cells import CellParser, CellProblem
from .identifiers import key_problem
from .line_format import DIRECTIVE, check_suffix, check_text_suffix, format_pairs, parse_pairs
from .line_profiles import CompiledLineProfile
from .name_notes import NameNotes, name_warning
from .profiles import ColumnSpec

__all__ = ["LineContext", "LineReader"]

# C0 controls other than TAB, and DEL: noise on a serial line, never part of a reading
_CONTROL = re.compile(r"[\x00-\x08\x0a-\x1f\x7f]")
_DECIMALS = {"comma": True, "point": False, "": None}


@dataclass(frozen=True, slots=True)
class LineContext:
    """What is in force between two lines: the board, the circuit, and a declared decimal convention."""

    board: str | None = None
    circuit: str | None = None
    decimal: str | None = None  # "comma", "point", or None: as the input's options say

    def directive(self) -> str:
        """The ``#%`` line that sets exactly this context (every key written, empty for none)."""
        return f"{DIRECTIVE} " + format_pairs([("board", self.board or ""), ("circuit", self.circuit or ""),
                                               ("decimal", self.decimal or "")])


class LineReader:
    """Reads lines in order; keeps the context between them."""

    def __init__(self, *, decimal_comma: bool = False, compiled: CompiledLineProfile | None = None,
                 comment: str = "#", defaults: dict[str, str] | None = None,
                 keys: tuple[ColumnSpec, ...] = ()) -> None:
        defaults = defaults or {}
        self.default_decimal = decimal_comma
        self.compiled = compiled
        self.comment = comment
        self.context = LineContext(board=defaults.get("board"), circuit=defaults.get("circuit"))
        self.keys = {fold(k.source): k for k in keys}
        self.parsers: dict[tuple[str, str, float, bool], CellParser] = {}
        self.names = NameNotes()

    @property
    def decimal_comma(self) -> bool:
        return self.default_decimal if self.context.decimal is None else self.context.decimal == "comma"

    # -- one line -------------------------------------------------------------
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
                            reason=f"line {number}: byte {check.payload[exc.start]:#04x} at column "
                                   f"{exc.start + 1} is not valid {encoding}")
            return
        yield from self.text_line(number, text, raw)

    def decoded_line(self, number: int, text: str, encoding: str) -> Iterator[Result]:
        """A line decoded before it was split (UTF-16): its checksum is over its bytes in ``encoding``."""
        payload, check = check_text_suffix(text, encoding)
        if not check.ok:
            yield LineError(line=number, code="bad_checksum", text=text[:200],
                            reason=f"checksum {check.given} does not match the line "
                                   f"(expected {check.expected})")
            return
        yield from self.text_line(number, payload)

    def text_line(self, number: int, text: str, raw: bytes | None = None) -> Iterator[Result]:
        """A line already decoded, its checksum checked."""
        if "\ufffd" in text:
            yield LineError(line=number, code="bad_encoding", text=text[:200],
                            reason=f"line {number} holds bytes that are not valid text in its encoding")
            return
        control = _CONTROL.search(text)
        if control:
            yield LineError(line=number, code="control_bytes", text=_show(raw) if raw else text[:200],
                            reason=f"control byte {ord(control.group()):#04x} "
                                   f"at column {control.start() + 1}")
            return
        stripped = text.strip()
        if not stripped:
            yield Skipped(line=number, reason="blank")
        elif stripped.startswith(DIRECTIVE):
            yield self._directive(number, stripped[len(DIRECTIVE):])
        elif self.comment and stripped.startswith(self.comment):
            yield Skipped(line=number, reason="comment")
        elif self.compiled is not None:
            yield from self._regex(number, stripped)
        else:
            yield from self._pairs(number, stripped)

    # -- context --------------------------------------------------------------
    def _directive(self, number: int, body: str) -> Result:
        parsed = parse_pairs(body.strip())
        if parsed.problem:
            return LineError(line=number, code="bad_directive", text=body[:200], reason=parsed.problem)
        context = self.context
        for key, value in parsed.pairs:
            name = key.strip().lower()
            if name == "decimal" and value.strip().lower() in _DECIMALS:
                word = value.strip().lower()
                context = replace(context, decimal=word or None)
            elif name in ("board", "circuit"):
                problem = key_problem(name, value)
                if problem:
                    return LineError(line=number, code="bad_directive", field=name, text=body[:200],
                                     reason=problem)
                value = value.strip()
                if name == "board":
                    context = replace(context, board=value or None,
                                      circuit=context.circuit if value == context.board else None)
                else:
                    context = replace(context, circuit=value or None)
            else:
                return LineError(line=number, code="bad_directive", text=body[:200],
                                 reason=f"{key}={value!r} is not a directive; known: decimal=comma|point, "
                                        "board=…, circuit=…")
        self.context = context
        return Skipped(line=number, reason="directive")

    def _set_context(self, board: str | None, circuit: str | None) -> None:
        context = self.context
        if board is not None and board != context.board:
            context = replace(context, board=board, circuit=None)
        if circuit is not None:
            context = replace(context, circuit=circuit)
        self.context = context

    # -- fields ---------------------------------------------------------------
    def _parser(self, name: str, unit: str | None, scale: float = 1.0) -> CellParser:
        key = (name, unit or "", scale, self.decimal_comma)
        parser = self.parsers.get(key)
        if parser is None:
            parser = CellParser(name, unit=unit, decimal_comma=self.decimal_comma, scale=scale)
            if len(self.parsers) < 1024:
                self.parsers[key] = parser
        return parser

    def _emit(self, number: int, values: list[tuple[str, str, CellParser]], errors: list[LineError],
              notes: list[InputWarning], had_keys: bool,
              rejected: dict[str, str] | None = None) -> Iterator[Result]:
        fields: dict[str, Any] = {}
        rejected = rejected if rejected is not None else {}
        for name, raw, parser in values:
            value = parser.parse(raw)
            if value is None:
                continue
            if type(value) is CellProblem:
                errors.append(LineError(line=number, code="bad_value", field=name, text=value.text,
                                        reason=value.reason))
                rejected[name] = value.text if value.text is not None else raw
            else:
                fields[name] = value
        if not values and not errors and (had_keys or notes):
            yield Skipped(line=number, reason="context" if had_keys else "no field named on the line")
            yield from notes
            return
        context = self.context
        if not context.board or not context.circuit:
            missing = "board" if not context.board else "circuit"
            yield LineError(line=number, code="missing_key", field=missing,
                            reason=f"no {missing} given on or before line {number}")
            yield from notes
            return
        if fields or rejected or not errors:
            yield Fragment(board=context.board, circuit=context.circuit, fields=fields, line=number,
                           rejected=rejected)
        yield from errors
        yield from notes

    def _label(self, key: str) -> Label:
        spec = self.keys.get(fold(key))
        if spec is not None:
            return Label(spec.field, spec.unit)
        return resolve_label(key)

    def _pairs(self, number: int, text: str) -> Iterator[Result]:
        parsed = parse_pairs(text)
        if parsed.problem:
            yield LineError(line=number, code="bad_syntax", text=text[:200], reason=parsed.problem)
            return
        values: list[tuple[str, str, CellParser]] = []
        errors: list[LineError] = []
        notes: list[InputWarning] = []
        keys: dict[str, str | None] = {}
        seen: dict[str, str] = {}
        given: dict[str, str] = {}  # field -> the value text first given for it
        rejected: dict[str, str] = {}
        for key, raw in parsed.pairs:
            label = self._label(key)
            name = label.field
            if name is None:
                note = self.names.first(name_warning(key, label, line=number))
                if note is not None:
                    notes.append(note)
                continue
            if name in seen:
                errors.append(LineError(line=number, code="duplicate_field", field=name, column=key,
                                        reason=f"{name} is given twice on the line ({seen[name]!r} and "
                                               f"{key!r}); neither value is taken"))
                values = [v for v in values if v[0] != name]
                keys.pop(name, None)
                if name not in ("board", "circuit"):  # which was meant is unknown: neither, remembered
                    rejected[name] = f"{rejected.get(name, given.get(name, ''))} | {raw}"
                continue
            seen[name] = key
            given[name] = raw
            if name in ("board", "circuit"):
                problem = key_problem(name, raw)
                if problem:
                    yield LineError(line=number, code="bad_key", field=name, text=text[:200], reason=problem)
                    return
                keys[name] = raw.strip() or None
            else:
                spec = self.keys.get(fold(key))
                values.append((name, raw, self._parser(name, label.unit, spec.scale if spec else 1.0)))
        self._set_context(keys.get("board"), keys.get("circuit"))
        had_keys = keys.get("board") is not None or keys.get("circuit") is not None
        yield from self._emit(number, values, errors, notes, had_keys, rejected)

    def _regex(self, number: int, text: str) -> Iterator[Result]:
        compiled = self.compiled
        assert compiled is not None
        match = compiled.pattern.search(text)
        if match is None:
            yield LineError(line=number, code="no_match", text=text[:200],
                            reason=f"the line does not match profile {compiled.name!r}")
            return
        keys: dict[str, str] = {}
        for group, name in compiled.key_groups:
            found = match.group(group)
            if found:
                problem = key_problem(name, found)
                if problem:
                    yield LineError(line=number, code="bad_key", field=name, text=text[:200], reason=problem)
                    return
                keys[name] = found
        self._set_context(keys.get("board"), keys.get("circuit"))
        values = []
        for plan in compiled.plan:
            found = match.group(plan.group)
            if found is not None:
                values.append((plan.field, found, self._parser(plan.field, plan.unit, plan.scale)))
        yield from self._emit(number, values, [], [], had_keys=bool(keys))


def _show(raw: bytes) -> str:
    return raw[:200].decode("utf-8", "backslashreplace")
