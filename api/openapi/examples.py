"""Recorded requests and answers, one file per operation, shown in the document as examples.

Invariants:
- ``api/openapi/examples/<operationId>.json`` holds real traffic of one operation, recorded
  by tests/api/test_openapi_examples.py from an end-to-end scenario on an invented site
  (``OHMTALLY_RECORD_EXAMPLES=1``); the same test checks that every operation has one and
  that each still fits the document. Nothing here writes a file.
- A file is ``{"operationId", "exchanges": [{"name", "summary", "request", "response"}]}``;
  a request or response body is the JSON value for JSON media types and the text otherwise.
  A body too large to show (Swagger UI's bundle) is ``{"external": "<relative URL>"}`` and
  becomes an Example Object's ``externalValue``.
- An exchange becomes an Example Object (``summary``, ``description``: the request line,
  ``value``) under its media type: the request body's, and the answer's under the answer's
  status. A status the operation only documents by ``$ref`` (or by ``default``) gets its own
  copy of that response, so a shared component is never changed.
- A query parameter's recorded values become its schema's ``examples`` (so a page's
  ``cursor`` shows one this API handed out).
- The files are read once per process (they are package data); the document holds them as
  read, shared by every app of the process, and never changes them.
"""

from __future__ import annotations

import functools
import json
from collections.abc import Callable, Mapping
from copy import deepcopy
from importlib import resources
from typing import Any
from urllib.parse import urlencode

__all__ = ["EXAMPLES_PACKAGE", "attach_examples", "example_file_name", "load_examples"]

EXAMPLES_PACKAGE = "api.openapi"
_FOLDER = "examples"


def example_file_name(operation_id: str) -> str:
    return f"{operation_id}.json"


@functools.cache
def load_examples() -> Mapping[str, Mapping[str, Any]]:
    """operationId → its recorded file (every ``*.json`` of the examples folder)."""
    folder = resources.files(EXAMPLES_PACKAGE).joinpath(_FOLDER)
    found: dict[str, Mapping[str, Any]] = {}
    if not folder.is_dir():
        return found
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".json"):
            recorded = json.loads(entry.read_text(encoding="utf-8"))
            found[str(recorded["operationId"])] = recorded
    return found


def _media(content_type: str | None) -> str:
    return (content_type or "").split(";")[0].strip().lower()


def _request_line(request: Mapping[str, Any]) -> str:
    query = request.get("query") or {}
    line = f"{request['method']} {request['path']}" + (f"?{urlencode(query, doseq=True)}" if query else "")
    shown = {k: v for k, v in (request.get("headers") or {}).items()}
    if request.get("content_type"):
        shown["Content-Type"] = request["content_type"]
    return "`" + line + "`" + "".join(f"  \n`{name}: {value}`" for name, value in shown.items())


def _example(exchange: Mapping[str, Any], part: Mapping[str, Any]) -> dict[str, Any]:
    found: dict[str, Any] = {"summary": exchange.get("summary") or exchange["name"],
                             "description": "Recorded: " + _request_line(exchange["request"])
                             + f" → {exchange['response']['status']}"}
    body = part.get("body")
    if isinstance(body, Mapping) and set(body) == {"external"}:
        found["externalValue"] = body["external"]
    else:
        found["value"] = body
    return found


_Components = Callable[[str], Mapping[str, Any]]  # a response component by name


def _response_for(operation: dict[str, Any], status: int, component: _Components) -> dict[str, Any] | None:
    responses: dict[str, Any] = operation.setdefault("responses", {})
    documented = (responses.get(str(status)) or responses.get(f"{str(status)[0]}XX")
                  or responses.get("default"))
    if documented is None:
        return None
    if isinstance(documented, str) or "$ref" in documented or str(status) not in responses:
        target: Any = documented
        while isinstance(target, str) or "$ref" in target:  # a copy of the shared component, never it
            target = component(target if isinstance(target, str) else target["$ref"].rpartition("/")[2])
        documented = responses[str(status)] = deepcopy(dict(target))
    found: dict[str, Any] = documented
    return found


def _query_examples(operation: dict[str, Any], query: Mapping[str, Any]) -> None:
    for parameter in operation.get("parameters", []):
        if isinstance(parameter, dict) and parameter.get("in") == "query" and parameter.get("name") in query:
            value = query[parameter["name"]]
            schema = parameter.setdefault("schema", {})
            if schema.get("type") in ("integer", "number") and isinstance(value, str):
                value = int(value) if schema["type"] == "integer" else float(value)
            elif schema.get("type") == "boolean" and isinstance(value, str):
                value = value == "true"
            found = schema.setdefault("examples", [])
            if value not in found:
                found.append(value)


def attach_examples(operation: dict[str, Any], recorded: Mapping[str, Any] | None,
                    component: _Components) -> None:
    """Put the recorded exchanges of one operation into it as Example Objects."""
    if recorded is None:
        return
    for exchange in recorded.get("exchanges", []):
        request, response = exchange["request"], exchange["response"]
        _query_examples(operation, request.get("query") or {})
        body = operation.get("requestBody") or {}
        entry = (body.get("content") or {}).get(_media(request.get("content_type")))
        if entry is not None and "body" in request:
            entry.setdefault("examples", {})[exchange["name"]] = _example(exchange, request)
        documented = _response_for(operation, int(response["status"]), component)
        if documented is None:
            continue
        content = documented.get("content")
        media = _media(response.get("content_type"))
        if not content or "body" not in response:
            documented["description"] = (documented.get("description") or "") + (
                "  \n" + _example(exchange, response)["description"])
            continue
        target = content.get(media) or content.get("*/*")
        if target is not None:
            target.setdefault("examples", {})[exchange["name"]] = _example(exchange, response)
