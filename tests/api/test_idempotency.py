"""Idempotent ingestion: a resend with the same Idempotency-Key is the first answer and changes nothing.

Sources: the issue's rules (same key + body → first response, nothing
changed; same key + other body → 409; keys per organisation); the
Idempotency-Key header as the IETF httpapi working group's draft describes it
(draft-ietf-httpapi-idempotency-key-header, from memory: the key names one
request payload, a reuse with another payload is refused).
"""

from __future__ import annotations

import json
import time
from collections.abc import Callable
from datetime import datetime
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

pytestmark = pytest.mark.postgres

JOB = {"reference": "IDEM-1", "site": "invented test site"}
LINES = b"board=DB1 circuit=1 zs=0.41 r1r2=0.30\nboard=DB1 circuit=2 zs=0.52\n"
OTHER = b"board=DB1 circuit=1 zs=0.44\n"


def _job(client: FlaskClient) -> int:
    job_id: int = client.post("/v1/jobs", json=JOB).get_json()["id"]
    return job_id


def _post(client: FlaskClient, job_id: int, body: bytes, key: str | None = None) -> object:
    headers = {"Idempotency-Key": key} if key else {}
    return client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=body, content_type="text/plain",
                       headers=headers)


def _history(client: FlaskClient, job_id: int) -> list[dict[str, object]]:
    circuits = client.get(f"/v1/jobs/{job_id}/circuits?history=true").get_json()["circuits"]
    return [{"board": c["board"], "circuit": c["circuit"], "record": c["record"],
             "history": {f: [v["value"] for v in values] for f, values in c["history"].items()}}
            for c in circuits]


def _replayed_at(response: Any) -> datetime | None:
    """The replay signal: ``Ohmtally-Replay`` names, in RFC 3339 UTC, when the first answer was given."""
    value = response.headers.get("Ohmtally-Replay")
    if value is None:
        return None
    assert value.endswith("Z"), value
    return datetime.fromisoformat(value.replace("Z", "+00:00"))


def test_job_create_replays_the_first_answer(auth_client: FlaskClient) -> None:
    """POST /v1/jobs twice with one key: the same 201 body and Location, one job; another body → 409."""
    first = auth_client.post("/v1/jobs", json=JOB, headers={"Idempotency-Key": "job-1"})
    again = auth_client.post("/v1/jobs", json=JOB, headers={"Idempotency-Key": "job-1"})
    assert first.status_code == again.status_code == 201
    assert again.get_data() == first.get_data() and again.headers["Location"] == first.headers["Location"]
    assert _replayed_at(again) is not None and "Ohmtally-Replay" not in first.headers
    listed = auth_client.get("/v1/jobs").get_json()["items"]
    assert [j["id"] for j in listed] == [first.get_json()["id"]]
    clash = auth_client.post("/v1/jobs", json={**JOB, "site": "elsewhere"},
                             headers={"Idempotency-Key": "job-1"})
    assert clash.status_code == 409 and clash.get_json()["code"] == "idempotency_key_reused"
    assert len(auth_client.get("/v1/jobs").get_json()["items"]) == 1


def test_readings_replay_is_byte_identical_and_merges_once(auth_client: FlaskClient) -> None:
    """A resent readings post gets the first response's bytes; one upload, one history row per value."""
    job_id = _job(auth_client)
    first = _post(auth_client, job_id, LINES, "batch-1")
    _post(auth_client, job_id, OTHER, "batch-2")  # a later post changes the verdicts
    again = _post(auth_client, job_id, LINES, "batch-1")
    assert first.status_code == again.status_code == 200  # type: ignore[attr-defined]
    assert again.get_data() == first.get_data()  # type: ignore[attr-defined]
    uploads = auth_client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]
    assert len(uploads) == 2
    circuit_1 = _history(auth_client, job_id)[0]
    assert len(circuit_1["history"]["zs_ohm"]) == 2  # batch-1 once, batch-2 once
    assert circuit_1["record"]["zs_ohm"] == circuit_1["history"]["zs_ohm"][-1]  # batch-2 still wins


