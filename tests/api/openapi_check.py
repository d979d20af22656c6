"""Checking a response against the app's own OpenAPI 3.1 document.

The response schema of the operation (by path template, method and status,
falling back to ``default``) is validated with openapi-schema-validator's
OAS 3.1 validator (JSON Schema 2020-12 plus OpenAPI's formats), with the
document's ``components`` in scope so ``$ref`` resolves.
"""

from __future__ import annotations

import json
import re
from functools import lru_cache
from typing import Any

from openapi_schema_validator import OAS31Validator

__all__ = ["ResponseMismatch", "check_response", "operation_for"]


class ResponseMismatch(AssertionError):
    pass


@lru_cache(maxsize=8)
def _templates(paths: tuple[str, ...]) -> list[tuple[re.Pattern[str], str]]:
    out = []
    for template in paths:
        pattern = re.sub(r"\\\{[^}]+\\\}", "[^/]+", re.escape(template))
        out.append((re.compile(f"^{pattern}$"), template))
    return out


def operation_for(spec: dict[str, Any], method: str, path: str) -> tuple[str, dict[str, Any]] | None:
    for pattern, template in _templates(tuple(spec["paths"])):
        if pattern.match(path):
            operation = spec["paths"][template].get(method.lower())
            return (template, operation) if operation else None
    return None


def _resolve(spec: dict[str, Any], node: dict[str, Any]) -> dict[str, Any]:
    while "$ref" in node:
        parts = node["$ref"].lstrip("#/").split("/")
        target: Any = spec
        for part in parts:
            target = target[part]
        node = target
    return node


def check_response(spec: dict[str, Any], method: str, path: str, status: int,
                   content_type: str | None, body: bytes) -> bool:
    """Validate one response; returns False when the path is not one of the API's operations."""
    found = operation_for(spec, method, path)
    if found is None:
        return False
    template, operation = found
    responses = operation["responses"]
    documented = responses.get(str(status)) or responses.get("default")
    if documented is None:
        raise ResponseMismatch(f"{method} {template}: status {status} is not documented")
    documented = _resolve(spec, documented)
    content = documented.get("content")
    if not content:
        if body:
            raise ResponseMismatch(f"{method} {template} {status}: a body where none is documented")
        return True
    media_type = (content_type or "").split(";")[0].strip().lower()
    entry = content.get(media_type) or content.get("*/*")
    if entry is None:
        raise ResponseMismatch(f"{method} {template} {status}: {media_type} is not among {sorted(content)}")
    schema = entry.get("schema", {})
    if schema.get("format") == "binary":
        return True
    if not media_type.endswith("json"):  # a text rendering (CSV, XML, table): documented is enough
        return schema.get("type") == "string" or _mismatch(method, template, status, media_type)
    instance = json.loads(body)
    root = {**schema, "components": spec.get("components", {})}
    validator = OAS31Validator(root, format_checker=OAS31Validator.FORMAT_CHECKER)
    errors = sorted(validator.iter_errors(instance), key=lambda e: list(e.absolute_path))
    if errors:
        first = errors[0]
        raise ResponseMismatch(f"{method} {template} {status}: {first.message} at "
                               f"/{'/'.join(map(str, first.absolute_path))}")
    return True


def _mismatch(method: str, template: str, status: int, media_type: str) -> bool:
    raise ResponseMismatch(f"{method} {template} {status}: {media_type} has no string schema")
