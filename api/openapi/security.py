"""Each operation's ``security``, derived from the key check itself (:mod:`api.http.auth`).

Invariants:
- Public is what :data:`api.http.auth.PUBLIC_PATHS` routes to: such an operation says
  ``security: []``. With ``OHMTALLY_AUTH=off`` every operation says ``security: []``, since
  this server then asks no one for a key; the scope a key would need is still stated.
- Every other operation needs the bearer scheme (``apiKey``) with the one scope
  :func:`api.http.auth.required_scope` asks of a request to it: the rule is asked, never
  restated. OpenAPI 3.1 lets a bearer requirement list role names, so the scope stands
  there, in ``x-ohmtally-scope``, and in a sentence of the description.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from flask import Flask
from werkzeug.exceptions import HTTPException

from api.http.auth import PUBLIC_PATHS, required_scope

__all__ = ["SCHEME", "SCOPE_EXTENSION", "apply_security", "is_public", "sample_path", "scope_for"]

SCHEME = "apiKey"  # the bearer scheme's name in components.securitySchemes (api.http.auth.init_app)
SCOPE_EXTENSION = "x-ohmtally-scope"
_PLACEHOLDER = re.compile(r"\{([^}]+)\}")
_SCOPE_SENTENCE = {
    "read": "Needs an API key with the `read` scope (or `admin`, which includes every scope).",
    "write": "Needs an API key with the `write` scope (or `admin`, which includes every scope).",
    "admin": "Needs an API key with the `admin` scope.",
}


def is_public(app: Flask, endpoint: str, method: str) -> bool:
    """Whether a public path (:data:`PUBLIC_PATHS`) is answered by ``endpoint`` for ``method``."""
    adapter = app.url_map.bind("localhost")
    for path in PUBLIC_PATHS:
        try:
            found, _args = adapter.match(path, method=method.upper())
        except HTTPException:
            continue
        if found == endpoint:
            return True
    return False


def sample_path(template: str, path_parameters: Sequence[Mapping[str, Any]]) -> str:
    """``template`` with each ``{name}`` filled by a value its schema allows (for matching only)."""
    schemas = {p["name"]: p.get("schema") or {} for p in path_parameters if p.get("in") == "path"}

    def value(match: re.Match[str]) -> str:
        schema = schemas.get(match.group(1), {})
        if schema.get("enum"):
            return str(schema["enum"][0])
        if schema.get("type") == "integer":
            return str(max(int(schema.get("minimum", 1)), 1))
        return "x"

    return _PLACEHOLDER.sub(value, template)


def scope_for(app: Flask, path: str, method: str) -> str:
    """The scope :func:`required_scope` asks of a ``method`` request to the concrete ``path``."""
    with app.test_request_context(path, method=method.upper()):
        return required_scope(app)


def apply_security(operation: dict[str, Any], *, public: bool, scope: str, auth_on: bool) -> None:
    """Set the operation's ``security``, scope extension and the scope sentence."""
    if public:
        operation["security"] = []
        operation.pop(SCOPE_EXTENSION, None)
        _add_sentence(operation, "Open to everyone: no API key.")
        return
    operation["security"] = [{SCHEME: [scope]}] if auth_on else []
    operation[SCOPE_EXTENSION] = scope
    _add_sentence(operation, _SCOPE_SENTENCE[scope])


def _add_sentence(operation: dict[str, Any], sentence: str) -> None:
    described = operation.get("description") or ""
    if sentence not in described:
        operation["description"] = f"{described}\n\n{sentence}".strip()