def test_same_key_other_body_or_other_job_is_409(auth_client: FlaskClient) -> None:
    """The key names one request: another body, or the same body to another job, is a 409 changing nothing."""
    job_a, job_b = _job(auth_client), _job(auth_client)
    assert _post(auth_client, job_a, LINES, "k").status_code == 200  # type: ignore[attr-defined]
    other_body = _post(auth_client, job_a, OTHER, "k")
    other_job = _post(auth_client, job_b, LINES, "k")
    for response in (other_body, other_job):
        assert response.status_code == 409  # type: ignore[attr-defined]
        assert response.get_json()["code"] == "idempotency_key_reused"  # type: ignore[attr-defined]
    assert auth_client.get(f"/v1/jobs/{job_b}/uploads").get_json()["uploads"] == []
    assert len(auth_client.get(f"/v1/jobs/{job_a}/uploads").get_json()["uploads"]) == 1


def test_a_refused_body_is_replayed_as_refused(auth_client: FlaskClient) -> None:
    """A JSON body refused whole (422) is kept once; its resend gets the same 422, not a second upload."""
    job_id = _job(auth_client)
    bad = json.dumps({"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": "12 kA"}]}).encode()
    first = auth_client.post(f"/v1/jobs/{job_id}/readings", data=bad, content_type="application/json",
                             headers={"Idempotency-Key": "bad-1"})
    again = auth_client.post(f"/v1/jobs/{job_id}/readings", data=bad, content_type="application/json",
                             headers={"Idempotency-Key": "bad-1"})
    assert first.status_code == again.status_code == 422
    assert again.get_data() == first.get_data() and _replayed_at(again) is not None
    uploads = auth_client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]
    assert [u["status"] for u in uploads] == ["rejected"]


def test_bad_key_and_verify_key(auth_client: FlaskClient) -> None:
    """A key that is not 1–200 visible ASCII is a 400; on /v1/verify (stateless) a key changes nothing."""
    job_id = _job(auth_client)
    assert _post(auth_client, job_id, LINES, "has space").status_code == 400  # type: ignore[attr-defined]
    assert _post(auth_client, job_id, LINES, "x" * 201).status_code == 400  # type: ignore[attr-defined]
    one = auth_client.post("/v1/verify", json={"circuits": []}, headers={"Idempotency-Key": "v"})
    two = auth_client.post("/v1/verify", json={"circuits": [{"board": "A", "circuit": "1"}]},
                           headers={"Idempotency-Key": "v"})
    assert one.status_code == two.status_code == 200 and one.get_json() != two.get_json()


def test_keyless_exact_repost_is_reported_not_merged(auth_client: FlaskClient) -> None:
    """Without a key, the same body again at once → 200 duplicate_of the first upload; history not doubled."""
    job_id = _job(auth_client)
    first = _post(auth_client, job_id, LINES).get_json()  # type: ignore[attr-defined]
    again = _post(auth_client, job_id, LINES).get_json()  # type: ignore[attr-defined]
    assert again["duplicate_of"] == first["upload"]["id"] and "duplicate_of" not in first
    assert again["upload"] == first["upload"] and again["accepted"] == first["accepted"]
    assert len(auth_client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]) == 1
    assert all(len(v) == 1 for c in _history(auth_client, job_id) for v in c["history"].values())


def test_keyless_repost_after_another_upload_merges_again(auth_client: FlaskClient) -> None:
    """Re-sending an older body after a newer one is a correction: it merges again and wins (later wins)."""
    job_id = _job(auth_client)
    _post(auth_client, job_id, LINES)
    _post(auth_client, job_id, OTHER)
    third = _post(auth_client, job_id, LINES).get_json()  # type: ignore[attr-defined]
    assert "duplicate_of" not in third
    circuit_1 = _history(auth_client, job_id)[0]
    assert len(circuit_1["history"]["zs_ohm"]) == 3
    assert circuit_1["record"]["zs_ohm"] == circuit_1["history"]["zs_ohm"][0]


def test_keyless_repost_outside_the_window_merges(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_DUPLICATE_WINDOW_S bounds the duplicate check: after it, the same body merges again."""
    client = app_factory(db_url, OHMTALLY_DUPLICATE_WINDOW_S="1").test_client()
    job_id = _job(client)
    _post(client, job_id, LINES)
    time.sleep(1.2)
    later = _post(client, job_id, LINES).get_json()  # type: ignore[attr-defined]
    assert "duplicate_of" not in later
    assert len(client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]) == 2
