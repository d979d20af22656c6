"""Paged circuits and verdicts: every circuit exactly once across the pages, even while readings
arrive; a page's verdicts are what the engine says about the whole job; Link rel=next (RFC 8288).

Reference for the verdicts: ``engine.verify`` over the job's merged records (a page must say
exactly what a full verification says about its circuits).
"""

from __future__ import annotations

from typing import Any

import pytest
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import build_record, verify
from tests.api.paging import all_pages

pytestmark = pytest.mark.postgres


def _job(client: FlaskClient, reference: str = "P-1") -> int:
    response = client.post("/v1/jobs", json={"reference": reference, "site": "Invented Paging Site"})
    assert response.status_code == 201
    job_id: int = response.get_json()["id"]
    return job_id


def _lines(board: str, first: int, count: int) -> str:
    return "".join(f"board={board} circuit={n} r1_r2_ohm={0.2 + n / 1000:.3f} polarity_ok=yes "
                   f"device=B16 zs_ohm=0.{40 + n % 50}\n" for n in range(first, first + count))


def _post(client: FlaskClient, job: int, text: str) -> None:
    response = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=text, content_type="text/plain")
    assert response.status_code == 200, response.get_json()


def _pages(client: FlaskClient, url: str, key: str, limit: int) -> list[dict[str, Any]]:
    pages, cursor = [], None
    while True:
        got = client.get(url, query_string={"limit": limit, **({"cursor": cursor} if cursor else {})})
        assert got.status_code == 200, got.get_json()
        body = got.get_json()
        pages.append(body)
        cursor = body["next_cursor"]
        link = got.headers.get("Link")
        if cursor is None:
            assert link is None
            return pages
        assert link is not None and link.endswith('>; rel="next"') and f"cursor={cursor}" in link
        assert len(body[key]) == limit


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(limit=st.integers(min_value=1, max_value=40))
def test_every_circuit_once_across_pages(client: FlaskClient, limit: int) -> None:
    """Whatever the page size, the pages list each circuit once, in the order first recorded."""
    job = _job(client)
    _post(client, job, _lines("DB1", 1, 23) + _lines("DB2", 1, 14))
    pages = _pages(client, f"/v1/jobs/{job}/circuits", "circuits", limit)
    keys = [(c["board"], c["circuit"]) for page in pages for c in page["circuits"]]
    assert keys == [("DB1", str(n)) for n in range(1, 24)] + [("DB2", str(n)) for n in range(1, 15)]


def test_pages_while_readings_arrive(client: FlaskClient) -> None:
    """Readings posted between pages (new circuits and changes to seen ones) never repeat or skip a
    circuit that existed when paging began; new circuits appear after the ones seen."""
    job = _job(client)
    _post(client, job, _lines("DB1", 1, 30))
    seen: list[tuple[str, str]] = []
    cursor = None
    round_ = 0
    while True:
        got = client.get(f"/v1/jobs/{job}/verdicts", query_string={"limit": 7, **(
            {"cursor": cursor} if cursor else {})}).get_json()
        seen += [(v["board"], v["circuit"]) for v in got["verdicts"]]
        round_ += 1
        _post(client, job, _lines("DB1", 1 + round_, 1) + _lines("DB9", round_, 1))  # a change and a new one
        cursor = got["next_cursor"]
        if cursor is None or round_ > 20:
            break
    assert len(seen) == len(set(seen))
    assert seen[:30] == [("DB1", str(n)) for n in range(1, 31)]


def test_a_page_of_verdicts_is_what_the_engine_says(client: FlaskClient) -> None:
    """Each page's verdicts equal engine.verify over all the job's records, for the page's circuits."""
    job = _job(client)
    fed = "board=DB2 circuit=1 board_fed_from=DB1/3\n"
    _post(client, job, _lines("DB1", 1, 12) + fed + _lines("DB2", 2, 5))
    records = []
    for item in all_pages(client, f"/v1/jobs/{job}/circuits", "circuits"):
        record, errors = build_record({"board": item["board"], "circuit": item["circuit"], **item["record"]})
        assert record is not None and not errors
        records.append(record)
    expected = {v.key: v.as_dict() for v in verify(records, "bs7671-2018-a2")}
    for page in _pages(client, f"/v1/jobs/{job}/verdicts", "verdicts", 5):
        for verdict in page["verdicts"]:
            assert verdict == expected[(verdict["board"], verdict["circuit"])]
        assert page["summary"]["circuits"] == len(page["verdicts"])


def test_board_filter_and_formats(client: FlaskClient) -> None:
    """?board= keeps that board's circuits; ?format=csv renders the page with the caution in a header."""
    job = _job(client)
    _post(client, job, _lines("DB1", 1, 4) + _lines("DB2", 1, 3))
    only = client.get(f"/v1/jobs/{job}/verdicts?board=DB2").get_json()
    assert [v["board"] for v in only["verdicts"]] == ["DB2"] * 3
    rendered = client.get(f"/v1/jobs/{job}/verdicts?board=DB1&format=csv")
    assert rendered.status_code == 200 and rendered.mimetype == "text/csv"
    assert "Decision aid" in rendered.headers["Ohmtally-Notice"]
    assert rendered.get_data(as_text=True).count("\nDB1,") >= 4


def test_each_page_has_its_own_etag(client: FlaskClient) -> None:
    """Two pages of one revision differ in ETag; each answers 304 to its own, until the job changes."""
    job = _job(client)
    _post(client, job, _lines("DB1", 1, 6))
    first = client.get(f"/v1/jobs/{job}/verdicts?limit=3")
    second = client.get(f"/v1/jobs/{job}/verdicts?limit=3&cursor={first.get_json()['next_cursor']}")
    assert first.headers["ETag"] != second.headers["ETag"]
    again = client.get(f"/v1/jobs/{job}/verdicts?limit=3", headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304
    _post(client, job, _lines("DB1", 1, 1).replace("0.201", "0.305"))
    changed = client.get(f"/v1/jobs/{job}/verdicts?limit=3", headers={"If-None-Match": first.headers["ETag"]})
    assert changed.status_code == 200


@pytest.mark.parametrize("query", ["limit=0", "limit=1001", "limit=x", "cursor=!!", "fields=outcome",
                                   "view=fancy", "board=", "format=pdf"])
def test_unknown_or_invalid_parameters_are_refused(client: FlaskClient, query: str) -> None:
    """A paging parameter out of range, a forged cursor or an unknown parameter is a 4xx problem, never
    silently ignored."""
    job = _job(client)
    for what in ("circuits", "verdicts"):
        got = client.get(f"/v1/jobs/{job}/{what}?{query}")
        assert got.status_code in (400, 422), (what, query, got.status_code)
        assert got.mimetype == "application/problem+json"
