"""A request body (JSON circuits, or CSV / lines / NDJSON through an adapter) → readings.

Invariants:
- JSON (``application/json``) is a typed document: any bad field fails the
  whole body with a problem (422) listing every bad field by JSON pointer, so
  a program's bug is caught at once. CSV, lines and NDJSON come from meters
  and loggers, row by row: the good rows are taken and each bad row or cell
  is listed in ``rejected`` with its line number (200).
- Each accepted input item (a JSON circuit, an input line) becomes one
  :class:`Item`: its key, its fields in JSON form (``Reading.to_json()``) and
  where it came from; items merge per circuit and per field, later winning.
- Every way a body can be unreadable is an :class:`ApiError` with a status:
  empty 400, not UTF-8 400, malformed JSON 400, JSON the server will not take
  (too deep, a repeated member name, a number out of range, NUL, a lone
  surrogate) 422 with a pointer (:mod:`api.intake.json_document`), wrong content
  type or a charset that is no character encoding 415, unknown adapter 404, a
  profile that is not a name of the profile directory 404, no recognisable CSV
  header 422, over a row, line or value limit 413.
- Limits hold identically for every media type and adapter (:class:`BodyLimits`):
  a body read line by line (csv, lines, NDJSON) is scanned for its lines before
  any adapter runs (:mod:`api.intake.line_scan`); a JSON document is bounded by
  its arrays, objects and values before it is parsed; and the adapter's output is
  counted as it streams, stopping at the first row past ``max_rows`` — so a body
  over a limit is refused whole, before memory grows, and nothing of it is merged.
- Boards and circuits never carry U+0000 or a lone surrogate into the database,
  whatever an adapter lets through: such a row is rejected with its line.
"""

from __future__ import annotations

import codecs
import io
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from marshmallow import ValidationError

from adapters import (
    AdapterError,
    AdapterOptions,
    BoardFacts,
    Fragment,
    InputWarning,
    InstallationFacts,
    LineError,
)
from adapters.registry import adapter_for_media_type, get_adapter, list_adapters
from api.db.merging import merge_fields
from api.errors import ApiError, messages_to_errors
from api.intake.json_document import JsonSyntaxError, parse_strict
from api.intake.json_records import screen_json_records
from api.intake.line_scan import BodyLimits, as_utf8, scan_lines
from api.intake.site_document import FactPart, read_site_document
from engine import (
    BoardRecord,
    CircuitRecord,
    Reading,
    Site,
    build_board,
    build_installation,
    build_record,
    record_to_dict,
)
from engine.intake import MARKS_KEY, REJECTED_KEY

__all__ = [
    "DEFAULT_LIMITS",
    "JSON_MEDIA_TYPE",
    "BodyLimits",
    "Intake",
    "Item",
    "read_body",
    "read_json_document",
    "site_of_facts",
]

JSON_MEDIA_TYPE = "application/json"
DEFAULT_LIMITS = BodyLimits(max_bytes=16 * 1024 * 1024, max_rows=20000, max_line_bytes=8192)
_UTF8_ONLY = frozenset({"application/json", "application/x-ndjson"})  # RFC 8259 §8.1
# A profile is a name from the profile directory: never a path (`/etc/…`, `../x`, `x.json`).
_PROFILE_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_-]*(?:\.[A-Za-z0-9_-]+)*$")
# Codecs that decode text but are no character encoding of a file: escapes, IDNA, UTF-7.
_NOT_CHARSETS = frozenset({"unicode-escape", "raw-unicode-escape", "punycode", "idna", "utf-7",
                           "undefined"})


@dataclass(frozen=True, slots=True)
class Item:
    board: str
    circuit: str
    fields: Mapping[str, Any]  # JSON form, without board/circuit
    location: str  # "/circuits/3" or "line 12"


@dataclass(slots=True)
class Intake:
    items: list[Item] = field(default_factory=list)
    rejected: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[dict[str, Any]] = field(default_factory=list)  # names read as nothing
    facts: list[FactPart] = field(default_factory=list)  # the installation's and boards' facts stated
    ruleset: str | None = None
    adapter: str | None = None
    profile: str | None = None
    built: list[CircuitRecord] | None = None  # one record per item, already built from the body

    def site(self) -> Site:
        """The installation and boards the body stated, merged by the stored records' rule."""
        return site_of_facts(self.facts)

    def records(self) -> list[CircuitRecord]:
        """Items merged per circuit and per field (later wins), in first-seen order."""
        if (self.built is not None and len(self.built) == len(self.items)
                and len({r.key for r in self.built}) == len(self.built)):
            return list(self.built)  # nothing to merge: the records the body was checked with
        merged: dict[tuple[str, str], dict[str, Any]] = {}
        for item in self.items:  # the stored records' rule: values, refusals and marks, later wins
            key = (item.board, item.circuit)
            merged[key] = merge_fields(merged.get(key, {}), item.fields)
        out: list[CircuitRecord] = []
        for (board, circuit), values in merged.items():
            record, errors = build_record({"board": board, "circuit": circuit, **values})
            for error in errors:  # only if a stored JSON form does not read back: a bug, shown
                self.rejected.append({"pointer": f"/{board}/{circuit}/{error.field}",
                                      "code": error.code, "reason": error.reason})
            if record is not None:
                out.append(record)
        return out


