"""Request headers the middleware and views read, declared on the operations that read them.

Invariants:
- ``Idempotency-Key`` (:data:`api.http.idempotency.IDEMPOTENCY_PARAMETER_DOC`) is declared
  on every state-changing operation under ``/v1/jobs``: the requests the idempotency
  middleware reserves a key for. A malformed key there is a 400; elsewhere the header is
  not read. tests/api/test_openapi_parameters.py checks this rule against the middleware
  by sending a malformed key to every operation.
- ``If-None-Match`` is declared on every operation that documents a 304: the answer is
  conditional on it (RFC 9110 §13.1.2).
- ``X-Request-Id`` (:data:`api.http.request_log.REQUEST_ID_HEADER`) is read on every request
  and declared once, in ``components.parameters``, referenced by every operation.
- A parameter the route declared itself (same ``in`` and ``name``) is never declared twice.
"""

from __future__ import annotations

from collections.abc import Mapping
from copy import deepcopy
from typing import Any

from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC
from api.http.request_log import REQUEST_ID_HEADER

__all__ = ["IF_NONE_MATCH_DOC", "REQUEST_ID_DOC", "REQUEST_ID_REF", "add_headers", "reads_idempotency_key"]

_CHANGING = frozenset({"post", "put", "patch", "delete"})
IF_NONE_MATCH_DOC: dict[str, Any] = {
    "in": "header", "name": "If-None-Match", "required": False, "schema": {"type": "string"},
    "description": "ETags of earlier answers (`\"…\"`, `W/\"…\"`, comma-separated, or `*`): the answer "
                   "is a 304 without a body while the representation still has one of them"}
REQUEST_ID_DOC: dict[str, Any] = {
    "in": "header", "name": REQUEST_ID_HEADER, "required": False, "schema": {"type": "string"},
    "description": "an id of your own for this request, echoed in the answer's X-Request-Id, in problem "
                   "bodies (`request_id`) and in the server's log line. 1–128 letters, digits, `.`, `_`, "
                   "`:` or `-` come back as sent; any other value is replaced by a fresh id (never refused)"}
REQUEST_ID_REF = "RequestId"  # a component name: apispec writes the $ref


def reads_idempotency_key(method: str, path: str) -> bool:
    """Whether the idempotency middleware reads ``Idempotency-Key`` on ``method path``."""
    return method.lower() in _CHANGING and path.startswith("/v1/jobs")


def add_headers(operation: dict[str, Any], *, method: str, path: str) -> None:
    """Declare the headers of the module's invariants that ``operation`` reads."""
    parameters: list[Any] = operation.setdefault("parameters", [])
    if reads_idempotency_key(method, path):
        _declare(parameters, deepcopy(IDEMPOTENCY_PARAMETER_DOC))
    if "304" in (operation.get("responses") or {}):
        _declare(parameters, deepcopy(IF_NONE_MATCH_DOC))
    if REQUEST_ID_REF not in parameters:
        parameters.append(REQUEST_ID_REF)


def _declare(parameters: list[Any], doc: dict[str, Any]) -> None:
    for existing in parameters:
        if (isinstance(existing, Mapping) and existing.get("in") == doc["in"]
                and str(existing.get("name", "")).lower() == doc["name"].lower()):
            return
    parameters.append(doc)
