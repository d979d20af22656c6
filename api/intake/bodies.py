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
  empty 400, not UTF-8 400, malformed JSON 400, wrong content type 415,
  unknown adapter/profile 404, no recognisable CSV header 422.
"""

from __future__ import annotations

import codecs
import io
import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from marshmallow import ValidationError

from api.errors import ApiError, messages_to_errors
from api.intake.objects import records_from_objects
from api.schemas.records import load_verify_request
from engine import CircuitRecord, Reading, build_record, record_to_dict

__all__ = ["JSON_MEDIA_TYPE", "Intake", "Item", "read_body", "read_json_document"]

JSON_MEDIA_TYPE = "application/json"
_UTF8_ONLY = frozenset({"application/json", "application/x-ndjson"})  # RFC 8259 §8.1


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
    ruleset: str | None = None
    adapter: str | None = None
    profile: str | None = None
    built: list[CircuitRecord] | None = None  # one record per item, already built from the body

    def records(self) -> list[CircuitRecord]:
        """Items merged per circuit and per field (later wins), in first-seen order."""
        if (self.built is not None and len(self.built) == len(self.items)
                and len({r.key for r in self.built}) == len(self.built)):
            return list(self.built)  # nothing to merge: the records the body was checked with
        merged: dict[tuple[str, str], dict[str, Any]] = {}
        for item in self.items:
            merged.setdefault((item.board, item.circuit), {}).update(item.fields)
        out: list[CircuitRecord] = []
        for (board, circuit), values in merged.items():
            record, errors = build_record({"board": board, "circuit": circuit, **values})
            for error in errors:  # only if a stored JSON form does not read back: a bug, shown
                self.rejected.append({"pointer": f"/{board}/{circuit}/{error.field}",
                                      "code": error.code, "reason": error.reason})
            if record is not None:
                out.append(record)
        return out


def _json_value(value: Any) -> Any:
    return value.to_json() if isinstance(value, Reading) else value


def _decode_utf8(body: bytes, what: str) -> str:
    try:
        return body.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ApiError(400, "not_utf8", f"the {what} body is not UTF-8: byte {exc.start} "
                       f"(0x{body[exc.start]:02x}) cannot be decoded",
                       errors=[{"pointer": "", "code": "not_utf8",
                                "reason": f"invalid UTF-8 at byte offset {exc.start}"}]) from None


def read_json_document(body: bytes) -> Any:
    """Bytes → a JSON value, or the problem that says why not (empty, not UTF-8, malformed)."""
    if not body.strip():
        raise ApiError(400, "empty_body", "the request body is empty; send a JSON document",
                       errors=[{"pointer": "", "code": "empty_body", "reason": "no content"}])
    text = _decode_utf8(body, "JSON")
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise ApiError(400, "malformed_json",
                       f"the body is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}",
                       errors=[{"pointer": "", "line": exc.lineno, "code": "malformed_json",
                                "reason": f"{exc.msg} (column {exc.colno})"}]) from None


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


def _read_json(body: bytes) -> Intake:
    document = read_json_document(body)
    try:
        loaded = load_verify_request(document)
    except ValidationError as exc:
        raise validation_problem(exc) from None
    records, rejected = records_from_objects(loaded["circuits"], pointer="/circuits")
    if rejected:
        raise ApiError(422, "invalid_circuits",
                       f"{len(rejected)} field(s) of the circuits could not be taken; nothing was "
                       "verified or merged (JSON bodies are all or nothing)", errors=rejected)
    intake = Intake(ruleset=loaded.get("ruleset"), built=records)
    for index, record in enumerate(records):
        values = record_to_dict(record)
        values.pop("board")
        values.pop("circuit")
        intake.items.append(Item(record.board, record.circuit, values, f"/circuits/{index}"))
    return intake


def _pick_adapter(media_type: str, adapter_name: str | None) -> Any:
    from adapters import AdapterError
    from adapters.registry import adapter_for_media_type, get_adapter, list_adapters

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


def _read_adapter(body: bytes, media_type: str, charset: str | None, adapter_name: str | None,
                  profile: str | None, profile_dir: str | None) -> Intake:
    from adapters import AdapterError, AdapterOptions, Fragment, LineError

    if not body.strip():
        raise ApiError(400, "empty_body", "the request body is empty",
                       errors=[{"line": 1, "code": "empty_body", "reason": "no content"}])
    if media_type in _UTF8_ONLY:
        _decode_utf8(body, media_type)
    elif charset:
        try:
            codecs.lookup(charset)
        except LookupError:
            raise ApiError(415, "unknown_charset", f"charset {charset!r} is not known",
                           errors=[{"parameter": "Content-Type", "code": "unknown_charset",
                                    "reason": f"unknown charset {charset!r}"}]) from None
    adapter = _pick_adapter(media_type, adapter_name)
    intake = Intake(adapter=getattr(adapter, "name", adapter_name), profile=profile)
    options = AdapterOptions(profile=profile, profile_dir=profile_dir, encoding=charset)
    header_errors: list[Any] = []
    try:
        for result in adapter.read(io.BytesIO(body), options):
            if isinstance(result, Fragment):
                values = {k: _json_value(v) for k, v in result.fields.items()
                          if k not in ("board", "circuit") and v is not None}
                intake.items.append(Item(result.board, result.circuit, values, f"line {result.line}"))
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
              profile_dir: str | None = None) -> Intake:
    """The readings in a request body, or the :class:`ApiError` saying why there are none."""
    if media_type == JSON_MEDIA_TYPE and adapter in (None, ""):
        return _read_json(body)
    return _read_adapter(body, media_type, charset, adapter, profile, profile_dir)
