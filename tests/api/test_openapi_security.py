"""The document's per-operation security says what the key check does, operation by operation.

Each test sends real requests to every operation the served document lists, with keys on:
no key, a key of each scope. RFC 6750 §3 gives the answers: 401 with a Bearer challenge
without a (valid) key, 403 ``insufficient_scope`` with a key lacking the scope. The document
is right when a public operation (``security: []``) never answers 401 and every other one
does, and when the scope it names is exactly the least one the server lets through.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from typing import Any

import pytest
from flask import Flask

from api.http.auth import PUBLIC_PATHS
from api.openapi.security import SCHEME, SCOPE_EXTENSION
from tests.api.keyring import bearer, issue_key, unique_org

_PLACEHOLDER = re.compile(r"\{([^}]+)\}")
_SCOPES = ("read", "write", "admin")


def _operations(spec: dict[str, Any]) -> Iterator[tuple[str, str, dict[str, Any]]]:
    for path, item in spec["paths"].items():
        for method, operation in item.items():
            if isinstance(operation, dict) and "responses" in operation:
                yield path, method.upper(), operation


def _concrete(path: str, spec: dict[str, Any]) -> str:
    """A path the router matches: ids of 1, the first of an enum, a board and circuit named x."""
    parameters = {p["name"]: p.get("schema", {}) for item in spec["paths"].values()
                  for p in item.get("parameters", []) if p.get("in") == "path"}
    return _PLACEHOLDER.sub(lambda m: str((parameters.get(m.group(1), {}).get("enum") or [1])[0]), path)


def test_every_operation_states_its_security_and_id(auth_app: Flask) -> None:
    """Every operation has an operationId (unique), a security list, and a scope unless public."""
    spec = auth_app.test_client().get("/v1/openapi.json").get_json()
    ids = [op["operationId"] for _p, _m, op in _operations(spec)]
    assert len(ids) == len(set(ids)) and len(ids) >= 25
    for path, method, operation in _operations(spec):
        assert "security" in operation, (method, path)
        if operation["security"]:
            scope = operation[SCOPE_EXTENSION]
            assert operation["security"] == [{SCHEME: [scope]}], (method, path)
            assert f"`{scope}` scope" in operation["description"], (method, path)


def test_public_operations_need_no_key_and_the_rest_need_one(auth_app: Flask) -> None:
    """Without Authorization: security [] never answers 401; every other operation answers 401 Bearer."""
    client = auth_app.test_client()
    spec = client.get("/v1/openapi.json").get_json()
    for path, method, operation in _operations(spec):
        answer = client.open(_concrete(path, spec), method=method)
        if operation["security"]:
            assert answer.status_code == 401, (method, path, answer.status_code)
            assert answer.headers["WWW-Authenticate"].startswith("Bearer"), (method, path)
        else:
            assert answer.status_code != 401, (method, path)


@pytest.mark.parametrize("held", _SCOPES)
def test_the_stated_scope_is_the_one_the_server_asks(auth_app: Flask, held: str) -> None:
    """A key of scope ``held`` gets 403 insufficient_scope exactly where the stated scope is another
    (``admin`` includes the other two; ``write`` does not include ``read``: api.http.auth)."""
    client = auth_app.test_client()
    spec = client.get("/v1/openapi.json").get_json()
    key = bearer(issue_key(auth_app, unique_org("scopes"), held)[1])
    enough = {"read": {"read"}, "write": {"write"}, "admin": set(_SCOPES)}[held]
    for path, method, operation in _operations(spec):
        if not operation["security"]:
            continue
        answer = client.open(_concrete(path, spec), method=method, headers=key)
        refused = answer.status_code == 403 and answer.get_json()["code"] == "insufficient_scope"
        assert refused == (operation[SCOPE_EXTENSION] not in enough), (held, method, path, answer.status_code)


def test_with_keys_off_no_operation_asks_for_one(client: Any) -> None:
    """OHMTALLY_AUTH=off: every operation says security [] (none is asked) and still names its scope."""
    spec = client.get("/v1/openapi.json").get_json()
    for path, method, operation in _operations(spec):
        assert operation["security"] == [], (method, path)
        template = re.compile(_PLACEHOLDER.sub("[^/]+", path) + "$")
        public = any(template.match(public_path) for public_path in PUBLIC_PATHS)
        assert (SCOPE_EXTENSION in operation) is not public, (method, path)
