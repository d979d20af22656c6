"""Size, row and line limits hold while the body streams in, the same for every media type,
adapter and transfer encoding; a body over a limit is refused whole and nothing of it is merged.

Sources: RFC 9112 §7.1 (chunked transfer coding: a body without Content-Length), RFC 9110
§15.5.14 (413 Content Too Large), RFC 4180 §2 (CSV lines end in CRLF; the adapters also accept
CR and LF alone, as old meters write them), PostgreSQL's documentation (Character Types: "the
character with code zero cannot be stored").
"""

from __future__ import annotations

import io
import time
import tracemalloc
from collections.abc import Callable
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

pytestmark = pytest.mark.postgres

CSV_HEADER = b"board,circuit,zs_ohm\n"


def _job(client: FlaskClient) -> int:
    job_id: int = client.post("/v1/jobs", json={"reference": "LIM", "site": "s"}).get_json()["id"]
    return job_id


def _chunked(client: FlaskClient, path: str, body: bytes, content_type: str) -> Any:
    """POST ``body`` with Transfer-Encoding: chunked and no Content-Length, as a server that
    de-chunks hands it to the app (gunicorn and werkzeug's server set wsgi.input_terminated)."""
    return client.post(path, input_stream=io.BytesIO(body), content_type=content_type,
                       headers={"Transfer-Encoding": "chunked"},
                       environ_overrides={"wsgi.input_terminated": True})


def _rows(count: int, start: int = 0) -> bytes:
    return b"".join(b"DB1,%d,0.41\n" % n for n in range(start, start + count))


def test_a_chunked_body_over_the_size_limit_is_refused_whole(db_url: str,
                                                            app_factory: Callable[..., Flask]) -> None:
    """MAX_UPLOAD_BYTES=4000, a 4,433-byte chunked CSV: 413 body_too_large, not kept, nothing merged
    (it was read to the limit, cut, and merged half: 200 with rejected=[])."""
    client = app_factory(db_url, OHMTALLY_MAX_UPLOAD_BYTES="4000").test_client()
    job_id = _job(client)
    body = CSV_HEADER + _rows(400)
    assert len(body) > 4000
    answer = _chunked(client, f"/v1/jobs/{job_id}/readings", body, "text/csv")
    assert answer.status_code == 413 and answer.get_json()["code"] == "body_too_large"
    assert answer.get_json()["kept"] is False and "not kept" in answer.get_json()["detail"]
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []
    assert client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"] == []
    exact = CSV_HEADER + _rows(400)[: 4000 - len(CSV_HEADER)]
    exact = exact[: exact.rfind(b"\n") + 1]
    taken = _chunked(client, f"/v1/jobs/{job_id}/readings", exact, "text/csv")  # within the limit
    assert taken.status_code == 200 and taken.get_json()["accepted"] > 0


def test_a_body_of_exactly_the_limit_is_taken_one_byte_more_is_not(db_url: str,
                                                                  app_factory: Callable[..., Flask]) -> None:
    """The limit is inclusive, chunked or not: N bytes are read, N + 1 are refused."""
    client = app_factory(db_url, OHMTALLY_MAX_UPLOAD_BYTES="3000").test_client()
    body = CSV_HEADER + _rows(300)
    body = body[:3000]
    body = body[: body.rfind(b"\n") + 1]
    body += b"#" * (3000 - len(body))  # a comment line fills it to exactly 3,000 bytes
    assert len(body) == 3000
    for send in (lambda b: client.post("/v1/verify", data=b, content_type="text/csv"),
                 lambda b: _chunked(client, "/v1/verify", b, "text/csv")):
        assert send(body).status_code == 200
        refused = send(body + b"#")
        assert refused.status_code == 413 and refused.get_json()["code"] == "body_too_large"


@pytest.mark.parametrize(("media", "query"), [("text/csv", ""), ("application/csv", "?adapter=csv"),
                                              ("application/octet-stream", "?adapter=csv"),
                                              ("text/plain", "?adapter=csv")])
