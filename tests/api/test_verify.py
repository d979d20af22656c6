"""POST /v1/verify: JSON and adapter bodies, the 200-vs-422 choice, and every kind of bad input.

Reference for verdicts: ``engine.verify`` on the same records (the API must
add nothing and lose nothing). Reference for error shapes: RFC 9457 (problem
details) and RFC 6901 (JSON pointers); for what counts as a bad reading,
engine/README.md ("a unit that does not fit the field is a clear error").
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import NOTICE, build_record, builtin_ruleset_ids, verify

DEMO = Path(__file__).resolve().parents[2] / "examples" / "demo"

CIRCUITS: list[dict[str, Any]] = [
    {"board": "DB1", "circuit": "1", "device_kind": "breaker", "device_curve": "B", "device_rating_a": 32,
     "zs_ohm": "0.62 Ω", "r1_r2_ohm": 0.34, "ir_test_v": 500, "ir_le_mohm": "> 299 MΩ", "polarity_ok": True},
    {"board": "DB1", "circuit": "2", "device_kind": "breaker", "device_curve": "B", "device_rating_a": 16,
     "zs_ohm": 3.4, "polarity_ok": "yes"},
    {"board": "DB1", "circuit": "3", "ir_test_v": 500, "ir_le_mohm": "OL", "ir_ll_mohm": "350 kΩ"},
]


def _problem(response: Any, status: int, code: str) -> dict[str, Any]:
    assert response.status_code == status, response.get_json()
    assert response.mimetype == "application/problem+json"
    body: dict[str, Any] = response.get_json()
    assert body["status"] == status and body["code"] == code
    assert {"type", "title", "detail", "errors"} <= set(body)
    return body


def test_json_verdicts_equal_engine_verify(client: FlaskClient) -> None:
    """The API's verdicts for JSON circuits are exactly engine.verify's on the same records."""
    response = client.post("/v1/verify", json={"circuits": CIRCUITS})
    assert response.status_code == 200
    body = response.get_json()
    records = [build_record(c)[0] for c in CIRCUITS]
    expected = [v.as_dict() for v in verify(records, "bs7671-2018-a2")]
    assert body["verdicts"] == expected
    assert body["rejected"] == [] and body["notice"] == NOTICE
    assert body["summary"]["circuits"] == 3 and body["ruleset"]["id"] == "bs7671-2018-a2"


def test_ruleset_by_body_or_query(client: FlaskClient) -> None:
    """The ruleset named in the body or the query is the one used; naming two different ones is a 422."""
    other = next(r for r in builtin_ruleset_ids() if r != "bs7671-2018-a2")
    by_body = client.post("/v1/verify", json={"ruleset": other, "circuits": CIRCUITS[:1]})
    by_query = client.post(f"/v1/verify?ruleset={other}", json={"circuits": CIRCUITS[:1]})
    assert by_body.get_json()["ruleset"]["id"] == other == by_query.get_json()["ruleset"]["id"]
    clash = client.post(f"/v1/verify?ruleset={other}", json={"ruleset": "bs7671-2018-a2", "circuits": []})
    _problem(clash, 422, "conflicting_ruleset")


def test_duplicate_circuits_merge_per_field_later_wins(client: FlaskClient) -> None:
    """Two objects for one circuit merge field by field, the later value winning (api/README.md)."""
    body = client.post("/v1/verify", json={"circuits": [
        {"board": "A", "circuit": "1", "zs_ohm": 9.0, "polarity_ok": True},
        {"board": "A", "circuit": "1", "zs_ohm": 0.5}]}).get_json()
    merged = build_record({"board": "A", "circuit": "1", "zs_ohm": 0.5, "polarity_ok": True})[0]
    assert body["verdicts"] == [v.as_dict() for v in verify([merged])]


def test_json_bad_fields_are_422_with_a_pointer_each(client: FlaskClient) -> None:
    """JSON is all or nothing: wrong types and unreadable readings each get a pointer; an unknown name
    is read as nothing and said as a warning with its pointer, as a CSV column or a lines key is."""
    circuits = [dict(CIRCUITS[0]), {"board": "DB1", "circuit": "2", "zs_ohm": True, "colour": "red"},
                {"board": "DB1", "circuit": "3", "zs_ohm": "0.4 kA"}, {"board": "DB1", "circuit": "4",
                                                                        "earthing": "TN-Z"}]
    body = _problem(client.post("/v1/verify", json={"circuits": circuits}), 422, "invalid_body")
    assert {e["pointer"] for e in body["errors"]} == {"/circuits/1/zs_ohm"}
    (noted,) = body["warnings"]
    assert noted["pointer"] == "/circuits/1/colour" and noted["code"] == "unknown_field"
    # the types are right; now the engine's own reading rules reject two values
    circuits[1] = {"board": "DB1", "circuit": "2"}
    body = _problem(client.post("/v1/verify", json={"circuits": circuits}), 422, "invalid_circuits")
    assert {e["pointer"] for e in body["errors"]} == {"/circuits/2/zs_ohm", "/circuits/3/earthing"}


def test_missing_key_and_top_level_shape(client: FlaskClient) -> None:
    """A circuit without board/circuit, or a body stating nothing (an unknown member is a warning, not
    circuits) are 422s with pointers; a bare list of circuits is read as the document's circuits, as
    `ohmtally verify` reads such a file."""
    body = _problem(client.post("/v1/verify", json={"circuits": [{"board": "X"}]}), 422, "invalid_body")
    assert body["errors"][0]["pointer"] == "/circuits/0/circuit"
    body = _problem(client.post("/v1/verify", json={"circuit": []}), 422, "invalid_body")
    assert [(e["pointer"], e["code"]) for e in body["errors"]] == [("", "nothing_stated")]
    assert [w["pointer"] for w in body["warnings"]] == ["/circuit"]
    listed = client.post("/v1/verify", json=[CIRCUITS[0]])
    assert listed.status_code == 200 and len(listed.get_json()["verdicts"]) == 1


@pytest.mark.parametrize(("data", "content_type", "status", "code"), [
    (b"", "application/json", 400, "empty_body"),
    (b"   \n", "text/csv", 400, "empty_body"),
    (b'{"circuits": [', "application/json", 400, "malformed_json"),
    ('{"circuits": [{"board": "Ü"}]}'.encode("latin-1"), "application/json", 400, "not_utf8"),
    (b"board,circuit\nDB1,1\n", "image/png", 415, "unsupported_media_type"),
    (b"board,circuit\nDB1,1\n", "", 415, "unsupported_media_type"),
    (b"board,circuit\nDB1,1\n", "text/csv; charset=klingon", 415, "unknown_charset"),
    (b"colour,size\nred,3\n", "text/csv", 422, "unrecognised_header"),
])
def test_unreadable_bodies_are_problems(client: FlaskClient, data: bytes, content_type: str,
                                        status: int, code: str) -> None:
    """Each way a body can be unreadable has its own status and code (RFC 9457 problem)."""
    _problem(client.post("/v1/verify", data=data, content_type=content_type or None), status, code)


def test_unrecognised_header_lists_the_columns_seen(client: FlaskClient) -> None:
    """A CSV whose header names no field is a 422 that shows the columns it saw."""
    body = _problem(client.post("/v1/verify", data=b"colour,size\nred,3\n", content_type="text/csv"),
                    422, "unrecognised_header")
    assert "colour" in body["detail"] and "size" in body["columns_seen"]


@pytest.mark.parametrize(("query", "code", "parameter"), [
    ("ruleset=bs7671-1992", "unknown_ruleset", "ruleset"),
    ("adapter=punchcard", "unknown_adapter", "adapter"),
    ("adapter=csv&profile=no-such-profile", "unknown_profile", "profile"),
])
def test_unknown_names_are_404_listing_choices(client: FlaskClient, query: str, code: str,
                                                parameter: str) -> None:
    """An unknown ruleset, adapter or profile is a 404 problem that lists the valid choices."""
    csv = b"board,circuit,zs_ohm\nDB1,1,0.4\n"
    body = _problem(client.post(f"/v1/verify?{query}", data=csv, content_type="text/csv"), 404, code)
    assert body["choices"] and body["errors"][0]["parameter"] == parameter


def test_unknown_ruleset_in_body_points_at_it(client: FlaskClient) -> None:
    """A body naming an unknown ruleset gets a 404 whose error points at /ruleset."""
    response = client.post("/v1/verify", json={"ruleset": "nope", "circuits": []})
    body = _problem(response, 404, "unknown_ruleset")
    assert body["errors"][0]["pointer"] == "/ruleset" and "bs7671-2018-a2" in body["choices"]


def test_unknown_query_parameter_is_named(client: FlaskClient) -> None:
    """An unknown query parameter is a 422 naming it."""
    body = _problem(client.post("/v1/verify?colour=red", json={"circuits": []}), 422, "invalid_parameters")
    assert body["errors"][0]["parameter"] == "colour"


def test_csv_partly_bad_is_200_with_good_rows_verified(client: FlaskClient) -> None:
    """A CSV with one bad cell verifies every row and lists the bad cell in rejected with its line."""
    csv = (b"board,circuit,zs_ohm,polarity_ok\nDB1,1,0.5,yes\nDB1,2,0.4 kA,yes\nDB1,3,0.7,yes\n")
    response = client.post("/v1/verify", data=csv, content_type="text/csv")
    assert response.status_code == 200
    body = response.get_json()
    assert [v["circuit"] for v in body["verdicts"]] == ["1", "2", "3"]
    assert [(r["line"], r["field"]) for r in body["rejected"]] == [(3, "zs_ohm")]
    assert body["summary"]["rejected"] == 1


def test_demo_csv_through_api_equals_offline_adapter(client: FlaskClient) -> None:
    """The demo CSV verified over HTTP gives what the csv adapter + engine.verify give offline."""
    from adapters import AdapterOptions, collect
    from adapters.registry import get_adapter

    data = (DEMO / "db1-meter-export.csv").read_bytes()
    profile = "example-semicolon-decimal-comma"
    body = client.post(f"/v1/verify?profile={profile}", data=data, content_type="text/csv").get_json()
    import io

    got = collect(get_adapter("csv").read(io.BytesIO(data), AdapterOptions(profile=profile)))
    assert body["verdicts"] == [v.as_dict() for v in verify(got.records)]


def test_lines_and_ndjson_bodies(client: FlaskClient) -> None:
    """key=value lines (text/plain) and NDJSON go through their adapters; a bad line is rejected alone.

    A refused cell is remembered on its circuit (kA in an ohm field): the circuit is listed, and the
    check that needs the value is incomplete naming the refused text, never judged on a default."""
    lines = b"board=DB2 circuit=1 zs=0.61\xce\xa9 r1r2=0.32\nboard=DB2 circuit=2 zs=0.4kA\n"
    body = client.post("/v1/verify", data=lines, content_type="text/plain").get_json()
    assert [v["circuit"] for v in body["verdicts"]] == ["1", "2"]
    assert body["rejected"][0]["line"] == 2
    refused = [c for c in body["verdicts"][1]["checks"] if c["check"] == "loop_impedance"]
    assert refused and all(c["outcome"] == "incomplete" and "0.4kA" in c["detail"] for c in refused)
    nd = b'{"board": "DB3", "circuit": "1", "zs_ohm": 0.4}\n{"board": "DB3"}\n'
    body = client.post("/v1/verify", data=nd, content_type="application/x-ndjson").get_json()
    assert [v["circuit"] for v in body["verdicts"]] == ["1"] and body["rejected"][0]["line"] == 2


def test_body_too_large_is_413(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """A body over OHMTALLY_MAX_UPLOAD_BYTES is a 413 problem."""
    small = app_factory(db_url, OHMTALLY_MAX_UPLOAD_BYTES=64).test_client()
    _problem(small.post("/v1/verify", data=b"board,circuit\n" + b"DB1,1\n" * 40, content_type="text/csv"),
             413, "body_too_large")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=300), content_type=st.sampled_from(
    ["application/json", "text/csv", "text/plain", "application/x-ndjson", "text/csv; charset=utf-8"]))
def test_no_body_yields_a_500(client: FlaskClient, data: bytes, content_type: str) -> None:
    """Arbitrary bytes under every accepted content type never produce a 5xx."""
    response = client.post("/v1/verify", data=data, content_type=content_type)
    assert response.status_code < 500, response.get_data()[:300]


def test_decimal_commas_declared_by_the_query(client: FlaskClient) -> None:
    """?decimal=comma reads 0,41 as 0.41 in a lines body; without it the comma is refused (never read as
    41 or dropped silently), and the refusal says how to declare it."""
    lines = b"board=DB1 circuit=1 zs=0,41\n"
    refused = client.post("/v1/verify?adapter=lines", data=lines, content_type="text/plain").get_json()
    assert refused["rejected"] and "decimal" in refused["rejected"][0]["reason"]
    taken = client.post("/v1/verify?adapter=lines&decimal=comma", data=lines, content_type="text/plain")
    assert taken.status_code == 200 and taken.get_json()["rejected"] == []
    job = client.post("/v1/jobs", json={"reference": "D-1", "site": "Invented site"}).get_json()["id"]
    client.post(f"/v1/jobs/{job}/readings?adapter=lines&decimal=comma", data=lines, content_type="text/plain")
    (stored,) = client.get(f"/v1/jobs/{job}/circuits").get_json()["circuits"]
    assert stored["record"]["zs_ohm"] == 0.41
    assert client.post("/v1/verify?decimal=dot", data=lines, content_type="text/plain").status_code == 422
