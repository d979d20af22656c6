"""Hostile and broken JSON on every JSON route: never a 500, never "last one wins", always a pointer.

Sources: RFC 8259 (JSON) §4 (names SHOULD be unique), §6 (numbers: no NaN or Infinity; beyond
IEEE 754 double range and precision they are not interoperable), §8.2 (lone surrogates);
RFC 7493 (I-JSON) §2.2 (integers within ±(2**53 − 1)) and §2.3 (member names MUST be unique);
RFC 9457 (problem details); RFC 6901 (JSON Pointer). PostgreSQL's documentation (Character
Types: "the character with code zero cannot be stored") for U+0000.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

pytestmark = pytest.mark.postgres

DEEP = 1000
SAFE = 2**53 - 1


def _job(client: FlaskClient) -> int:
    made = client.post("/v1/jobs", json={"reference": "J", "site": "s"})
    assert made.status_code == 201
    job_id: int = made.get_json()["id"]
    return job_id


def _routes(client: FlaskClient) -> list[tuple[str, str, str]]:
    """(method, path, media type) of every route that reads a JSON document."""
    job_id = _job(client)
    client.post(f"/v1/jobs/{job_id}/readings", data=b"board,circuit,zs_ohm\nDB1,1,0.4\n",
                content_type="text/csv")
    return [("POST", "/v1/verify", "application/json"),
            ("POST", f"/v1/jobs/{job_id}/readings", "application/json"),
            ("POST", "/v1/jobs", "application/json"),
            ("PATCH", f"/v1/jobs/{job_id}", "application/merge-patch+json"),
            ("PATCH", f"/v1/jobs/{job_id}/circuits/DB1/1", "application/merge-patch+json"),
            ("POST", "/v1/webhooks", "application/json")]


def _problem(response: Any, status: int, code: str) -> dict[str, Any]:
    assert response.status_code == status, response.get_data(as_text=True)[:300]
    assert response.mimetype == "application/problem+json"
    body: dict[str, Any] = response.get_json()
    assert body["code"] == code, body
    return body


def test_deep_nesting_is_a_422_with_a_pointer_on_every_json_route(hook_app: Flask) -> None:
    """1,000 nested arrays (Python's json recursed into them: a 500) → 422 invalid_json/too_deep."""
    client = hook_app.test_client()
    for method, path, media in _routes(client):
        for body in (b"[" * DEEP + b"]" * DEEP,
                     b'{"circuits": [{"board": ' + b"[" * DEEP + b"]" * DEEP + b"}]}",
                     b'{"a": ' + b'{"b": ' * DEEP + b"1" + b"}" * DEEP + b"}"):
            answer = client.open(path, method=method, data=body, content_type=media)
            problem = _problem(answer, 422, "invalid_json")
            assert problem["errors"][0]["code"] == "too_deep", (method, path)
            assert problem["errors"][0]["pointer"].count("/") == 64  # the first container past 64 levels


def test_the_deep_pointer_names_the_member(client: FlaskClient) -> None:
    """The pointer of a too-deep value walks the document's own names and indices (RFC 6901)."""
    body = b'{"circuits": [{"board": "DB1"}, {"circuit": ' + b"[" * 70 + b"]" * 70 + b"}]}"
    problem = _problem(client.post("/v1/verify", data=body, content_type="application/json"), 422,
                       "invalid_json")
    assert problem["errors"][0]["pointer"].startswith("/circuits/1/circuit/0/0/")


@pytest.mark.parametrize(("number", "code"), [
    ("9" * 5000, "number_out_of_range"),  # Python's int() refuses 4,300+ digits: it was a 500
    (str(2**64), "number_out_of_range"),  # orjson would have made it 1.8446744073709552e19
    (str(SAFE + 1), "number_out_of_range"),
    (str(-SAFE - 1), "number_out_of_range"),
    ("1e400", "number_out_of_range"),  # not infinity
    ("-1e400", "number_out_of_range"),
    ("NaN", "not_a_number"),
    ("-Infinity", "not_a_number"),
])
def test_numbers_out_of_range_are_refused_never_turned_into_floats(hook_app: Flask, number: str,
                                                                   code: str) -> None:
    """Integers beyond ±(2**53 − 1), numbers beyond a double, NaN/Infinity → 422 with the pointer."""
    client = hook_app.test_client()
    for method, path, media in _routes(client):
        if "/circuits/" in path:
            body = '{"external_ref": ' + number + "}"
            pointer = "/external_ref"
        elif path.endswith(("/readings", "/verify")):
            body = '{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": ' + number + "}]}"
            pointer = "/circuits/0/zs_ohm"
        else:
            body = '{"reference": ' + number + ', "site": "s"}'
            pointer = "/reference"
        problem = _problem(client.open(path, method=method, data=body, content_type=media), 422,
                           "invalid_json")
        assert [(e["pointer"], e["code"]) for e in problem["errors"]] == [(pointer, code)], (method, path)


def test_numbers_at_the_edge_of_the_range_are_taken_exactly(client: FlaskClient) -> None:
    """2**53 − 1 is within I-JSON's range (RFC 7493 §2.2), and 1.7976931348623157e308 is a double."""
    made = client.post("/v1/jobs", data=json.dumps({"reference": "R", "site": "s", "external_ref": None}),
                       content_type="application/json")
    job_id = made.get_json()["id"]
    body = {"circuits": [{"board": "DB1", "circuit": str(SAFE), "zs_ohm": 1.7976931348623157e308}]}
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=json.dumps(body),
                         content_type="application/json")
    assert answer.status_code in (200, 422)
    if answer.status_code == 422:  # the engine may find 1.8e308 Ω implausible: that is a value, not JSON
        assert answer.get_json()["code"] == "invalid_circuits"