def test_too_many_rows_are_refused_before_parsing_whatever_the_media_type(
        db_url: str, app_factory: Callable[..., Flask], media: str, query: str) -> None:
    """200,000 CSV rows (MAX_ROWS 20,000) → 413 too_many_rows in well under a second and a few MB,
    as application/csv and octet-stream too (as application/csv it took 14 s and +365 MB)."""
    client = app_factory(db_url, OHMTALLY_MAX_UPLOAD_BYTES=str(8 * 1024 * 1024)).test_client()
    body = CSV_HEADER + _rows(200_000)
    tracemalloc.start()
    started = time.perf_counter()
    answer = client.post(f"/v1/verify{query}", data=body, content_type=media)
    elapsed = time.perf_counter() - started
    _now, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert answer.status_code == 413 and answer.get_json()["code"] == "too_many_rows"
    assert answer.get_json()["errors"][0]["line"] == 20_002  # the header, then 20,000 rows
    assert elapsed < 2.0, elapsed
    assert peak < 6 * len(body), peak  # the body, a copy or two of it; no parse (derived: 3.6 MB body)


def test_lines_adapter_rows_are_counted_as_they_stream(db_url: str,
                                                       app_factory: Callable[..., Flask]) -> None:
    """?adapter=lines with application/octet-stream: the 6th row of MAX_ROWS=5 stops the stream (413),
    the body is kept as rejected, nothing merged."""
    client = app_factory(db_url, OHMTALLY_MAX_ROWS="5").test_client()
    job_id = _job(client)
    body = b"".join(b"board=DB1 circuit=%d zs=0.4\n" % n for n in range(6))
    answer = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=body,
                         content_type="application/octet-stream")
    assert answer.status_code == 413 and answer.get_json()["errors"][0]["line"] == 6
    assert answer.get_json()["upload"]["id"]
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []


@pytest.mark.parametrize("end", [b"\r", b"\n", b"\r\n"])
def test_every_line_end_the_adapters_accept_ends_a_line(client: FlaskClient, end: bytes) -> None:
    """A 1,000-row CSV with CR-only ends (12 KB) is 1,001 lines, not one 'line too long'."""
    job_id = _job(client)
    body = end.join([b"board,circuit,zs_ohm", *(b"DB1,%d,0.41" % n for n in range(1000))]) + end
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=body, content_type="text/csv")
    assert answer.status_code == 200, answer.get_data(as_text=True)[:300]
    assert answer.get_json()["accepted"] == 1000  # one value (zs_ohm) per row
    assert len(client.get(f"/v1/jobs/{job_id}/circuits?limit=500").get_json()["circuits"]) == 500


def test_a_cr_line_over_the_limit_is_named(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """MAX_LINE_BYTES=64 with CR ends: the 65-byte 3rd line is named, and the body is kept."""
    client = app_factory(db_url, OHMTALLY_MAX_LINE_BYTES="64").test_client()
    job_id = _job(client)
    body = b"board,circuit,description\rDB1,1,short\rDB1,2," + b"x" * 59 + b"\r"
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=body, content_type="text/csv")
    assert answer.status_code == 413
    assert answer.get_json()["errors"] == [{"line": 3, "code": "line_too_long",
                                            "reason": "longer than 64 bytes"}]
    assert answer.get_json()["upload"]["id"]


def test_a_utf16_csv_counts_its_lines_once(client: FlaskClient) -> None:
    """A UTF-16 CSV (CRLF is four bytes there) is scanned as text: 3 lines, taken."""
    body = "\ufeffboard,circuit,zs_ohm\r\nDB1,1,0.41\r\nDB1,2,0.52\r\n".encode("utf-16-le")
    answer = client.post("/v1/verify", data=body, content_type="text/csv")
    assert answer.status_code == 200 and len(answer.get_json()["verdicts"]) == 2


