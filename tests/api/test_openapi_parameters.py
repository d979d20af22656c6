"""Every parameter an operation reads is in the document, with the constraints the server keeps.

Checked against the running app, operation by operation: a malformed ``Idempotency-Key`` is
a 400 exactly where the document declares the header; ``If-None-Match`` gives a 304 exactly
where it is declared; a query name the document does not list is refused where the view
checks its query (and nothing listed is refused as unknown); ids in paths have the ranges
of their converters (job ids 1 … 2^53 − 1, other ids 32-bit).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from typing import Any

from flask.testing import FlaskClient

from api.app import DatabaseIdConverter, JobIdConverter
from api.db.models.jobs import MAX_JOB_ID
from api.http.idempotency import IDEMPOTENCY_HEADER
from api.http.request_log import REQUEST_ID_HEADER

_PLACEHOLDER = re.compile(r"\{([^}]+)\}")
_JOB = {"reference": "PAR-1", "site": "Parameter test site (invented)"}


def _operations(spec: dict[str, Any]) -> Iterator[tuple[str, str, dict[str, Any]]]:
    for path, item in spec["paths"].items():
        for method, operation in item.items():
            if isinstance(operation, dict) and "responses" in operation:
                yield path, method.upper(), operation


def _declared(operation: dict[str, Any], spec: dict[str, Any], where: str) -> set[str]:
    found = set()
    for parameter in operation.get("parameters", []):
        if "$ref" in parameter:
            parameter = spec["components"]["parameters"][parameter["$ref"].rpartition("/")[2]]
        if parameter["in"] == where:
            found.add(parameter["name"])
    return found


def _concrete(path: str, job_id: int, spec: dict[str, Any]) -> str:
    enums = {p["name"]: p["schema"]["enum"] for item in spec["paths"].values()
             for p in item.get("parameters", []) if p.get("in") == "path" and "enum" in p.get("schema", {})}

    def value(match: re.Match[str]) -> str:
        name = match.group(1)
        return str(job_id) if name == "job_id" else str(enums.get(name, ["1"])[0])

    return _PLACEHOLDER.sub(value, path)


def test_a_malformed_idempotency_key_is_refused_exactly_where_declared(client: FlaskClient) -> None:
    """Idempotency-Key `two words` (a space is no visible ASCII): 400 bad_idempotency_key on every operation
    that declares the header, and on no other (the middleware does not read it there)."""
    spec = client.get("/v1/openapi.json").get_json()
    job_id = client.post("/v1/jobs", json=_JOB).get_json()["id"]
    declaring = 0
    for path, method, operation in _operations(spec):
        answer = client.open(_concrete(path, job_id, spec), method=method, json={},
                             headers={IDEMPOTENCY_HEADER: "two words"})
        refused = answer.status_code == 400 and answer.get_json()["code"] == "bad_idempotency_key"
        declared = IDEMPOTENCY_HEADER in _declared(operation, spec, "header")
        declaring += declared
        assert refused == declared, (method, path, answer.status_code)
    assert declaring >= 6  # POST jobs, PATCH job and circuit, readings, PUT installation and board


def test_if_none_match_answers_304_exactly_where_declared(client: FlaskClient) -> None:
    """With the ETag of a first answer, If-None-Match is a 304 on the operations declaring it (RFC 9110
    §13.1.2), and changes nothing elsewhere."""
    spec = client.get("/v1/openapi.json").get_json()
    job_id = client.post("/v1/jobs", json=_JOB).get_json()["id"]
    for path, method, operation in _operations(spec):
        if method != "GET":
            continue
        target = _concrete(path, job_id, spec)
        first = client.get(target)
        if first.status_code != 200:
            continue
        again = client.get(target, headers={"If-None-Match": first.headers.get("ETag") or '"x"'})
        declared = "If-None-Match" in _declared(operation, spec, "header")
        assert (again.status_code == 304) == declared, (path, again.status_code)
        assert declared == ("304" in operation["responses"]), path


def test_no_query_name_is_refused_that_the_document_lists(client: FlaskClient) -> None:
    """A query name the document does not list is refused (422 naming it) where the view checks its query,
    and every name it lists passes that check: the document lists exactly what the view reads."""
    spec = client.get("/v1/openapi.json").get_json()
    job_id = client.post("/v1/jobs", json=_JOB).get_json()["id"]
    strict = 0
    for path, method, operation in _operations(spec):
        target = _concrete(path, job_id, spec)
        probe = client.open(target, method=method, query_string={"not_a_parameter": "1"}, json={})
        unknown = probe.status_code == 422 and any(
            e.get("parameter") == "not_a_parameter" for e in probe.get_json().get("errors", []))
        if not unknown:
            continue
        strict += 1
        for name in _declared(operation, spec, "query"):
            answer = client.open(target, method=method, query_string={name: "1"}, json={})
            errors = answer.get_json().get("errors", []) if answer.is_json else []
            assert not any(e.get("parameter") == name and "Unknown" in e.get("reason", "") for e in errors), (
                method, path, name)
    assert strict >= 6  # jobs, circuits, verdicts, readings, verify, deliveries, facts


def test_the_query_arguments_of_readings_and_verdicts_are_documented(client: FlaskClient) -> None:
    """The parameters @blp.doc(parameters=[…]) used to hide: readings' adapter/profile/ruleset beside its
    Idempotency-Key; verdicts' limit/cursor/board/format beside If-None-Match."""
    spec = client.get("/v1/openapi.json").get_json()
    readings = spec["paths"]["/v1/jobs/{job_id}/readings"]["post"]
    verdicts = spec["paths"]["/v1/jobs/{job_id}/verdicts"]["get"]
    assert {"adapter", "profile", "ruleset"} <= _declared(readings, spec, "query")
    assert IDEMPOTENCY_HEADER in _declared(readings, spec, "header")
    assert {"limit", "cursor", "board", "format"} <= _declared(verdicts, spec, "query")
    assert "If-None-Match" in _declared(verdicts, spec, "header")


def test_every_operation_reads_and_declares_x_request_id(client: FlaskClient) -> None:
    """X-Request-Id is declared on every operation, and echoed by each (api.http.request_log)."""
    spec = client.get("/v1/openapi.json").get_json()
    job_id = client.post("/v1/jobs", json=_JOB).get_json()["id"]
    for path, method, operation in _operations(spec):
        assert REQUEST_ID_HEADER in _declared(operation, spec, "header"), (method, path)
        answer = client.open(_concrete(path, job_id, spec), method=method,
                             headers={REQUEST_ID_HEADER: "trace-42"})
        assert answer.headers[REQUEST_ID_HEADER] == "trace-42", (method, path)


def test_path_ids_have_the_ranges_of_their_converters(client: FlaskClient) -> None:
    """job_id: 1 … 2^53 − 1 (JobIdConverter); every other integer id 0 … 2^31 − 1 (DatabaseIdConverter)."""
    spec = client.get("/v1/openapi.json").get_json()
    assert MAX_JOB_ID == 2**53 - 1
    job, other = JobIdConverter(None), DatabaseIdConverter(None)
    for path, item in spec["paths"].items():
        for parameter in item.get("parameters", []):
            schema = parameter["schema"]
            if parameter["name"] == "job_id":
                assert (schema["minimum"], schema["maximum"]) == (job.min, job.max) == (1, MAX_JOB_ID), path
            elif schema.get("type") == "integer":
                assert (schema["minimum"], schema["maximum"]) == (0, other.max) == (0, 2**31 - 1), path