def site_of_facts(facts: Iterable[FactPart]) -> Site:
    """Facts (stored JSON form) merged per scope and board, later winning, built into a site."""
    merged: dict[tuple[str, str], dict[str, Any]] = {}
    for part in facts:
        key = (part.scope, part.board)
        merged[key] = merge_fields(merged.get(key, {}), part.fields)
    installation = None
    boards: list[BoardRecord] = []
    for (scope, board), fields in merged.items():
        if scope == "installation":
            installation, _errors = build_installation(fields)
        else:
            record, _errors = build_board({**fields, "board": board})
            if record is not None:
                boards.append(record)
    return Site.of(installation, boards)


def _json_value(value: Any) -> Any:
    return value.to_json() if isinstance(value, Reading) else value


def _fact_part(result: BoardFacts | InstallationFacts) -> FactPart:
    """An adapter's facts line as the installation's or a board's facts, in the stored JSON form."""
    fields: dict[str, Any] = {k: _json_value(v) for k, v in result.fields.items()
                              if k != "board" and v is not None}
    if result.rejected:
        fields[REJECTED_KEY] = dict(result.rejected)
    if result.marks:
        fields[MARKS_KEY] = dict(result.marks)
    if isinstance(result, BoardFacts):
        return FactPart("board", result.board, fields, f"line {result.line}")
    return FactPart("installation", "", fields, f"line {result.line}")


def _decode_utf8(body: bytes, what: str) -> str:
    try:
        return body.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ApiError(400, "not_utf8", f"the {what} body is not UTF-8: byte {exc.start} "
                       f"(0x{body[exc.start]:02x}) cannot be decoded",
                       errors=[{"pointer": "", "code": "not_utf8",
                                "reason": f"invalid UTF-8 at byte offset {exc.start}"}]) from None


def read_json_document(body: bytes, *, max_rows: int = DEFAULT_LIMITS.max_rows) -> Any:
    """Bytes → a JSON value, or the problem that says why not: empty, not UTF-8 or malformed
    (400); too large (413); too deep, a repeated member, a number out of range, NUL or a lone
    surrogate (422, a pointer each: :mod:`api.intake.json_document`)."""
    if not body.strip():
        raise ApiError(400, "empty_body", "the request body is empty; send a JSON document",
                       errors=[{"pointer": "", "code": "empty_body", "reason": "no content"}])
    text = _decode_utf8(body, "JSON")
    try:
        parsed = parse_strict(body, text, max_rows=max_rows)
    except JsonSyntaxError as exc:
        raise ApiError(400, "malformed_json",
                       f"the body is not valid JSON: {exc.msg} at line {exc.line} column {exc.column}",
                       errors=[{"pointer": "", "line": exc.line, "code": "malformed_json",
                                "reason": f"{exc.msg} (column {exc.column})"}]) from None
    if parsed.too_large:
        raise ApiError(413, "too_many_values", parsed.problems[0]["reason"], errors=parsed.problems)
    if parsed.problems:
        raise ApiError(422, "invalid_json", f"the JSON document has {len(parsed.problems)} problem(s): "
                       + ", ".join(sorted({p["code"] for p in parsed.problems})),
                       errors=parsed.problems)
    return parsed.value


def _unknown_field_names(errors: list[dict[str, Any]]) -> list[str]:
    names = []
    for error in errors:
        if error["code"] == "unknown_field":
            name = error["pointer"].rsplit("/", 1)[-1]
            error["reason"] = f"unknown field {name!r}"
            names.append(name)
    return names


def validation_problem(exc: ValidationError, *, what: str = "body") -> ApiError:
    errors = messages_to_errors(exc.messages)
    unknown = _unknown_field_names(errors)
    detail = f"the {what} has {len(errors)} invalid field(s)"
    if unknown:
        detail += "; unknown: " + ", ".join(sorted(set(unknown)))
    return ApiError(422, "invalid_body", detail, errors=errors)


