"""``?view=compact`` on the verdict answers: the same outcomes, values and limits as the full view,
as rows with a legend, in their own media type; refused, not dropped, beside a text format.

Reference: the full view of the same request (itself checked against the standards' tables in
tests/engine); engine.compact.decode spells the rows out again.
"""

from __future__ import annotations

from typing import Any

import pytest
from flask.testing import FlaskClient

from engine.compact import decode

pytestmark = pytest.mark.postgres

COMPACT = "application/vnd.ohmtally.compact+json"
# An invented board: sockets and lights, two Zs over the maximum with no RCD, one low insulation reading.
_READINGS = "".join(
    f"board=DB1 circuit={n} device=B{16 if n % 2 else 32} r1_r2_ohm={0.3 + n / 50:.2f} "
    f"zs_ohm={0.45 + n / 20:.2f} ir_le_mohm={'1.4' if n == 5 else '>299'} ir_test_v=500 polarity_ok=yes "
    + (f"rcd_residual_ma=30 rcd_trip_ms={18 + n} " if n % 3 else "")
    + "earthing=TN-C-S ze_ohm=0.21\n" for n in range(1, 25))


def _rows_of_full(verdicts: list[dict[str, Any]]) -> dict[tuple[str, str], list[tuple[Any, ...]]]:
    return {(v["board"], v["circuit"]): [(c["check"], c["outcome"], c["value"], c["relation"], c["limit"],
                                          c["unit"]) for c in v["checks"]] for v in verdicts}


def _rows_of_compact(body: dict[str, Any]) -> dict[tuple[str, str], list[tuple[Any, ...]]]:
    return {(v["board"], v["circuit"]): [tuple(row[:6]) for row in v["checks"]] for v in decode(body)}


def test_verify_compact_says_what_the_full_view_says(client: FlaskClient) -> None:
    full = client.post("/v1/verify?adapter=lines", data=_READINGS, content_type="text/plain")
    compact = client.post("/v1/verify?adapter=lines&view=compact", data=_READINGS, content_type="text/plain")
    assert full.status_code == compact.status_code == 200
    assert compact.mimetype == COMPACT
    body = compact.get_json()
    assert body["view"] == "compact" and body["notice"] == full.get_json()["notice"]
    assert body["summary"] == full.get_json()["summary"]
    assert {(v["board"], v["circuit"]): v["outcome"] for v in body["verdicts"]} == {
        (v["board"], v["circuit"]): v["outcome"] for v in full.get_json()["verdicts"]}
    assert _rows_of_compact(body) == _rows_of_full(full.get_json()["verdicts"])
    assert len({tuple(entry) for entry in body["legend"]}) == len(body["legend"])  # each written once
    assert compact.headers["Ohmtally-Failing-Circuits"] == full.headers["Ohmtally-Failing-Circuits"]
    assert any(v["outcome"] == "fail" for v in body["verdicts"])  # the set holds a failure to carry


def test_a_compact_answer_is_small(client: FlaskClient) -> None:
    """Issue 18's target: at most 600 bytes of JSON a circuit (the full view is several kB)."""
    full = client.post("/v1/verify?adapter=lines", data=_READINGS, content_type="text/plain")
    compact = client.post("/v1/verify?adapter=lines&view=compact", data=_READINGS, content_type="text/plain")
    circuits = compact.get_json()["summary"]["circuits"]
    assert circuits == 24
    assert len(compact.data) / circuits <= 600, len(compact.data) / circuits
    assert len(compact.data) * 4 < len(full.data)


def test_a_job_page_in_the_compact_view(client: FlaskClient) -> None:
    job = client.post("/v1/jobs", json={"reference": "C-1", "site": "Invented Compact Site"}).get_json()["id"]
    posted = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=_READINGS, content_type="text/plain")
    assert posted.status_code == 200
    seen: dict[tuple[str, str], list[tuple[Any, ...]]] = {}
    cursor = None
    while True:
        query = {"view": "compact", "limit": 7, **({"cursor": cursor} if cursor else {})}
        page = client.get(f"/v1/jobs/{job}/verdicts", query_string=query)
        assert page.status_code == 200 and page.mimetype == COMPACT
        body = page.get_json()
        assert body["job_id"] == job and body["limit"] == 7
        for key, rows in _rows_of_compact(body).items():
            assert key not in seen
            seen[key] = rows
        cursor = body["next_cursor"]
        if cursor is None:
            break
        assert 'rel="next"' in page.headers["Link"] and "view=compact" in page.headers["Link"]
    full = client.get(f"/v1/jobs/{job}/verdicts", query_string={"limit": 100}).get_json()
    assert seen == _rows_of_full(full["verdicts"])


@pytest.mark.parametrize("where", ["/v1/verify?adapter=lines&", "JOB?"])
def test_compact_beside_a_text_format_is_refused(client: FlaskClient, where: str) -> None:
    if where == "JOB?":
        job = client.post("/v1/jobs", json={"reference": "C-2", "site": "Invented"}).get_json()["id"]
        answer = client.get(f"/v1/jobs/{job}/verdicts?view=compact&format=html")
    else:
        answer = client.post(f"{where}view=compact&format=junit", data=_READINGS, content_type="text/plain")
    assert answer.status_code == 400
    problem = answer.get_json()
    assert problem["code"] == "view_conflict" and problem["errors"][0]["pointer"] == "/query/view"


def test_an_unknown_view_is_refused(client: FlaskClient) -> None:
    answer = client.post("/v1/verify?adapter=lines&view=tiny", data=_READINGS, content_type="text/plain")
    assert 400 <= answer.status_code < 500
