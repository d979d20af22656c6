"""The ``csv`` adapter: wide or long CSV from a meter's export → record fragments.

Invariants (beyond those of :mod:`adapters.base`):
- One physical line is one row: a quoted cell may hold the delimiter but not a
  line break (meters do not write them), so a stray quote costs one line, not
  the rest of the file.
- The header is the first line that is not blank or a comment, or one of the
  few after it (a title line before the header is skipped as preamble). No
  recognisable header in the first ``_HEADER_SEARCH`` such lines →
  ``unrecognised_header`` on the first of them, and the rest are skipped.
- Detection (encoding, delimiter, decimal comma) looks at a bounded sample; a
  profile or an option that states one wins over detection.
- Rows are parsed with the header's plan and cached cell parses: no
  per-value library calls once a value has been seen.
- A header cell read as no field (unknown, ambiguous, a second column for one
  field, left out by the profile) is a warning on the header line, once: the
  columns that are read are still read on every row.
- A refused cell is an error and an entry in the row's ``Fragment.rejected``;
  a profile's default fills in only fields the row neither gave nor refused.
  A ``rejected`` column (wide) or test (long) carries refused values back in
  from our neutral CSV (:mod:`adapters.rejections`).
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import replace
from itertools import chain
from typing import IO, Any, ClassVar

from engine import EngineError
from engine.coerce import coerce_spec
from engine.record_notation import NOTATION_INPUTS

from .aliases import fold, resolve_label
from .base import (
    AdapterError,
    AdapterOptions,
    BoardFacts,
    Fragment,
    InstallationFacts,
    LineError,
    Result,
    Skipped,
)
from .cells import CellParser, field_spec
from .csv_layout import Layout, detect_decimal_comma, long_test, plan_layout, sniff_delimiter, split_cells
from .encoding import DecodedLine, checked_encoding, detect_encoding_guess, iter_decoded_lines, read_sample
from .identifiers import key_problem
from .profiles import CsvProfile, get_profile
from .rejections import REJECTED_LABEL, parse_rejected
from .row_values import RowValues
from .scopes import SCOPE_NAMES, other_scope_reason

__all__ = ["CsvAdapter"]

_HEADER_SEARCH = 5
_SAMPLE_LINES = 25
_RECORD = {"circuit": "circuit record", "board": "board record", "installation": "installation record"}


class CsvAdapter:
    name: ClassVar[str] = "csv"
    description: ClassVar[str] = ("CSV exports, wide (a column per field) or long (board, circuit, "
                                  "test, value, unit), of circuits, boards or the installation, with "
                                  "mapping profiles and trade-label aliases")
    media_types: ClassVar[tuple[str, ...]] = ("text/csv", "application/csv",
                                              "text/tab-separated-values")
    extensions: ClassVar[tuple[str, ...]] = (".csv", ".tsv")

    def read(self, stream: IO[bytes], options: AdapterOptions) -> Iterator[Result]:
        profile = None
        if options.profile:
            found = get_profile(options.profile, kind="csv", profile_dir=options.profile_dir)
            assert isinstance(found, CsvProfile)
            profile = found
        defaults = _coerced_defaults(profile)
        sample, replay = read_sample(stream)
        declared = checked_encoding(options.encoding) or (profile.encoding if profile else None)
        encoding, guessed = (declared, False) if declared else detect_encoding_guess(sample)
        del sample
        lines = iter_decoded_lines(replay, encoding, options.max_line_length)
        head: list[tuple[DecodedLine, bool]] = []
        for item in lines:
            head.append(item)
            if len(head) >= _SAMPLE_LINES:
                break
        reader = _Reader(options, profile, defaults)
        reader.guessed_encoding = encoding if guessed else None
        yield from reader.run(head, chain(head, lines))


def _coerced_defaults(profile: CsvProfile | None) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for name, text in (profile.defaults.items() if profile else ()):
        spec = next((found for scope in ("circuit", "board", "installation")
                     if (found := field_spec(scope, name)) is not None), None)
        try:
            if spec is None:
                raise EngineError(f"{name!r} is not a field")
            value = coerce_spec(spec, text)
        except EngineError as exc:
            raise AdapterError(f"profile {profile.name if profile else ''}: {exc.message}",
                               code="bad_profile", details={"pointer": f"/defaults/{name}"}) from exc
        if value is not None:
            out[name] = value
    return out


class _Reader:
    def __init__(self, options: AdapterOptions, profile: CsvProfile | None,
                 defaults: dict[str, Any]) -> None:
        self.options = options
        self.profile = profile
        self.comment = profile.comment if profile else "#"
        self.default_board: str | None = defaults.pop("board", None)
        self.default_circuit: str | None = defaults.pop("circuit", None)
        self.defaults = defaults
        self.delimiter = ","
        self.decimal_comma = False
        self.layout: Layout | None = None
        self.header: list[str] = []
        self.header_line = 0
        self.long_parsers: dict[tuple[str, float], CellParser] = {}
        self.guessed_encoding: str | None = None  # a single-byte encoding detection guessed

    def _scope_defaults(self, scope: str) -> None:
        """The profile's defaults must be fields of the sheet's rows (raised before the first result)."""
        names = SCOPE_NAMES[scope] | {"board", "circuit"}
        for name in [*self.defaults, *(["board"] if self.default_board else []),
                     *(["circuit"] if self.default_circuit else [])]:
            if name not in names or (scope != "circuit" and name == "circuit"):
                where = self.profile.name if self.profile else ""
                raise AdapterError(f"profile {where}: default {name!r} is not a field of the sheet's rows "
                                   f"({_RECORD[scope]}s)", code="bad_profile",
                                   details={"pointer": f"/defaults/{name}"})

    def _is_content(self, text: str) -> bool:
        stripped = text.strip()
        return bool(stripped) and not (self.comment and stripped.startswith(self.comment))

    def _decide(self, head: list[tuple[DecodedLine, bool]]) -> tuple[int, str]:
        """Settle delimiter, decimal and layout; returns (header line, reason if none)."""
        content = [line for line, overlong in head if not line.problem and not overlong
                   and self._is_content(line.text)]
        if not content:
            return 0, "the input has no header line"
        declared = self.options.extra.get("delimiter") or (self.profile.delimiter if self.profile else None)
        self.delimiter = sniff_delimiter([c.text for c in content], declared)
        rows = [split_cells(c.text, self.delimiter) for c in content]
        if self.options.decimal_comma is not None:
            self.decimal_comma = self.options.decimal_comma
        elif self.profile and self.profile.decimal:
            self.decimal_comma = self.profile.decimal == ","
        else:
            self.decimal_comma = detect_decimal_comma(rows[1:], self.delimiter)
        first_reason = ""
        for candidate, cells in list(zip(content, rows, strict=True))[:_HEADER_SEARCH]:
            if len(cells) > self.options.max_columns:
                continue
            layout, reason = plan_layout([c.strip() for c in cells], self.profile, self.decimal_comma)
            if layout is not None:
                self.layout, self.header = layout, [c.strip() for c in cells]
                return candidate.number, ""
            first_reason = first_reason or reason
        return content[0].number, first_reason

    def run(self, head: list[tuple[DecodedLine, bool]],
            lines: Iterator[tuple[DecodedLine, bool]]) -> Iterator[Result]:
        self.header_line, reason = self._decide(head)
        if self.layout is not None:
            self._scope_defaults(self.layout.scope)
        first_content = next((line.number for line, overlong in head if not line.problem
                              and not overlong and self._is_content(line.text)), 0)
        for line, overlong in lines:
            number = line.number
            if line.problem:
                yield LineError(line=number, code=line.code or "bad_line", reason=line.problem)
            elif overlong:
                yield LineError(line=number, code="line_too_long",
                                reason=f"the line is longer than {self.options.max_line_length} characters")
            elif not self._is_content(line.text):
                yield Skipped(line=number, reason="blank" if not line.text.strip() else "comment")
            elif self.layout is None:
                if number == self.header_line:
                    cells = [c.strip() for c in split_cells(line.text, self.delimiter)]
                    yield LineError(line=number, code="unrecognised_header", text=",".join(cells)[:1000],
                                    reason=f"no recognisable header: {reason}")
                else:
                    yield Skipped(line=number, reason="not read: the input has no recognisable header")
            elif number < self.header_line and number >= first_content:
                yield Skipped(line=number, reason="preamble before the header")
            elif number == self.header_line:
                yield Skipped(line=number, reason="header")
                for note in self.layout.notes:
                    yield replace(note, line=number)
            else:
                yield from self._row(number, line.text)

    def _row(self, number: int, text: str) -> Iterator[Result]:
        layout = self.layout
        assert layout is not None
        cells = split_cells(text, self.delimiter)
        if len(cells) > self.options.max_columns:
            yield LineError(line=number, code="too_many_columns",
                            reason=f"the row has {len(cells)} cells, more than {self.options.max_columns}")
            return
        if cells[0].strip() == self.header[0] and [c.strip() for c in cells] == self.header:
            yield Skipped(line=number, reason="repeated header")
            return
        if not text.replace(self.delimiter, "").replace('"', "").strip():
            yield Skipped(line=number, reason="blank row")
            return
        count = len(cells)
        board = cells[layout.board].strip() if layout.board is not None and layout.board < count else ""
        board = board or self.default_board or ""
        at = layout.circuit
        circuit = (cells[at].strip() if at is not None and at < count else "") or self.default_circuit or ""
        needed = {"circuit": ("board", "circuit"), "board": ("board",), "installation": ()}[layout.scope]
        missing = next((key for key in needed if not (board if key == "board" else circuit)), None)
        if missing is not None:
            index = layout.board if missing == "board" else layout.circuit
            yield LineError(line=number, code="missing_key", field=missing,
                            column=self.header[index] if index is not None else None,
                            reason=f"the row has no {missing}, which keys the {_RECORD[layout.scope]}")
            return
        bad_key = self._key_error(number, board, circuit)
        if bad_key is not None:
            yield bad_key
            return
        row = RowValues(number)  # the row's own values; the profile's defaults fill in after
        if layout.kind == "wide":
            for index, name, parser in layout.columns:
                if index >= count:
                    continue
                raw = cells[index].strip()
                if raw:
                    row.add(name, raw, parser.parse(raw), column=self.header[index])
            if layout.rejected is not None and layout.rejected < count and cells[layout.rejected].strip():
                self._carried(cells[layout.rejected], self.header[layout.rejected], row)
            extra = [c for c in cells[layout.width:] if c.strip()]
            if extra:
                row.errors.append(LineError(
                    line=number, code="extra_cells", text=self.delimiter.join(extra)[:200],
                    reason=f"{len(extra)} cell(s) beyond the header's {layout.width} columns"))
        elif self._long(cells, row) == "no reading" and not row.errors:
            yield Skipped(line=number, reason="no reading")
            return
        row.finish()
        for name, value in self.defaults.items():  # a default fills in where the row gave nothing
            if name not in row.fields and name not in row.rejected and name not in row.marks:
                row.fields[name] = value
        if row.taken or not row.errors:
            yield self._result(number, row, board, circuit)
        yield from row.errors

    def _result(self, number: int, row: RowValues, board: str, circuit: str) -> Result:
        """What the row is, by the sheet's scope: a circuit's fragment, or a board's or the installation's
        facts."""
        scope = self.layout.scope if self.layout else "circuit"
        if scope == "board":
            return BoardFacts(board=board, fields=row.fields, line=number, rejected=row.rejected,
                              marks=row.marks)
        if scope == "installation":
            return InstallationFacts(fields=row.fields, line=number, rejected=row.rejected, marks=row.marks)
        return Fragment(board=board, circuit=circuit, fields=row.fields, line=number, rejected=row.rejected,
                        marks=row.marks)

    def _key_error(self, number: int, board: str, circuit: str) -> LineError | None:
        """A board or circuit that could not be what the person typed (control bytes, undecodable
        bytes, or bytes whose meaning only a guessed encoding gave)."""
        layout = self.layout
        assert layout is not None
        for name, value in (("board", board), ("circuit", circuit)):
            index = layout.board if name == "board" else layout.circuit
            column = self.header[index] if index is not None else None
            problem = key_problem(name, value)
            if problem is not None:
                return LineError(line=number, code="bad_key", field=name, column=column, text=value[:80],
                                 reason=f"line {number}: {problem}")
            if self.guessed_encoding and not value.isascii():
                return LineError(
                    line=number, code="bad_encoding", field=name, column=column, text=value[:80],
                    reason=f"line {number}: the {name} reference {value!r} holds bytes that are not "
                           f"UTF-8; the input declares no encoding and {self.guessed_encoding} is only a "
                           "guess, never trusted for a board or circuit: declare the encoding "
                           "(charset, profile encoding) or correct the line")
        return None

    def _carried(self, text: str, column: str, row: RowValues) -> None:
        """Refused values a neutral CSV carries: remembered unless this row's own cell gave, refused or
        marked the field (a profile's default gives way to them, as to a refused cell)."""
        scope = self.layout.scope if self.layout else "circuit"
        taken, problems = parse_rejected(text, SCOPE_NAMES[scope] - NOTATION_INPUTS)
        row.carried.update(taken)
        row.errors += [LineError(line=row.line, code="bad_value", field=REJECTED_LABEL, column=column,
                                 text=bad, reason=why) for bad, why in problems]

    def _long(self, cells: list[str], row: RowValues) -> str:
        """One long-layout row into ``row``; "no reading" if it has none."""
        layout = self.layout
        assert layout is not None
        count = len(cells)
        label = cells[layout.test].strip() if layout.test < count else ""
        if label and fold(label) == REJECTED_LABEL:
            raw = cells[layout.value].strip() if layout.value < count else ""
            if raw:
                self._carried(raw, self.header[layout.value], row)
            return "ok" if row.carried else "no reading"
        test = long_test(layout, label) if label else None
        if test is None:
            known = resolve_label(label) if label else None
            why = (f"{label!r} {known.why} (one of {', '.join(known.fields)}): name the field instead"
                   if known is not None and known.ambiguous else
                   other_scope_reason(label, known, layout.scope)
                   if known is not None and known.field is not None else f"{label!r} names no test we know")
            row.errors.append(LineError(line=row.line, code="unknown_test", column=self.header[layout.test],
                                        text=label, reason=why if label else "the row names no test"))
            return "error"
        raw = cells[layout.value].strip() if layout.value < count else ""
        unit = cells[layout.unit].strip() if layout.unit is not None and layout.unit < count else ""
        key = (test.field, test.scale)
        parser = self.long_parsers.get(key)
        if parser is None:
            parser = CellParser(test.field, decimal_comma=self.decimal_comma, scale=test.scale,
                                scope=layout.scope)
            self.long_parsers[key] = parser
        value = parser.parse(raw, unit=unit or test.unit) if raw else None
        if value is None:
            return "no reading"
        row.add(test.field, raw, value, column=self.header[layout.value])
        if test.field in row.rejected and unit:
            row.rejected[test.field] = f"{raw} {unit}"  # as the row wrote it, unit and all
        return "ok"
