"""What the server refuses that a schema of types alone does not say, stated in the document.

Each rule here was found by schemathesis (a request the document allowed, refused) and
states the refusal where it happens, from the code that refuses:

- No text the server reads holds U+0000 (PostgreSQL text cannot store it): every string of a
  JSON request body (``api.intake.json_document``: 422 ``nul_character``) and every string
  query parameter (``api.http.limits``: 400 ``nul_character``) says ``pattern: ^[^\\x00]*$``.
- A board or circuit in a path is a reference like one in a record (format ``reference``).
- A page ``cursor`` is one this API handed out (``api.db.repository.decode_cursor``: 400
  ``bad_cursor``): format ``page-cursor``, in the base64url alphabet.
- A text body is not blank (``api.intake.bodies``: 400 ``empty_body``); a CSV body's header
  must be one the CSV adapter recognises (format ``readings-csv``).
- A webhook URL is ``http(s)://`` with a host and no credentials, and a secret is a
  Standard Webhooks secret (``api.webhooks.targets.check_url``, ``api.webhooks.signing``).
- A body merged into a job names no ruleset but the job's (``api.routes.readings``: 422
  ``ruleset_mismatch``): there its ``ruleset`` (body and query) says so, in a copy of the
  request schema (``JobReadingsRequest``) whose ``ruleset`` lists no other ids as examples.
- A board's facts are PUT to ``…/boards/{board}``, whose body may leave ``board`` out
  (``api.routes.site``): there the body is ``BoardFactsRequest``, ``BoardIn`` without
  ``board`` required.
- What no schema can state (a value that must agree with the path, the job, another item or
  DNS) is said in words and, machine-readably, in the operation's ``x-ohmtally-refusals``
  (status, code, when): :data:`WORDS_ONLY`. An answer is such a refusal when its status is
  stated and each code it gives (of its ``errors``, else its own) is stated there. Clients and
  the fuzz test read it from the document.
- A raw upload is served as it was received, in the media type it was sent with, so a
  JSON-typed one need not parse: the JSON media types carry no schema there.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from copy import deepcopy
from typing import Any

from apispec import APISpec

from api.schemas.webhooks import SecretRotateSchema, SubscriptionCreateSchema

__all__ = [
    "NOT_BLANK",
    "NOT_BLANK_TEXT",
    "NO_NUL",
    "REFUSALS_EXTENSION",
    "WORDS_ONLY",
    "bind_board_to_path",
    "bind_ruleset_to_job",
    "body_attribute",
    "state_operation",
    "state_path_parameters",
    "state_refusals",
]

NO_NUL = "^[^\\x00]*$"
NOT_BLANK = "[^\\x09-\\x0d\\x20]"  # a character bytes.strip() keeps (api.intake.bodies: empty_body)
NOT_BLANK_TEXT = "^[^\\x00]*[^\\x00\\s][^\\x00]*$"  # something besides white space, and no U+0000
_CURSOR = "^[A-Za-z0-9_-]*$"  # base64url without padding (api.db.repository.encode_cursor); empty: none
_PORT = "(?:6553[0-5]|655[0-2][0-9]|65[0-4][0-9]{2}|6[0-4][0-9]{3}|[1-5][0-9]{4}|[0-9]{1,4})"
_WEBHOOK_URL = f"^[Hh][Tt][Tt][Pp][Ss]?://[A-Za-z0-9.-]+(?::{_PORT})?(?:[/?#][^\\x00-\\x20]*)?$"
REFUSALS_EXTENSION = "x-ohmtally-refusals"
_NOTATION_CONFLICT = (422, "notation_conflict", "an RCBO's `device` (`RCBO B20 30mA A`) and an `rcd` beside "
                      "it name different residual currents or types: neither is used")
_DUPLICATE_BOARD = (422, "duplicate_board", "`boards` lists one board twice (a list's items cannot be "
                    "made unique by one member in JSON Schema)")
_VIEW_CONFLICT = (400, "view_conflict", "`view=compact` beside a `format` other than json: the compact view "
                  "is a JSON answer, the other formats render the full verdicts")
_PREVIOUS_JOB = ((422, "previous_job_not_found",
                  "`previous_job_id` names no job of the caller's organisation (another organisation's job "
                  "is refused word for word alike)"),
                 (422, "previous_job_invalid", "`previous_job_id` names the job itself"))
#: operationId → refusals of requests the schema allows: (status, code, when). The code is the
#: problem's, or each of its ``errors``' (an answer refusing several fields lists each code).
WORDS_ONLY: Mapping[str, tuple[tuple[int, str, str], ...]] = {
    "post_verify": (_NOTATION_CONFLICT, _DUPLICATE_BOARD, _VIEW_CONFLICT),
    "get_job_verdicts": (_VIEW_CONFLICT,),
    "post_job_readings": (
        (422, "ruleset_mismatch", "the body or `?ruleset=` names a ruleset other than the job's"),
        _NOTATION_CONFLICT, _DUPLICATE_BOARD),
    "put_board": ((422, "board_mismatch", "the body's `board` is not the path's `{board}` (leave it out)"),
                  (422, "missing_key", "the path's `{board}` is a word for an empty cell (`-`, `none`, "
                                       "`null`) or a cell word (`N/A`, `LIM`), which names no board")),
    "post_jobs": _PREVIOUS_JOB,
    "patch_job": _PREVIOUS_JOB,
    "post_webhooks": ((422, "target_not_allowed", "the URL's host does not resolve, now, to public addresses "
                                                  "only (unless the server allows private ones)"),),
}
_JSON_TYPES = ("application/json", "application/merge-patch+json")
_TEXT_BODIES = ("text/csv", "text/plain", "application/x-ndjson")
# 32 random bytes made for this document; an example, never a secret of anyone's
_EXAMPLE_SECRET = "whsec_" + "dG7kQ2vX9pLw4RzN8bYc1HfJ6sMeA3uTqK0oVgWiZ5E="
_FIELDS: dict[tuple[type[Any], str], dict[str, Any]] = {
    (SubscriptionCreateSchema, "url"): {"pattern": _WEBHOOK_URL, "description": (
        "where the events are POSTed: http:// or https://, a host name or IPv4 address (and port), no "
        "user or password. The host must resolve, when the subscription is made and before every "
        "send, to public addresses only (422 `target_not_allowed`), unless the server allows private ones")},
    (SubscriptionCreateSchema, "secret"): {"format": "whsec", "examples": [_EXAMPLE_SECRET]},
    (SecretRotateSchema, "secret"): {"format": "whsec", "examples": [_EXAMPLE_SECRET]},
}


def body_attribute(_converter: Any, field: Any, **_kwargs: Any) -> dict[str, Any]:
    """apispec attribute function: the statements of :data:`_FIELDS` on their schema fields."""
    return dict(_FIELDS.get((type(getattr(field, "parent", None)), getattr(field, "name", "")), {}))


def state_operation(operation: dict[str, Any], schemas: Mapping[str, Any]) -> None:
    """Apply the module's rules to one operation (and the request schemas it refers to)."""
    for parameter in operation.get("parameters", []):
        if isinstance(parameter, dict) and parameter.get("in") == "query":
            _state_query(parameter)
    body = operation.get("requestBody") or {}
    for media_type, entry in (body.get("content") or {}).items():
        schema = entry.get("schema")
        if not isinstance(schema, dict):
            continue
        if media_type in _JSON_TYPES:
            for node in _string_nodes(schema, schemas, set()):
                if not any(key in node for key in ("pattern", "enum", "const")):
                    node["pattern"] = NO_NUL
        elif media_type in _TEXT_BODIES and schema.get("type") == "string":
            schema.setdefault("pattern", NOT_BLANK)
            if media_type == "text/csv":
                schema.setdefault("format", "readings-csv")
    for response in (operation.get("responses") or {}).values():
        content = response.get("content") if isinstance(response, dict) else None
        if isinstance(content, dict) and content.get("*/*", {}).get("schema", {}).get("format") == "binary":
            for media_type in ("application/json", "application/problem+json"):
                content.setdefault(media_type, {})  # no schema: the bytes as received, JSON or not


