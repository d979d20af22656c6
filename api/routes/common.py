"""Helpers the views share: the raw body, a JSON document by its schema, ruleset lookup, body docs."""

from __future__ import annotations

from typing import Any

from flask import Response, current_app, request
from marshmallow import Schema, ValidationError

from api.errors import ApiError
from api.intake.bodies import JSON_MEDIA_TYPE, read_json_document, validation_problem
from api.schemas.fields import COMPACT_MEDIA_TYPE
from api.schemas.records import VerifyRequestSchema
from api.settings import Settings
from engine import DEFAULT_RULESET, EngineError, Ruleset, builtin_ruleset_ids, load_ruleset

__all__ = [
    "NOTICE_HEADER",
    "READINGS_BODY_DOC",
    "chosen_ruleset_id",
    "compact_doc",
    "compact_response",
    "json_body",
    "json_body_doc",
    "json_body_document",
    "raw_body",
    "resolve_ruleset",
    "settings",
    "view_of",
]

# CSV has no place for prose, so every rendered answer also carries the caution in a header.
NOTICE_HEADER = "Ohmtally-Notice"
_TEXT_BODY = {"schema": {"type": "string"}}
READINGS_BODY_DOC: dict[str, Any] = {
    "required": True,
    "description": "JSON circuits (all or nothing: any bad field → 422), or CSV / key=value "
                   "lines / NDJSON read through an adapter (bad rows → `rejected`, 200).",
    "content": {
        JSON_MEDIA_TYPE: {"schema": VerifyRequestSchema},
        "text/csv": _TEXT_BODY,
        "text/plain": _TEXT_BODY,
        "application/x-ndjson": _TEXT_BODY,
    },
}


def settings() -> Settings:
    found: Settings = current_app.extensions["ohmtally.settings"]
    return found


def raw_body() -> tuple[bytes, str, str | None]:
    """The body exactly as received, its media type (lower case) and declared charset."""
    body = request.get_data(cache=True)
    charset = request.mimetype_params.get("charset")
    return body, (request.mimetype or "").lower(), charset


def resolve_ruleset(ruleset_id: str | None, *, pointer: str | None = None,
                    parameter: str | None = None) -> Ruleset:
    """A built-in ruleset by id, or a 404 problem listing the valid ids."""
    wanted = ruleset_id or DEFAULT_RULESET
    if wanted not in builtin_ruleset_ids():
        where: dict[str, str] = {"pointer": pointer} if pointer else {"parameter": parameter or "ruleset"}
        raise ApiError(404, "unknown_ruleset",
                       f"there is no ruleset {wanted!r}; choose one of {', '.join(builtin_ruleset_ids())}",
                       errors=[{**where, "code": "unknown_ruleset", "reason": f"unknown ruleset {wanted!r}"}],
                       extra={"choices": list(builtin_ruleset_ids())})
    try:
        return load_ruleset(wanted)
    except EngineError as exc:  # a packaged ruleset that does not load is our bug, said plainly
        raise ApiError(500, "bad_ruleset", exc.message) from exc


def _json_bytes(media_types: tuple[str, ...]) -> bytes:
    """The request's body when its media type is one of ``media_types``, else 415."""
    body, media_type, _charset = raw_body()
    if media_type not in media_types:
        sent = media_type or "a body without a Content-Type"
        raise ApiError(415, "unsupported_media_type", f"send {' or '.join(media_types)}, not {sent}",
                       errors=[{"parameter": "Content-Type", "code": "unsupported_media_type",
                                "reason": f"expected {media_types[0]}"}],
                       extra={"choices": list(media_types)})
    return body


def json_body_document(media_types: tuple[str, ...] = (JSON_MEDIA_TYPE,)) -> Any:
    """The request's JSON document: 415 for another media type, 400 for one that does not parse,
    422 for one the server will not take (api.intake.json_document)."""
    return read_json_document(_json_bytes(media_types))


def json_body(schema: Schema, *, media_types: tuple[str, ...] = (JSON_MEDIA_TYPE,)) -> dict[str, Any]:
    """The request's JSON document loaded by ``schema``: 415 for another media type, 400 for a
    document that does not parse, 422 naming every bad field by pointer."""
    body = _json_bytes(media_types)
    try:
        loaded: dict[str, Any] = schema.load(read_json_document(body, max_rows=settings().max_rows))
    except ValidationError as exc:
        raise validation_problem(exc) from None
    return loaded


def json_body_doc(schema: type[Schema], media_types: tuple[str, ...] = (JSON_MEDIA_TYPE,)) -> dict[str, Any]:
    """The OpenAPI ``requestBody`` of a view that reads :func:`json_body`."""
    return {"required": True, "content": {m: {"schema": schema} for m in media_types}}


def chosen_ruleset_id(query_id: str | None, body_id: str | None) -> tuple[str | None, dict[str, str]]:
    """The ruleset the request names, and where (for the pointer of a 404)."""
    if query_id and body_id and query_id != body_id:
        raise ApiError(422, "conflicting_ruleset",
                       f"the query names ruleset {query_id!r} and the body {body_id!r}; name one",
                       errors=[{"pointer": "/ruleset", "code": "conflicting_ruleset",
                                "reason": f"differs from ?ruleset={query_id}"}])
    if body_id:
        return body_id, {"pointer": "/ruleset"}
    return query_id, {"parameter": "ruleset"}


def view_of(query: dict[str, Any]) -> str:
    """The view asked for; compact with a text ``format`` is refused, never silently dropped."""
    view = str(query.get("view") or "full")
    if view == "compact" and query.get("format") not in (None, "json"):
        raise ApiError(400, "view_conflict", f"view=compact is a JSON answer; format={query['format']} "
                                             "renders the full verdicts: ask for one or the other",
                       errors=[{"pointer": "/query/view", "code": "view_conflict",
                                "reason": "view=compact goes with format=json (or no format)"}])
    return view


def compact_response(body: dict[str, Any], headers: dict[str, str]) -> Response:
    """A compact answer's document (its schema's dump) in the compact media type."""
    return Response(current_app.json.dumps(body), status=200, content_type=COMPACT_MEDIA_TYPE,
                    headers=headers)


def compact_doc(schema: type) -> dict[str, Any]:
    """The 200 answer's compact media type, for ``@blp.doc(responses=…)``."""
    return {COMPACT_MEDIA_TYPE: {"schema": schema}}