def _read_json(body: bytes, limits: BodyLimits) -> Intake:
    document = read_json_document(body, max_rows=limits.max_rows)
    circuits = document.get("circuits") if isinstance(document, dict) else None
    if isinstance(circuits, list) and len(circuits) > limits.max_rows:
        raise _too_many_rows(len(circuits), limits.max_rows, {"pointer": f"/circuits/{limits.max_rows}"})
    found = read_site_document(document)
    if found.rejected:
        noted = {"warnings": found.warnings} if found.warnings else None
        if found.refused_for == "shape":  # JSON types and structure: the schema's refusal
            raise ApiError(422, "invalid_body", f"the body has {len(found.rejected)} invalid field(s); "
                           "nothing was verified or merged", errors=found.rejected, extra=noted)
        raise ApiError(422, "invalid_circuits",
                       f"{len(found.rejected)} field(s) of the document could not be taken; nothing was "
                       "verified or merged (JSON bodies are all or nothing)", errors=found.rejected,
                       extra=noted)
    intake = Intake(ruleset=found.ruleset, built=found.records, warnings=found.warnings,
                    facts=list(found.facts))
    count = sum(len(part.fields) for part in found.facts)
    for index, record in enumerate(found.records):
        values = record_to_dict(record)
        values.pop("board")
        values.pop("circuit")
        count += len(values)
        if count > limits.max_values:
            raise _too_many_values(limits.max_values, {"pointer": f"/circuits/{index}"})
        intake.items.append(Item(record.board, record.circuit, values, f"/circuits/{index}"))
    return intake


def _pick_adapter(media_type: str, adapter_name: str | None) -> Any:
    if adapter_name:
        try:
            return get_adapter(adapter_name)
        except AdapterError as exc:
            raise adapter_problem(exc, parameter="adapter") from None
    try:
        found = adapter_for_media_type(media_type) if media_type else None
    except AdapterError:
        found = None
    if found is None:
        types = sorted({t for a in list_adapters() for t in a.get("media_types", ())} | {JSON_MEDIA_TYPE})
        raise ApiError(415, "unsupported_media_type",
                       f"no adapter reads {media_type or 'a body without a Content-Type'}; "
                       f"send one of {', '.join(types)} or name one with ?adapter=",
                       errors=[{"parameter": "Content-Type", "code": "unsupported_media_type",
                                "reason": f"{media_type or '(none)'} is not supported"}],
                       extra={"choices": types})
    return found


def adapter_problem(exc: Exception, *, parameter: str) -> ApiError:
    code = str(getattr(exc, "code", "adapter_error"))
    details = dict(getattr(exc, "details", {}) or {})
    message = str(getattr(exc, "message", exc))
    extra: dict[str, Any] = {}
    if "choices" in details:
        extra["choices"] = list(details["choices"])
    if code in ("unknown_adapter", "unknown_profile"):
        param = "profile" if code == "unknown_profile" else parameter
        return ApiError(404, code, message, extra=extra,
                        errors=[{"parameter": param, "code": code, "reason": message}])
    return ApiError(422, code, message, extra=extra,
                    errors=[{"parameter": "profile", "code": code, "reason": message,
                             **({"pointer": str(details["pointer"])} if "pointer" in details else {})}])


def _too_many_values(limit: int, where: dict[str, Any]) -> ApiError:
    return ApiError(413, "too_many_values", f"the body carries more than {limit} field values "
                    "(OHMTALLY_MAX_VALUES), which one post may merge; split it into several posts",
                    errors=[{**where, "code": "too_many_values", "reason": f"more than {limit} values"}])


def _too_many_rows(count: int | None, limit: int, where: dict[str, Any]) -> ApiError:
    seen = f"{count} rows" if count is not None else f"more than {limit} rows"
    return ApiError(413, "too_many_rows", f"the body has {seen}; the most one body may carry is {limit} "
                    "(OHMTALLY_MAX_ROWS); split it into several posts",
                    errors=[{**where, "code": "too_many_rows", "reason": f"more than {limit} rows"}])


def _check_charset(charset: str | None) -> None:
    """415 unless ``charset`` names a character encoding (never rot13, zlib_codec, uu_codec …)."""
    if not charset:
        return
    try:
        name = codecs.lookup(charset).name
        b"  ".decode(name, "replace")  # a transfer codec (base64, zlib, rot13, uu) is a LookupError here
    except (LookupError, UnicodeError):
        name = None
    if name is None or name in _NOT_CHARSETS:
        raise ApiError(415, "unknown_charset", f"charset {charset!r} is not a character encoding this "
                       "server reads (utf-8, utf-16, cp1252, iso-8859-15 …)",
                       errors=[{"parameter": "Content-Type", "code": "unknown_charset",
                                "reason": f"{charset!r} is not a character encoding"}])