_JOB_RULESET = ("the job's ruleset (`ruleset` of `GET /v1/jobs/{job_id}`), or left out: a job is verified "
                "under one ruleset, and another is a 422 `ruleset_mismatch` (the body is kept, rejected)")


_PATH_BOARD = "the board named in the path; left out, it is that board (another is a 422 `board_mismatch`)"


def bind_board_to_path(operation: dict[str, Any], path: str, spec: APISpec) -> None:
    """A board's facts PUT to ``…/boards/{board}`` may leave ``board`` out: the path names it."""
    if not path.endswith("/boards/{board}"):
        return
    entry = ((operation.get("requestBody") or {}).get("content") or {}).get("application/json") or {}
    if not (entry.get("schema") or {}).get("$ref", "").endswith("/BoardIn"):
        return
    schemas = spec.components.schemas
    if "BoardFactsRequest" not in schemas:
        bound = deepcopy(schemas["BoardIn"])
        bound["required"] = [name for name in bound.get("required", []) if name != "board"] or None
        if bound["required"] is None:
            del bound["required"]
        bound["properties"]["board"] = {**bound["properties"]["board"], "description": _PATH_BOARD}
        spec.components.schema("BoardFactsRequest", component=bound)
    entry["schema"] = {"$ref": "#/components/schemas/BoardFactsRequest"}


