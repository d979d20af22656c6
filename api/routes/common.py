"""Helpers the views share: the raw body, ruleset lookup, JSON responses, body documentation."""

from __future__ import annotations

from typing import Any

from flask import Response, current_app, jsonify, request

from api.errors import ApiError
from api.intake.bodies import JSON_MEDIA_TYPE
from api.schemas.records import VerifyRequestSchema
from api.settings import Settings
from engine import DEFAULT_RULESET, EngineError, Ruleset, builtin_ruleset_ids, load_ruleset

__all__ = [
    "READINGS_BODY_DOC",
    "json_response",
    "raw_body",
    "resolve_ruleset",
    "settings",
]

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


def json_response(data: Any, status: int = 200, headers: dict[str, str] | None = None) -> Response:
    response = jsonify(data)
    response.status_code = status
    for name, value in (headers or {}).items():
        response.headers[name] = value
    return response