@pytest.mark.parametrize(("text", "code"), [("\\ud800", "lone_surrogate"), ("a\\udfffb", "lone_surrogate"),
                                            ("DB\\u00001", "nul_character")])
def test_lone_surrogates_and_nul_are_422_with_the_pointer(hook_app: Flask, backend: str, text: str,
                                                          code: str) -> None:
    """"\\ud800" (not a character) and "\\u0000" (PostgreSQL text cannot hold it) → 422 with the
    pointer; nothing stored."""
    client = hook_app.test_client()
    for method, path, media in _routes(client):
        if "/circuits/" in path:
            body, pointer = '{"external_ref": "' + text + '"}', "/external_ref"
        elif path.endswith(("/readings", "/verify")):
            body, pointer = '{"circuits": [{"board": "' + text + '", "circuit": "1"}]}', "/circuits/0/board"
        else:
            body, pointer = '{"reference": "' + text + '", "site": "s"}', "/reference"
        problem = _problem(client.open(path, method=method, data=body, content_type=media), 422,
                           "invalid_json")
        assert [(e["pointer"], e["code"]) for e in problem["errors"]] == [(pointer, code)], (method, path)
    assert len(client.get("/v1/jobs?limit=500").get_json()["items"]) == 1  # only _routes' own job


def test_a_valid_surrogate_pair_is_one_character(client: FlaskClient) -> None:
    """"\\ud83d\\udd0c" is one character (U+1F50C), not a lone surrogate: taken."""
    made = client.post("/v1/jobs", data='{"reference": "plug \\ud83d\\udd0c", "site": "s"}',
                       content_type="application/json")
    assert made.status_code == 201 and made.get_json()["reference"] == "plug \U0001f50c"


def test_duplicate_member_names_are_422_with_a_pointer_on_every_json_route(hook_app: Flask) -> None:
    """A name twice in one object is refused with the repeated member's pointer; the last never wins."""
    client = hook_app.test_client()
    for method, path, media in _routes(client):
        if "/circuits/" in path:
            body, pointer = '{"external_ref": "a", "external_ref": "b"}', "/external_ref"
        elif path.endswith(("/readings", "/verify")):
            body = '{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": 0.4, "zs_ohm": 9.9}]}'
            pointer = "/circuits/0/zs_ohm"
        elif path == "/v1/webhooks":
            body = '{"url": "http://127.0.0.1:9/", "url": "http://127.0.0.1:8/", "events": ["job.created"]}'
            pointer = "/url"
        else:
            body, pointer = '{"reference": "a", "reference": "b", "site": "s"}', "/reference"
        problem = _problem(client.open(path, method=method, data=body, content_type=media), 422,
                           "invalid_json")
        assert [(e["pointer"], e["code"]) for e in problem["errors"]] == [(pointer, "duplicate_member")]


def test_every_problem_is_listed_in_document_order(client: FlaskClient) -> None:
    """Several problems in one document → one entry each, in the order they appear."""
    body = ('{"circuits": [{"board": "DB1", "circuit": "1", "circuit": "2"}, '
            '{"board": "\\u0000", "circuit": "3", "zs_ohm": 1e999}]}')
    problem = _problem(client.post("/v1/verify", data=body, content_type="application/json"), 422,
                       "invalid_json")
    assert [(e["pointer"], e["code"]) for e in problem["errors"]] == [
        ("/circuits/0/circuit", "duplicate_member"), ("/circuits/1/board", "nul_character"),
        ("/circuits/1/zs_ohm", "number_out_of_range")]


