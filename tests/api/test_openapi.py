"""The OpenAPI document, the routes, health, request ids and the JSON log."""

from __future__ import annotations

import json
import logging
import re

import pytest
from flask import Flask
from flask.testing import FlaskClient
from openapi_spec_validator import validate

from engine import FIELDS, __version__
from engine.record_notation import NOTATION_INPUTS


def _route_template(rule: str) -> str:
    return re.sub(r"<(?:[^:>]+:)?([^>]+)>", r"{\1}", rule)


def test_document_is_valid_openapi_3_1(client: FlaskClient) -> None:
    """GET /v1/openapi.json is an OpenAPI 3.1 document that openapi-spec-validator accepts."""
    response = client.get("/v1/openapi.json")
    assert response.status_code == 200
    spec = response.get_json()
    assert spec["openapi"].startswith("3.1")
    validate(spec)


def test_every_route_is_documented_and_every_documented_route_exists(app: Flask, client: FlaskClient) -> None:
    """The app's url_map and the document's paths list the same (path, method) pairs."""
    spec = client.get("/v1/openapi.json").get_json()
    documented = {(path, method.upper()) for path, ops in spec["paths"].items() for method in ops
                  if method in {"get", "post", "put", "patch", "delete"}}
    routed = set()
    for rule in app.url_map.iter_rules():
        if rule.endpoint == "static" or rule.endpoint.startswith("api-docs."):
            continue
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            routed.add((_route_template(rule.rule), method))
    assert routed == documented
    assert ("/v1/verify", "POST") in routed and ("/v1/jobs/{job_id}/readings", "POST") in routed


def test_record_schema_has_every_engine_field(client: FlaskClient) -> None:
    """The request record schema lists exactly engine.fields.FIELDS and the trade-notation inputs
    (device, cable, rcd), and no other names (other names are read as nothing, with a warning)."""
    spec = client.get("/v1/openapi.json").get_json()
    circuit = spec["components"]["schemas"]["CircuitIn"]
    assert set(circuit["properties"]) == set(FIELDS) | NOTATION_INPUTS
    assert circuit["additionalProperties"] is False
    assert set(circuit["required"]) == {"board", "circuit"}
    assert circuit["properties"]["zs_ohm"]["type"][:2] == ["number", "string"]


def test_problem_responses_are_documented_as_problem_json(client: FlaskClient) -> None:
    """Error responses are documented with the RFC 9457 media type application/problem+json."""
    spec = client.get("/v1/openapi.json").get_json()
    default = spec["components"]["responses"]["DEFAULT_ERROR"]
    assert list(default["content"]) == ["application/problem+json"]


def test_health_is_live_and_names_the_version(client: FlaskClient) -> None:
    """GET /v1/health answers 200 with the package version."""
    response = client.get("/v1/health")
    assert response.status_code == 200
    assert response.get_json() == {"status": "ok", "version": __version__, "api": "v1"}


def test_request_id_is_echoed_or_made(client: FlaskClient) -> None:
    """A sane X-Request-Id comes back unchanged; a missing or unsafe one is replaced by a fresh id."""
    assert client.get("/v1/health", headers={"X-Request-Id": "abc-123"}).headers["X-Request-Id"] == "abc-123"
    made = client.get("/v1/health").headers["X-Request-Id"]
    assert re.fullmatch(r"[0-9a-f]{32}", made)
    unsafe = client.get("/v1/health", headers={"X-Request-Id": "a b<script>"}).headers["X-Request-Id"]
    assert unsafe != "a b<script>" and re.fullmatch(r"[0-9a-f]{32}", unsafe)


def test_problem_body_carries_the_request_id(client: FlaskClient) -> None:
    """A problem response names the request id that the log line carries too."""
    response = client.get("/v1/jobs/999", headers={"X-Request-Id": "trace-7"})
    assert response.status_code == 404
    assert response.get_json()["request_id"] == "trace-7"


def test_request_log_is_json_with_request_id(app: Flask, client: FlaskClient,
                                             caplog: pytest.LogCaptureFixture) -> None:
    """Each request writes one JSON log line with method, path, status and the request id."""
    from api.http.request_log import JsonFormatter

    logger = logging.getLogger("ohmtally.api")
    logger.setLevel(logging.INFO)
    records: list[str] = []
    formatter = JsonFormatter()

    class Keep(logging.Handler):
        def emit(self, record: logging.LogRecord) -> None:
            records.append(formatter.format(record))

    handler = Keep()
    logger.addHandler(handler)
    try:
        client.get("/v1/health", headers={"X-Request-Id": "log-1"})
    finally:
        logger.removeHandler(handler)
    line = json.loads(records[-1])
    assert line["request_id"] == "log-1"
    assert (line["method"], line["path"], line["status"]) == ("GET", "/v1/health", 200)


def test_unknown_route_and_method_are_problems(client: FlaskClient) -> None:
    """An unknown path is a 404 problem; a wrong method a 405 problem with Allow."""
    missing = client.get("/v1/nothing-here")
    assert missing.status_code == 404 and missing.mimetype == "application/problem+json"
    wrong = client.delete("/v1/verify")
    assert wrong.status_code == 405 and wrong.mimetype == "application/problem+json"
    assert "POST" in wrong.headers["Allow"]
