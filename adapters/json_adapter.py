"""The ``json`` adapter: circuit records as JSON → record fragments, streamed.

Accepts a list of records, an object ``{"circuits": [...]}`` (other members,
such as ``ruleset``, are left to the caller), or newline-delimited JSON (one
record per line). Field names are the record's own (:data:`engine.FIELDS`,
engine/README.md); aliases are accepted too, as in the other adapters.

Invariants (beyond those of :mod:`adapters.base`):
- A record that is not an object, or lacks ``board``/``circuit``, is one
  :class:`LineError` with its line and pointer (``/circuits/3``); a bad field is
  a :class:`LineError` with the field's pointer (``/circuits/3/zs_ohm``) beside
  the fragment of the good fields.
- Line accounting is per record, not per physical line (a pretty-printed
  record spans many lines): the ``line`` is where the record starts.
- A member that names no field (unknown or ambiguous) is a warning, once per
  input, as a CSV column or a line key would be; the record's other members
  are taken. Two members naming one field (``zs`` and ``Zs``) are a
  ``duplicate_field`` error: neither value is taken.
- A refused member is remembered in ``Fragment.rejected`` (field → text), and
  a record's own ``rejected`` member (what :func:`engine.record_to_dict`
  writes) is carried in the same way, each entry checked.
- Text is UTF-8 (RFC 8259 §8.1), or UTF-16 found by its byte-order mark or its
  zero bytes. A string holding bytes that did not decode (U+FFFD) or a lone
  surrogate (``"\ud800"``) is an error for its member; as a board or circuit
  it rejects the record: such text never keys a circuit.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import IO, Any, ClassVar

from engine import FIELDS
from engine.records import REJECTED_KEY

from .aliases import resolve_label
from .base import AdapterOptions, Fragment, InputWarning, LineError, Result
from .cells import CellParser, CellProblem
from .encoding import checked_encoding, read_sample, sniff_unicode
from .identifiers import key_problem
from .json_stream import iter_json_records
from .name_notes import NameNotes, name_warning

__all__ = ["JsonAdapter"]


def _escape(token: str) -> str:
    return token.replace("~", "~0").replace("/", "~1")


class JsonAdapter:
    name: ClassVar[str] = "json"
    description: ClassVar[str] = ("Circuit records as JSON: a list, an object with 'circuits', "
                                  "or one record per line (NDJSON), streamed")
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
        parsers: dict[str, CellParser] = {}
        decimal_comma = bool(options.decimal_comma)
        names = NameNotes()
        for item in iter_json_records(replay, encoding, options.max_line_length):
            if item.problem is not None:
                yield LineError(line=item.line, code=item.code, pointer=item.pointer, reason=item.problem)
                continue
            yield from _record(item.line, item.pointer, item.value, parsers, decimal_comma,
                               options.max_columns, names)


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


def _record(line: int, pointer: str, value: Any, parsers: dict[str, CellParser], decimal_comma: bool,
            max_columns: int, names: NameNotes) -> Iterator[Result]:
    if not isinstance(value, dict):
        yield LineError(line=line, pointer=pointer, code="bad_record",
                        reason=f"a circuit record must be an object, not {type(value).__name__}")
        return
    if len(value) > max_columns:
        yield LineError(line=line, pointer=pointer, code="too_many_columns",
                        reason=f"the record has {len(value)} members, more than {max_columns}")
        return
    fields: dict[str, Any] = {}
    rejected: dict[str, str] = {}
    errors: list[LineError] = []
    notes: list[InputWarning] = []
    board = circuit = None
    seen: dict[str, str] = {}  # field -> the member that gave it
    for key, raw in value.items():
        where = f"{pointer}/{_escape(key)}"
        if _bad_text(key):
            errors.append(LineError(line=line, pointer=pointer, code="bad_encoding",
                                    reason=f"a member name {_bad_text(key)}"))
            continue
        if key == REJECTED_KEY:  # what a stored record carries (engine.record_to_dict)
            errors.extend(_carried_rejections(raw, rejected, line, where))
            continue
        label = resolve_label(key)
        name, unit = label.field, label.unit
        if name is None:
            note = names.first(name_warning(key, label, line=line, pointer=where))
            if note is not None:
                notes.append(note)
            continue
        if name in seen:
            errors.append(LineError(line=line, pointer=where, field=name, code="duplicate_field", column=key,
                                    reason=f"{name} is given twice in the record ({seen[name]!r} and "
                                           f"{key!r}); neither value is taken"))
            fields.pop(name, None)
            if name not in ("board", "circuit"):
                rejected[name] = f"{rejected.get(name, _shown(value[seen[name]]))} | {_shown(raw)}"
            else:
                board = None if name == "board" else board
                circuit = None if name == "circuit" else circuit
            continue
        seen[name] = key
        bad_text = _bad_text(raw)
        if bad_text is not None:
            errors.append(LineError(line=line, pointer=where, field=name, code="bad_encoding",
                                    reason=f"{name} {bad_text}"))
            if name not in ("board", "circuit"):
                rejected[name] = _shown(raw)
            continue
        if name in ("board", "circuit"):
            text = _key(raw)
            problem = key_problem(name, text) if text is not None else None
            if text is None or problem is not None:
                errors.append(LineError(line=line, pointer=where, field=name,
                                        code="bad_value" if text is None else "bad_key",
                                        reason=problem or f"{name} must be a non-empty string"))
            elif name == "board":
                board = text
            else:
                circuit = text
            continue
        cache_key = f"{name}\x00{unit or ''}"
        parser = parsers.get(cache_key)
        if parser is None:
            parser = CellParser(name, unit=unit, decimal_comma=decimal_comma)
            if len(parsers) < 1024:
                parsers[cache_key] = parser
        typed = parser.parse(raw)
        if typed is None:
            continue
        if type(typed) is CellProblem:
            errors.append(LineError(line=line, pointer=where, field=name, code="bad_value",
                                    text=typed.text, reason=typed.reason))
            rejected[name] = typed.text if typed.text is not None else _shown(raw)
        else:
            fields[name] = typed
    for name in [n for n in rejected if n in fields]:
        del rejected[name]  # a carried rejection the record's own valid value clears (as build_record)
    if board is None or circuit is None:
        missing = "board" if board is None else "circuit"
        if not any(e.field == missing for e in errors):
            yield LineError(line=line, pointer=f"{pointer}/{missing}", field=missing, code="missing_key",
                            reason=f"{missing} is required to key the circuit record")
        yield from errors
        yield from notes
        return
    if fields or rejected or not errors:
        yield Fragment(board=board, circuit=circuit, fields=fields, line=line, rejected=rejected)
    yield from errors
    yield from notes


def _shown(raw: Any) -> str:
    """A refused member's value as text that any JSON or database can hold (no lone surrogate)."""
    text = raw if isinstance(raw, str) else json.dumps(raw, ensure_ascii=False)
    text = text.encode("utf-8", "backslashreplace").decode("utf-8")
    return text if len(text) <= 200 else text[:200] + "…"


def _carried_rejections(raw: Any, rejected: dict[str, str], line: int, where: str) -> list[LineError]:
    """A record's ``rejected`` member (field → text refused): taken as it is, each entry checked."""
    if not isinstance(raw, dict):
        return [LineError(line=line, pointer=where, field=REJECTED_KEY, code="bad_value",
                          reason="rejected must be an object of field → the text refused")]
    errors: list[LineError] = []
    for name, text in raw.items():
        if name not in FIELDS or name in ("board", "circuit") or not isinstance(text, str) \
                or _bad_text(text) or _bad_text(name):
            errors.append(LineError(line=line, pointer=f"{where}/{_escape(name)}", field=REJECTED_KEY,
                                    code="bad_value", text=_shown(name),
                                    reason=f"rejected: {_shown(name)!r} is not a field name with the text "
                                           "refused for it"))
            continue
        rejected[name] = text
    return errors
