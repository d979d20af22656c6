"""The ``json`` adapter: circuit records and site documents as JSON → fragments and facts, streamed.

Accepts a list of records, a site document ``{"installation": {...}, "boards":
[...], "circuits": [...]}`` (any of the three members; others, such as
``ruleset``, are left to the caller), or newline-delimited JSON (one record per
line). An element of a list or a line of NDJSON may itself be a site document
(an object with ``installation``, ``boards`` or ``circuits``), so a logger can
send the installation's or a board's facts between its readings:
``{"boards": [{"board": "DB2", "zdb_ohm": 0.41}]}``. Field names are the
record's own (:data:`engine.FIELDS`, :data:`engine.BOARD_FIELDS`,
:data:`engine.INSTALLATION_FIELDS`, engine/README.md); aliases are accepted
too, as in the other adapters. A circuit record without ``circuit`` is never
read as a board's facts: boards are given in ``boards``.

Invariants (beyond those of :mod:`adapters.base`):
- A record that is not an object, or lacks its keys (``board``/``circuit`` for
  a circuit, ``board`` for a board), is one :class:`LineError` with its line
  and pointer (``/circuits/3``); a bad field is a :class:`LineError` with the
  field's pointer (``/circuits/3/zs_ohm``) beside the result of the good
  fields.
- Line accounting is per record, not per physical line (a pretty-printed
  record spans many lines): the ``line`` is where the record starts.
- A member that names no field of its record (unknown, ambiguous, or a field
  of another record: a board's ``zdb_ohm`` in a circuit) is a warning, once
  per input, as a CSV column or a line key would be; the record's other
  members are taken. Two members naming one field (``zs`` and ``Zs``) are a
  ``duplicate_field`` error: neither value is taken.
- A refused member is remembered in ``rejected`` (field → text), ``N/A`` and
  ``LIM`` in ``marks``, and a record's own ``rejected`` member (what
  :func:`engine.record_to_dict` writes) is carried in the same way, each entry
  checked.
- Text is UTF-8 (RFC 8259 §8.1), or UTF-16 found by its byte-order mark or its
  zero bytes. A string holding bytes that did not decode (U+FFFD) or a lone
  surrogate (``"\\ud800"``) is an error for its member; as a board or circuit
  it rejects the record: such text never keys a circuit.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import IO, Any, ClassVar

from engine.intake import MARKS_KEY, REJECTED_KEY
from engine.marks import MARKS
from engine.record_notation import NOTATION_INPUTS

from .aliases import resolve_label
from .base import (
    AdapterOptions,
    BoardFacts,
    Fragment,
    InputWarning,
    InstallationFacts,
    LineError,
    Result,
)
from .cells import CellParser
from .encoding import checked_encoding, read_sample, sniff_unicode
from .identifiers import key_problem
from .json_stream import JsonItem, iter_json_records
from .name_notes import NameNotes, name_warning
from .row_values import RowValues
from .scopes import SCOPE_NAMES, Scope, in_scope

__all__ = ["JsonAdapter"]

_SCOPES: dict[str, Scope] = {"circuit": "circuit", "board": "board", "installation": "installation"}
_KEYS: dict[Scope, tuple[str, ...]] = {"circuit": ("board", "circuit"), "board": ("board",),
                                       "installation": ()}
_WHAT = {"circuit": "a circuit record", "board": "a board", "installation": "the installation"}
_SITE_MEMBERS = {"installation": "installation", "boards": "board", "circuits": "circuit"}


def _escape(token: str) -> str:
    return token.replace("~", "~0").replace("/", "~1")


class JsonAdapter:
    name: ClassVar[str] = "json"
    description: ClassVar[str] = ("Circuit records and site documents (installation, boards, circuits) as "
                                  "JSON: a list, an object, or one record per line (NDJSON), streamed")
    media_types: ClassVar[tuple[str, ...]] = ("application/json", "application/x-ndjson",
                                              "application/ndjson", "application/jsonl")
    extensions: ClassVar[tuple[str, ...]] = (".json", ".ndjson", ".jsonl")

    def read(self, stream: IO[bytes], options: AdapterOptions) -> Iterator[Result]:
        sample, replay = read_sample(stream)
        # RFC 8259 §8.1: JSON is UTF-8; UTF-16 from an old tool (marked, or by its zero bytes) is read
        if options.encoding:
            encoding = checked_encoding(options.encoding) or "utf-8"
        else:
            found = sniff_unicode(sample)
            encoding = found if found and found.startswith("utf-16") else "utf-8"  # a UTF-8 BOM: skipped
        del sample
        reader = _Reader(bool(options.decimal_comma), options.max_columns)
        for item in iter_json_records(replay, encoding, options.max_line_length):
            yield from reader.item(item)


class _Reader:
    def __init__(self, decimal_comma: bool, max_columns: int) -> None:
        self.decimal_comma = decimal_comma
        self.max_columns = max_columns
        self.parsers: dict[str, CellParser] = {}
        self.names = NameNotes()

    def item(self, item: JsonItem) -> Iterator[Result]:
        if item.problem is not None:
            yield LineError(line=item.line, code=item.code, pointer=item.pointer, reason=item.problem)
        elif item.kind == "circuit" and _is_site_document(item.value):
            yield from self._document(item.line, item.pointer, item.value)
        else:
            yield from self._record(item.line, item.pointer, item.value, _SCOPES[item.kind])

    def _document(self, line: int, pointer: str, value: dict[str, Any]) -> Iterator[Result]:
        """A site document that is one element of a list or one NDJSON line: each of its parts."""
        for member, raw in value.items():
            where = f"{pointer}/{_escape(member)}"
            scope = _SITE_MEMBERS.get(member)
            if scope is None:
                note = self.names.first(InputWarning(
                    line=line, code="unknown_field", column=member, pointer=where,
                    reason=f"{member!r} is not a member of a site document (installation, boards, "
                           "circuits) read here: its value is not read"))
                if note is not None:
                    yield note
            elif scope == "installation":
                yield from self._record(line, where, raw, "installation")
            elif not isinstance(raw, list):
                yield LineError(line=line, pointer=where, code="bad_document",
                                reason=f"{member} must be a list of objects")
            else:
                for index, part in enumerate(raw):
                    yield from self._record(line, f"{where}/{index}", part, _SCOPES[scope])

    def _parser(self, name: str, unit: str | None, scope: Scope) -> CellParser:
        cache_key = f"{scope}\x00{name}\x00{unit or ''}"
        parser = self.parsers.get(cache_key)
        if parser is None:
            parser = CellParser(name, unit=unit, decimal_comma=self.decimal_comma, scope=scope)
            if len(self.parsers) < 1024:
                self.parsers[cache_key] = parser
        return parser

    def _record(self, line: int, pointer: str, value: Any, scope: Scope) -> Iterator[Result]:
        if not isinstance(value, dict):
            yield LineError(line=line, pointer=pointer, code="bad_record",
                            reason=f"{_WHAT[scope]} must be an object, not {type(value).__name__}")
            return
        if len(value) > self.max_columns:
            yield LineError(line=line, pointer=pointer, code="too_many_columns",
                            reason=f"the record has {len(value)} members, more than {self.max_columns}")
            return
        row = RowValues(line)
        notes: list[InputWarning] = []
        keys: dict[str, str | None] = dict.fromkeys(_KEYS[scope])
        seen: dict[str, str] = {}  # field -> the member that gave it
        for key, raw in value.items():
            where = f"{pointer}/{_escape(key)}"
            if _bad_text(key):
                row.errors.append(LineError(line=line, pointer=pointer, code="bad_encoding",
                                            reason=f"a member name {_bad_text(key)}"))
                continue
            if key in (REJECTED_KEY, MARKS_KEY):  # what a stored record carries (engine.record_to_dict)
                row.errors.extend(_carried(key, raw, row, line, where, SCOPE_NAMES[scope] - NOTATION_INPUTS))
                continue
            label = resolve_label(key)
            name = label.field
            keyed = name in keys
            if name is None or not (keyed or in_scope(label, scope)):
                note = self.names.first(name_warning(key, label, line=line, pointer=where, scope=scope))
                if note is not None:
                    notes.append(note)
                continue
            if name in seen:
                error = LineError(line=line, pointer=where, field=name, code="duplicate_field", column=key,
                                  reason=f"{name} is given twice in the record ({seen[name]!r} and "
                                         f"{key!r}); neither value is taken")
                if keyed:
                    row.errors.append(error)
                    keys[name] = None
                else:
                    row.refuse_twice(name, _shown(value[seen[name]]), _shown(raw), error)
                continue
            seen[name] = key
            bad_text = _bad_text(raw)
            if bad_text is not None:
                row.errors.append(LineError(line=line, pointer=where, field=name, code="bad_encoding",
                                            reason=f"{name} {bad_text}"))
                if not keyed:
                    row.refuse(name, _shown(raw))
                continue
            if keyed:
                text = _key(raw)
                problem = key_problem(name, text) if text is not None else None
                if text is None or problem is not None:
                    row.errors.append(LineError(line=line, pointer=where, field=name,
                                                code="bad_value" if text is None else "bad_key",
                                                reason=problem or f"{name} must be a non-empty string"))
                else:
                    keys[name] = text
                continue
            row.add(name, raw, self._parser(name, label.unit, scope).parse(raw), pointer=where)
        yield from self._result(line, pointer, row.finish(), keys, scope)
        yield from notes

    @staticmethod
    def _result(line: int, pointer: str, row: RowValues, keys: dict[str, str | None], scope: Scope
                ) -> Iterator[Result]:
        missing = next((key for key, text in keys.items() if text is None), None)
        if missing is not None:
            if not any(e.field == missing for e in row.errors):
                yield LineError(line=line, pointer=f"{pointer}/{missing}", field=missing, code="missing_key",
                                reason=f"{missing} is required to key {_WHAT[scope]}")
            yield from row.errors
            return
        if row.taken or not row.errors:
            if scope == "circuit":
                yield Fragment(board=keys["board"] or "", circuit=keys["circuit"] or "", fields=row.fields,
                               line=line, rejected=row.rejected, marks=row.marks)
            elif scope == "board":
                yield BoardFacts(board=keys["board"] or "", fields=row.fields, line=line,
                                 rejected=row.rejected, marks=row.marks)
            else:
                yield InstallationFacts(fields=row.fields, line=line, rejected=row.rejected, marks=row.marks)
        yield from row.errors


def _is_site_document(value: Any) -> bool:
    """An object holding a site document's parts (never a circuit record: these are no field names)."""
    return isinstance(value, dict) and any(member in value for member in _SITE_MEMBERS)