def test_a_nul_in_one_csv_cell_rejects_that_row_and_keeps_the_rest(client: FlaskClient, backend: str) -> None:
    """PostgreSQL text cannot hold NUL: a NUL in a board, a reading or a description is that row's
    problem, by line; the other rows are merged (on PostgreSQL too, where it was a 500)."""
    job_id = _job(client)
    body = (b"board,circuit,zs_ohm,description\nDB1,1,0.41,ok\nDB\x001,2,0.5,x\nDB1,3,0.3\x00,y\n"
            b"DB1,4,0.35,lamp\x00post\nDB1,5,0.2,fine\n")
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=body, content_type="text/csv")
    assert answer.status_code == 200, answer.get_data(as_text=True)[:300]
    lines = {r["line"] for r in answer.get_json()["rejected"]}
    assert {3, 4} <= lines
    circuits = {c["circuit"] for c in client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"]}
    assert {"1", "5"} <= circuits and "2" not in circuits
    stored = client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"][0]
    assert client.get(f"/v1/jobs/{job_id}/uploads/{stored['id']}").get_data() == body


def test_a_nul_in_a_query_parameter_or_path_is_400(client: FlaskClient, backend: str) -> None:
    """%00 in ?reference= (a text column on PostgreSQL) → 400 naming it; in the path → 404; never 500."""
    answer = client.get("/v1/jobs?reference=a%00b")
    assert answer.status_code == 400 and answer.get_json()["errors"][0]["parameter"] == "reference"
    posted = client.post("/v1/jobs%00x", json={"reference": "R", "site": "s"},
                         headers={"Idempotency-Key": "nul-path"})
    assert posted.status_code == 404 and posted.get_json()["errors"][0]["code"] == "nul_character"


def test_long_adapter_profile_and_charset_names_are_kept_not_a_500(client: FlaskClient, backend: str) -> None:
    """A 300-character ?adapter= or charset is refused (404/415) and the body kept, on PostgreSQL's
    VARCHAR(100)/(200) columns too."""
    job_id = _job(client)
    refused = client.post(f"/v1/jobs/{job_id}/readings?adapter={'a' * 300}", data=b"x",
                          content_type="text/csv")
    assert refused.status_code == 404 and refused.get_json()["upload"]["id"]
    charset = client.post(f"/v1/jobs/{job_id}/readings", data=CSV_HEADER + _rows(1),
                          content_type="text/csv; charset=" + "u" * 300)
    assert charset.status_code == 415 and charset.get_json()["upload"]["id"]


def test_field_values_are_capped_per_body_in_every_format(db_url: str,
                                                          app_factory: Callable[..., Flask]) -> None:
    """MAX_VALUES=10 (it bounds one post's merge, verification and writer lock): four CSV rows of
    three values → 413 too_many_values at line 5, kept; JSON circuits → the pointer of the circuit."""
    client = app_factory(db_url, OHMTALLY_MAX_VALUES="10").test_client()
    job_id = _job(client)
    body = b"board,circuit,zs_ohm,r1_r2_ohm,ir_le_mohm\n" + b"".join(
        b"DB1,%d,0.41,0.3,200\n" % n for n in range(4))
    answer = client.post(f"/v1/jobs/{job_id}/readings", data=body, content_type="text/csv")
    assert answer.status_code == 413 and answer.get_json()["code"] == "too_many_values"
    assert answer.get_json()["errors"][0]["line"] == 5 and answer.get_json()["upload"]["id"]
    circuits = [{"board": "DB1", "circuit": str(n), "zs_ohm": 0.4, "r1_r2_ohm": 0.3, "ir_le_mohm": 200}
                for n in range(4)]
    refused = client.post("/v1/verify", json={"circuits": circuits})
    assert refused.status_code == 413 and refused.get_json()["errors"][0]["pointer"] == "/circuits/3"
    assert client.post("/v1/verify", json={"circuits": circuits[:3]}).status_code == 200
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []
