"""One text line at a time → results, with the context (board, circuit, decimals) it leaves behind.

A line gives a circuit's fragment, a board's or the installation's facts
(:class:`adapters.base.BoardFacts`, :class:`adapters.base.InstallationFacts`),
an error or a skip.

Used by the ``lines`` adapter for every line it reads, and by ``ohmtally
capture`` to know which context is in force before and after each line it
spools, so a batch sent on its own can carry it (:meth:`LineContext.directive`).

Invariants:
- Order of checks per line: checksum (on the raw bytes, as sent), decoding,
  control bytes, then a directive, a comment, or the format (ours or a regex
  profile). Every fault costs that one line.
- ``board`` and ``circuit`` are sticky: once given (on a context line of their
  own, on a reading line, on a board line, or in a directive) they hold for
  the lines after it until given again. Giving a new board forgets the circuit
  unless the same line gives one.
- A line's record is decided by the line alone: ``installation …`` is the
  installation's facts (the context untouched); a line naming a board and no
  circuit is that board's facts (and sets the board, as a context line does;
  with no fact on it, it is just a context line); any other line is a
  circuit's. A name of another record on it is an ``other_scope`` warning.
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

from .aliases import Label, fold, resolve_label
from .base import BoardFacts, Fragment, InputWarning, InstallationFacts, LineError, Result, Skipped
from .cells import CellParser
from .identifiers import key_problem
from .line_format import DIRECTIVE, check_suffix, check_text_suffix, format_pairs, parse_pairs
from .line_profiles import CompiledLineProfile
from .name_notes import NameNotes, name_warning
from .profiles import ColumnSpec
from .row_values import RowValues
from .scopes import Scope, in_scope

__all__ = ["LineContext", "LineReader"]

# C0 controls other than TAB, and DEL: noise on a serial line, never part of a reading
_CONTROL = re.compile(r"[\x00-\x08\x0a-\x1f\x7f]")
_DECIMALS = {"comma": True, "point": False, "": None}
# "installation earthing=TN-C-S ze=0.21": the installation's facts (a key=value line never starts so)
_INSTALLATION = re.compile(r"installation(?=[ \t;]|$)", re.IGNORECASE)


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
        self.parsers: dict[tuple[str, str, float, bool, str], CellParser] = {}
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
        elif (found := _INSTALLATION.match(stripped)) is not None:
            yield from self._installation(number, stripped, found.end())
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
    def _parser(self, name: str, unit: str | None, scale: float = 1.0,
                scope: Scope = "circuit") -> CellParser:
        key = (name, unit or "", scale, self.decimal_comma, scope)
        parser = self.parsers.get(key)
        if parser is None:
            parser = CellParser(name, unit=unit, decimal_comma=self.decimal_comma, scale=scale, scope=scope)
            if len(self.parsers) < 1024:
                self.parsers[key] = parser
        return parser

    def _emit(self, number: int, row: RowValues, notes: list[InputWarning], had_keys: bool,
              cells: int) -> Iterator[Result]:
        row.finish()
        if not cells and not row.errors and (had_keys or notes):
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
        if row.taken or not row.errors:
            yield Fragment(board=context.board, circuit=context.circuit, fields=row.fields, line=number,
                           rejected=row.rejected, marks=row.marks)
        yield from row.errors
        yield from notes

    def _facts(self, number: int, row: RowValues, notes: list[InputWarning], board: str | None
               ) -> Iterator[Result]:
        """A board line (``board`` given, no ``circuit``) or an installation line: its facts."""
        row.finish()
        if not row.taken and not row.errors:
            yield Skipped(line=number, reason="context" if board else "installation line with no facts")
        elif row.taken and board:
            yield BoardFacts(board=board, fields=row.fields, line=number, rejected=row.rejected,
                             marks=row.marks)
        elif row.taken:
            yield InstallationFacts(fields=row.fields, line=number, rejected=row.rejected, marks=row.marks)
        yield from row.errors
        yield from notes

    def _label(self, key: str) -> Label:
        spec = self.keys.get(fold(key))
        if spec is not None:
            return Label(spec.field, spec.unit)
        return resolve_label(key)

    def _installation(self, number: int, text: str, start: int) -> Iterator[Result]:
        """``installation earthing=TN-C-S ze=0.21``: the installation's facts; the context is untouched."""
        parsed = parse_pairs(" " * start + text[start:])  # blanks for the word: columns count from the line
        if parsed.problem:
            yield LineError(line=number, code="bad_syntax", text=text[:200], reason=parsed.problem)
            return
        row, notes, _keys, _cells = self._read_pairs(number, parsed.pairs, "installation")
        yield from self._facts(number, row, notes, None)

    def _pairs(self, number: int, text: str) -> Iterator[Result]:
        parsed = parse_pairs(text)
        if parsed.problem:
            yield LineError(line=number, code="bad_syntax", text=text[:200], reason=parsed.problem)
            return
        names = {self._label(key).field for key, _ in parsed.pairs}
        # a line naming a board and no circuit states that board's facts (adapters/README.md)
        scope: Scope = "board" if "board" in names and "circuit" not in names else "circuit"
        row, notes, keys, cells = self._read_pairs(number, parsed.pairs, scope)
        for problem in [e for e in row.errors if e.code == "bad_key"]:
            yield replace(problem, text=text[:200])
            return
        if scope == "board" and not keys.get("board"):
            yield from row.errors
            yield LineError(line=number, code="missing_key", field="board",
                            reason="the line names no board (empty or given twice) and no circuit")
            yield from notes
            return
        self._set_context(keys.get("board"), keys.get("circuit"))
        if scope == "board":
            yield from self._facts(number, row, notes, keys.get("board"))
            return
        had_keys = keys.get("board") is not None or keys.get("circuit") is not None
        yield from self._emit(number, row, notes, had_keys, cells)

    def _read_pairs(self, number: int, pairs: list[tuple[str, str]], scope: Scope
                    ) -> tuple[RowValues, list[InputWarning], dict[str, str | None], int]:
        """The pairs of one line read as a ``scope`` record: values, the keys, and the warnings."""
        row = RowValues(number)
        notes: list[InputWarning] = []
        keys: dict[str, str | None] = {}
        seen: dict[str, tuple[str, str]] = {}  # field -> (key, value text) first given for it
        cells = 0
        for key, raw in pairs:
            label = self._label(key)
            name = label.field
            keyed = name in ("board", "circuit") and scope != "installation"
            if name is None or not (keyed or in_scope(label, scope)):
                note = self.names.first(name_warning(key, label, line=number, scope=scope))
                if note is not None:
                    notes.append(note)
                continue
            if name in seen:
                error = LineError(line=number, code="duplicate_field", field=name, column=key,
                                  reason=f"{name} is given twice on the line ({seen[name][0]!r} and "
                                         f"{key!r}); neither value is taken")
                if keyed:
                    row.errors.append(error)
                    keys.pop(name, None)
                else:  # which was meant is unknown: neither is taken, and the record remembers it
                    row.refuse_twice(name, seen[name][1], raw, error)
                continue
            seen[name] = (key, raw)
            if keyed:
                problem = key_problem(name, raw)
                if problem:
                    return (RowValues(number, errors=[LineError(line=number, code="bad_key", field=name,
                                                                reason=problem)]), [], {}, 0)
                keys[name] = raw.strip() or None
                continue
            spec = self.keys.get(fold(key))
            cells += 1
            parser = self._parser(name, label.unit, spec.scale if spec else 1.0, scope)
            row.add(name, raw, parser.parse(raw), column=key)
        return row, notes, keys, cells

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
        row = RowValues(number)
        cells = 0
        for plan in compiled.plan:
            found = match.group(plan.group)
            if found is not None:
                cells += 1
                row.add(plan.field, found, self._parser(plan.field, plan.unit, plan.scale).parse(found),
                        column=plan.group)
        yield from self._emit(number, row, [], bool(keys), cells)


def _show(raw: bytes) -> str:
    return raw[:200].decode("utf-8", "backslashreplace")