def _key(value: Any) -> str | None:
    if isinstance(value, str) and value.strip():
        return value.strip()
    if isinstance(value, int) and not isinstance(value, bool):
        return str(value)
    return None


def _bad_text(value: Any) -> str | None:
    """Why a string member cannot be taken as text (undecodable bytes, a lone surrogate), or None."""
    if not isinstance(value, str):
        return None
    if "\ufffd" in value:
        return "holds bytes that are not valid text in the input's encoding"
    if any("\ud800" <= ch <= "\udfff" for ch in value):
        return "holds a lone surrogate (an escape such as \\ud800 that is no character)"
    return None


def _shown(raw: Any) -> str:
    """A refused member's value as text that any JSON or database can hold (no lone surrogate)."""
    text = raw if isinstance(raw, str) else json.dumps(raw, ensure_ascii=False)
    text = text.encode("utf-8", "backslashreplace").decode("utf-8")
    return text if len(text) <= 200 else text[:200] + "…"


def _carried(member: str, raw: Any, row: RowValues, line: int, where: str, allowed: frozenset[str]
             ) -> list[LineError]:
    """A record's ``rejected`` (field → text refused) or ``marks`` (field → N/A or LIM) member: taken
    as it is, each entry checked; the record's own value for a field clears it (as
    :func:`engine.build_record` does)."""
    what = "the text refused" if member == REJECTED_KEY else "N/A or LIM"
    if not isinstance(raw, dict):
        return [LineError(line=line, pointer=where, field=member, code="bad_value",
                          reason=f"{member} must be an object of field → {what}")]
    errors: list[LineError] = []
    target = row.carried if member == REJECTED_KEY else row.carried_marks
    for name, text in raw.items():
        if name not in allowed or name in ("board", "circuit") or not isinstance(text, str) \
                or _bad_text(text) or _bad_text(name) or (member == MARKS_KEY and text not in MARKS):
            errors.append(LineError(line=line, pointer=f"{where}/{_escape(name)}", field=member,
                                    code="bad_value", text=_shown(name),
                                    reason=f"{member}: {_shown(name)!r} is not a field name with {what} "
                                           "for it"))
            continue
        target[name] = text
    return errors