def _check_profile(profile: str | None, adapter: str, profile_dir: str | None) -> None:
    """404 unless ``profile`` is a plain name (the adapters resolve names in the profile directory;
    a path such as ``/etc/x.json`` or ``../x`` is never opened, and the answer does not depend on
    whether such a file exists)."""
    if profile is None or (_PROFILE_NAME.match(profile) and not profile.lower().endswith(".json")):
        return
    choices = [p for a in list_adapters(profile_dir) if a["name"] == adapter for p in a["profiles"]]
    raise ApiError(404, "unknown_profile", "a profile is named by its name in the profile directory, "
                   "not by a path", extra={"choices": choices},
                   errors=[{"parameter": "profile", "code": "unknown_profile",
                            "reason": "not a profile name (letters, digits, '-', '_', '.')"}])


def _bad_key(result: Fragment) -> dict[str, Any] | None:
    """A rejected entry for a fragment whose board or circuit the database cannot key."""
    for name in ("board", "circuit"):
        text = getattr(result, name)
        if "\x00" in text or any("\ud800" <= ch <= "\udfff" for ch in text):
            return {"line": result.line, "field": name, "code": "bad_key",
                    "reason": f"the {name} reference holds U+0000 or a lone surrogate; no circuit can be "
                              "keyed by it"}
    return None


def _read_adapter(body: bytes, media_type: str, charset: str | None, adapter_name: str | None,
                  profile: str | None, profile_dir: str | None, limits: BodyLimits,
                  decimal_comma: bool | None = None) -> Intake:
    if not body.strip():
        raise ApiError(400, "empty_body", "the request body is empty",
                       errors=[{"line": 1, "code": "empty_body", "reason": "no content"}])
    if media_type in _UTF8_ONLY:
        _decode_utf8(body, media_type)
    _check_charset(charset)
    adapter = _pick_adapter(media_type, adapter_name)
    name = str(getattr(adapter, "name", adapter_name))
    _check_profile(profile, name, profile_dir)
    intake = Intake(adapter=name, profile=profile)
    encoding = charset
    if name == "json":  # screened whole or per line, never handed a hazard (api.intake.json_records)
        readable = as_utf8(body, charset)
        encoding = "utf-8" if readable is not body else charset
        readable, intake.rejected = screen_json_records(readable, limits)
    else:
        scan_lines(body, limits, charset=charset)
        readable = body
    options = AdapterOptions(profile=profile, profile_dir=profile_dir, encoding=encoding,
                             decimal_comma=decimal_comma)
    header_errors: list[Any] = []
    count = 0
    try:
        for result in adapter.read(io.BytesIO(readable), options):
            if isinstance(result, Fragment):
                refused = _bad_key(result)
                if refused is not None:
                    intake.rejected.append(refused)
                    continue
                if len(intake.items) >= limits.max_rows:  # stop the stream at the first row too many
                    raise _too_many_rows(None, limits.max_rows, {"line": result.line})
                values = {k: _json_value(v) for k, v in result.fields.items()
                          if k not in ("board", "circuit") and v is not None}
                if result.rejected:  # refused cells are remembered on the record (api.db.merging)
                    values[REJECTED_KEY] = dict(result.rejected)
                if result.marks:
                    values[MARKS_KEY] = dict(result.marks)
                count += len(values)
                if count > limits.max_values:
                    raise _too_many_values(limits.max_values, {"line": result.line})
                intake.items.append(Item(result.board, result.circuit, values, f"line {result.line}"))
            elif isinstance(result, BoardFacts | InstallationFacts):
                intake.facts.append(_fact_part(result))
            elif isinstance(result, InputWarning):
                intake.warnings.append(result.as_dict())
            elif isinstance(result, LineError):
                intake.rejected.append(result.as_dict())
                if result.code == "unrecognised_header":
                    header_errors.append(result)
    except AdapterError as exc:
        raise adapter_problem(exc, parameter="adapter") from None
    if header_errors and not intake.items:
        seen = header_errors[0].text or ""
        raise ApiError(422, "unrecognised_header",
                       f"{header_errors[0].reason}; columns seen: {seen}",
                       errors=[e.as_dict() for e in header_errors], extra={"columns_seen": seen})
    return intake


def read_body(body: bytes, media_type: str, *, charset: str | None = None,
              adapter: str | None = None, profile: str | None = None,
              profile_dir: str | None = None, limits: BodyLimits = DEFAULT_LIMITS,
              decimal_comma: bool | None = None) -> Intake:
    """The readings in a request body, or the :class:`ApiError` saying why there are none.

    ``limits`` bound the rows and lines (the body's size was bounded as it was read);
    ``decimal_comma`` is the client's declaration (``?decimal=``) for the text formats."""
    if media_type == JSON_MEDIA_TYPE and adapter in (None, ""):
        return _read_json(body, limits)
    return _read_adapter(body, media_type, charset, adapter, profile, profile_dir, limits, decimal_comma)