def bind_ruleset_to_job(operation: dict[str, Any], path: str, spec: APISpec) -> None:
    """On an operation into one job, state that ``ruleset`` can only be the job's."""
    if "{job_id}" not in path:
        return
    for parameter in operation.get("parameters", []):
        if isinstance(parameter, dict) and (parameter.get("in"), parameter.get("name")) == (
                "query", "ruleset"):
            parameter["description"] = _JOB_RULESET
    content = (operation.get("requestBody") or {}).get("content") or {}
    entry = content.get("application/json") or {}
    ref = (entry.get("schema") or {}).get("$ref", "")
    if not ref.endswith("/VerifyRequest"):
        return
    schemas = spec.components.schemas
    if "JobReadingsRequest" not in schemas:
        bound = deepcopy(schemas["VerifyRequest"])
        bound.setdefault("properties", {})["ruleset"] = {"type": "string", "pattern": NO_NUL,
                                                          "description": _JOB_RULESET}
        spec.components.schema("JobReadingsRequest", component=bound)
    entry["schema"] = {"$ref": "#/components/schemas/JobReadingsRequest"}


def state_path_parameters(parameters: list[dict[str, Any]]) -> None:
    """A board or circuit named in a path is a reference, as in a record (format ``reference``)."""
    for parameter in parameters:
        if parameter.get("in") == "path" and parameter.get("name") in ("board", "circuit"):
            parameter.setdefault("schema", {}).update(format="reference", pattern=NOT_BLANK_TEXT)
            parameter.setdefault("description", f"a {parameter['name']} reference, percent-encoded")


def state_refusals(operation: dict[str, Any]) -> None:
    """State the operation's :data:`WORDS_ONLY` refusals in ``x-ohmtally-refusals`` and in words."""
    refusals = WORDS_ONLY.get(str(operation.get("operationId")), ())
    if not refusals:
        return
    operation[REFUSALS_EXTENSION] = [{"status": status, "code": code, "when": when}
                                     for status, code, when in refusals]
    lines = "".join(f"\n- {status} `{code}`: {when}" for status, code, when in refusals)
    operation["description"] = (operation.get("description") or "") + (
        "\n\nRefused although the schema allows it (no schema can say it):" + lines)


def _state_query(parameter: dict[str, Any]) -> None:
    schema = parameter.setdefault("schema", {})
    if parameter.get("name") == "cursor":
        schema.update(format="page-cursor", pattern=_CURSOR)
    elif "string" in _types(schema) and not any(key in schema for key in ("pattern", "enum", "const")):
        schema["pattern"] = NO_NUL


def _types(schema: Mapping[str, Any]) -> list[str]:
    found = schema.get("type", [])
    return [found] if isinstance(found, str) else list(found)


def _string_nodes(schema: dict[str, Any], schemas: Mapping[str, Any],
                  seen: set[str]) -> Iterator[dict[str, Any]]:
    """Every schema node under ``schema`` that admits a string, following ``$ref`` once each."""
    ref = schema.get("$ref")
    if isinstance(ref, str):
        name = ref.rpartition("/")[2]
        if name not in seen and isinstance(schemas.get(name), dict):
            seen.add(name)
            yield from _string_nodes(schemas[name], schemas, seen)
        return
    if "string" in _types(schema):
        yield schema
    for key in ("properties", "patternProperties", "$defs"):
        for child in (schema.get(key) or {}).values():
            if isinstance(child, dict):
                yield from _string_nodes(child, schemas, seen)
    for key in ("items", "additionalProperties", "not"):
        if isinstance(schema.get(key), dict):
            yield from _string_nodes(schema[key], schemas, seen)
    for key in ("anyOf", "oneOf", "allOf", "prefixItems"):
        for child in schema.get(key) or []:
            if isinstance(child, dict):
                yield from _string_nodes(child, schemas, seen)
