"""Compressed answers: the client's Accept-Encoding decides, problems and small bodies are never
compressed, and conditional requests still work through compression.

Decoding uses the libraries a client would (gzip from the standard library, brotli,
zstd from backports.zstd), never the server's own code. These tests use a plain
test client: the spec-checking one would parse compressed bytes as JSON.
"""

from __future__ import annotations

import gzip
import itertools
import json
from collections.abc import Callable
from typing import Any

import brotli
import pytest
from backports import zstd
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import event

from api.http.idempotency import REPLAY_HEADER
from tests.bench.synthetic import rows

pytestmark = pytest.mark.postgres
DECODE: dict[str, Callable[[bytes], bytes]] = {"gzip": gzip.decompress, "br": brotli.decompress,
                                               "zstd": zstd.decompress}


@pytest.fixture
def plain(app: Flask) -> FlaskClient:
    app.test_client_class = FlaskClient
    return app.test_client()


def _circuits(count: int) -> list[dict[str, str]]:
    return list(itertools.islice(rows(count), count))


def _job_with(plain: FlaskClient, count: int) -> int:
    job_id: int = plain.post("/v1/jobs", json={"reference": "Z1", "site": "Invented site"}).get_json()["id"]
    posted = plain.post(f"/v1/jobs/{job_id}/readings", json={"circuits": _circuits(count)})
    assert posted.status_code == 200
    return job_id


@pytest.mark.parametrize(("accept", "coding"), [
    ("gzip", "gzip"), ("br", "br"), ("zstd", "zstd"), ("gzip, deflate, br, zstd", "zstd"),
    ("gzip;q=1.0, br;q=0.5", "gzip"), ("deflate", None), ("identity", None)])
def test_the_client_chooses_the_coding(plain: FlaskClient, accept: str, coding: str | None) -> None:
    """A 48-circuit verify answer: compressed with the coding the client prefers (zstd on a tie; deflate
    is not offered), decoding to the very bytes of the uncompressed answer."""
    body = {"circuits": _circuits(48)}
    reference = plain.post("/v1/verify", json=body)
    answer = plain.post("/v1/verify", json=body, headers={"Accept-Encoding": accept})
    assert answer.status_code == 200
    assert "Accept-Encoding" in answer.headers["Vary"]
    assert answer.headers.get("Content-Encoding") == coding
    data = answer.get_data()
    decoded = DECODE[coding](data) if coding else data
    assert decoded == reference.get_data()
    if coding:
        assert len(data) * 10 < len(decoded)  # measured 14–18× on this answer: at least 10×
        assert int(answer.headers["Content-Length"]) == len(data)


def test_problems_and_small_answers_are_never_compressed(plain: FlaskClient) -> None:
    """A 404 problem, a 422 problem with its pointers, and the tiny health answer leave uncompressed."""
    headers = {"Accept-Encoding": "gzip, br, zstd"}
    missing = plain.get("/v1/jobs/424242", headers=headers)
    bad = plain.post("/v1/verify", json={"circuits": [{"board": "A", "circuit": str(n), "zs_ohm": "abc"}
                                                      for n in range(60)]}, headers=headers)
    health = plain.get("/v1/health", headers=headers)
    for response in (missing, bad, health):
        assert "Content-Encoding" not in response.headers
        json.loads(response.get_data())
    assert missing.status_code == 404 and bad.status_code == 422


def _statements(app: Flask) -> tuple[list[str], Callable[[], None]]:
    seen: list[str] = []

    def count(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        seen.append(statement)

    engine = app.extensions["ohmtally.engine.read"]
    event.listen(engine, "before_cursor_execute", count)
    return seen, lambda: event.remove(engine, "before_cursor_execute", count)


def test_etag_of_a_compressed_answer_still_gives_a_cheap_304(app: Flask, plain: FlaskClient) -> None:
    """GET …/verdicts with gzip: the ETag names the coding; sent back, it is a 304 carrying that same
    ETag, answered from the job row alone (fewer statements than the 200, no record read); after new
    readings the old ETag gets a 200 again."""
    job_id = _job_with(plain, 48)
    headers = {"Accept-Encoding": "gzip"}
    seen, stop = _statements(app)
    first = plain.get(f"/v1/jobs/{job_id}/verdicts", headers=headers)
    full_cost = len(seen)
    seen.clear()
    assert first.status_code == 200 and first.headers["Content-Encoding"] == "gzip"
    etag = first.headers["ETag"]
    assert etag.endswith(':gzip"') and not etag.startswith("W/")
    again = plain.get(f"/v1/jobs/{job_id}/verdicts", headers={**headers, "If-None-Match": etag})
    stop()
    assert again.status_code == 304 and again.get_data() == b""
    assert again.headers["ETag"] == etag
    assert len(seen) < full_cost and not any("FROM circuits" in s for s in seen), seen
    plain.post(f"/v1/jobs/{job_id}/readings", data="board,circuit,zs_ohm\nG0-DB1,2,0.5\n",
               content_type="text/csv")
    changed = plain.get(f"/v1/jobs/{job_id}/verdicts", headers={**headers, "If-None-Match": etag})
    assert changed.status_code == 200 and changed.headers["ETag"] != etag


def test_uncompressed_etag_is_unchanged(plain: FlaskClient) -> None:
    """A client that asks for no coding gets the plain ETag, and its 304 as before."""
    job_id = _job_with(plain, 5)
    first = plain.get(f"/v1/jobs/{job_id}/verdicts")
    assert "Content-Encoding" not in first.headers and ":" not in first.headers["ETag"]
    again = plain.get(f"/v1/jobs/{job_id}/verdicts", headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304 and again.headers["ETag"] == first.headers["ETag"]


def test_an_idempotent_replay_is_compressed_like_the_first_answer(plain: FlaskClient) -> None:
    """The stored answer of an Idempotency-Key is the uncompressed one: a replay asked with br decodes
    to the same document as the first answer asked with gzip."""
    job_id: int = plain.post("/v1/jobs", json={"reference": "Z2", "site": "S"}).get_json()["id"]
    body = {"circuits": _circuits(10)}
    first = plain.post(f"/v1/jobs/{job_id}/readings", json=body,
                       headers={"Idempotency-Key": "zip-1", "Accept-Encoding": "gzip"})
    replay = plain.post(f"/v1/jobs/{job_id}/readings", json=body,
                        headers={"Idempotency-Key": "zip-1", "Accept-Encoding": "br"})
    assert first.headers["Content-Encoding"] == "gzip" and replay.headers["Content-Encoding"] == "br"
    assert REPLAY_HEADER in replay.headers
    assert brotli.decompress(replay.get_data()) == gzip.decompress(first.get_data())