def test_a_refused_json_readings_body_is_kept_as_a_rejected_upload(client: FlaskClient) -> None:
    """A readings body refused for its JSON (a repeated member) is stored, marked rejected, named."""
    job_id = _job(client)
    body = b'{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": 0.4, "zs_ohm": 9.9}]}'
    problem = _problem(client.post(f"/v1/jobs/{job_id}/readings", data=body, content_type="application/json"),
                       422, "invalid_json")
    uploads = client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]
    assert [u["id"] for u in uploads] == [problem["upload"]["id"]] and uploads[0]["status"] == "rejected"
    assert client.get(f"/v1/jobs/{job_id}/uploads/{uploads[0]['id']}").get_data() == body
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []


def test_ndjson_lines_that_hurt_are_rejected_by_line_and_the_good_ones_kept(client: FlaskClient,
                                                                           backend: str) -> None:
    """NDJSON (the json adapter): a deep, a duplicated, a NUL-keyed and a 5,000-digit line are each
    rejected with their line; the lines around them are merged (a 500 before)."""
    job_id = _job(client)
    lines = [b'{"board": "DB1", "circuit": "1", "zs_ohm": 0.41}',
             b'{"board": "DB1", "circuit": "2", "zs_ohm": ' + b"[" * DEEP + b"]" * DEEP + b"}",
             b'{"board": "DB1", "circuit": "3", "zs_ohm": 0.3, "zs_ohm": 0.9}',
             b'{"board": "DB\\u00001", "circuit": "4", "zs_ohm": 0.3}',
             b'{"board": "DB1", "circuit": "5", "zs_ohm": ' + b"9" * 5000 + b"}",
             b'{"board": "DB1", "circuit": "6", "zs_ohm": 0.52}']
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=b"\r\n".join(lines) + b"\r\n",
                         content_type="application/x-ndjson")
    assert answer.status_code == 200, answer.get_data(as_text=True)[:300]
    rejected = {(r["line"], r["code"]) for r in answer.get_json()["rejected"]}
    assert {(2, "too_deep"), (3, "duplicate_member"), (4, "nul_character"),
            (5, "number_out_of_range")} <= rejected
    circuits = client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"]
    assert sorted(c["circuit"] for c in circuits) == ["1", "6"]


def test_a_json_document_read_by_the_adapter_is_screened_whole(client: FlaskClient) -> None:
    """?adapter=json with a list document holding a repeated name → 422 with its pointer, kept."""
    job_id = _job(client)
    body = b'[{"board": "DB1", "circuit": "1"}, {"board": "DB1", "circuit": "2", "circuit": "3"}]'
    problem = _problem(client.post(f"/v1/jobs/{job_id}/readings?adapter=json", data=body,
                                   content_type="application/json"), 422, "invalid_json")
    assert problem["errors"][0]["pointer"] == "/1/circuit" and problem["upload"]["id"]
    truncated = b'[{"board": "DB1", "circuit": "1", "zs_ohm": 0.4}, {"board": "DB1", "circ'
    cut = client.post(f"/v1/jobs/{job_id}/readings?adapter=json", data=truncated,
                      content_type="application/json")
    assert cut.status_code == 200 and cut.get_json()["accepted"] >= 1  # a cut log keeps its whole records


def test_a_document_of_empty_objects_is_refused_before_it_is_parsed(db_url: str,
                                                                   app_factory: Callable[..., Flask]) -> None:
    """MAX_ROWS=100: 5,000 empty objects → 413 too_many_values (counted on the bytes, not built)."""
    client = app_factory(db_url, OHMTALLY_MAX_ROWS="100").test_client()
    body = b'{"circuits": [' + b",".join([b"{}"] * 5000) + b"]}"
    problem = _problem(client.post("/v1/verify", data=body, content_type="application/json"), 413,
                       "too_many_values")
    assert problem["errors"][0]["code"] == "too_many_values"
    floats = b"[" + b",".join([b"1.5"] * 50000) + b"]"
    _problem(client.post("/v1/jobs", data=floats, content_type="application/json"), 413, "too_many_values")


def test_too_many_json_circuits_are_413_naming_the_first_extra(db_url: str,
                                                              app_factory: Callable[..., Flask]) -> None:
    """MAX_ROWS=5: six circuits → 413 too_many_rows at /circuits/5, before the schema reads them."""
    client = app_factory(db_url, OHMTALLY_MAX_ROWS="5").test_client()
    body = json.dumps({"circuits": [{"board": "DB1", "circuit": str(n)} for n in range(6)]})
    problem = _problem(client.post("/v1/verify", data=body, content_type="application/json"), 413,
                       "too_many_rows")
    assert problem["errors"][0]["pointer"] == "/circuits/5"
