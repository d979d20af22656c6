"""Jobs, readings merged into them, history, uploads kept as received — on SQLite and PostgreSQL.

Reference for verdicts: ``engine.verify`` over the job's merged records (the
job's verdicts must be what the engine says about the records the job holds).
Merge rule: api/README.md, "Readings into a job": "readings merge into the job's circuit records (later
readings win, earlier kept in history)".
"""

from __future__ import annotations

import hashlib
from typing import Any

import pytest
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import build_record, verify

pytestmark = pytest.mark.postgres


def _job(client: FlaskClient, reference: str = "J-100", **extra: Any) -> dict[str, Any]:
    response = client.post("/v1/jobs", json={"reference": reference, "site": "Invented Test Site", **extra})
    assert response.status_code == 201, response.get_json()
    body: dict[str, Any] = response.get_json()
    assert response.headers["Location"] == f"/v1/jobs/{body['id']}"
    return body


def _post(client: FlaskClient, job_id: int, data: bytes | str, content_type: str, **params: str) -> Any:
    query = "&".join(f"{k}={v}" for k, v in params.items())
    return client.post(f"/v1/jobs/{job_id}/readings{'?' + query if query else ''}",
                       data=data, content_type=content_type)


def test_create_and_get_job(client: FlaskClient) -> None:
    """A job is created in the local organisation with the default ruleset and read back unchanged."""
    job = _job(client, external_ref="CRM-9")
    assert job["organisation"] == "local" and job["ruleset"] == "bs7671-2018-a2"
    assert client.get(f"/v1/jobs/{job['id']}").get_json() == job


def test_create_job_bad_input(client: FlaskClient) -> None:
    """Missing fields, unknown fields, an unknown ruleset and a non-JSON body are problems with pointers."""
    bad = client.post("/v1/jobs", json={"site": "x", "colour": "red"})
    assert bad.status_code == 422
    assert {e["pointer"] for e in bad.get_json()["errors"]} == {"/reference", "/colour"}
    unknown = client.post("/v1/jobs", json={"reference": "R", "site": "S", "ruleset": "nope"})
    assert unknown.status_code == 404 and unknown.get_json()["errors"][0]["pointer"] == "/ruleset"
    assert client.post("/v1/jobs", data="reference=R", content_type="text/plain").status_code == 415
    assert client.get("/v1/jobs/424242").status_code == 404


def test_list_jobs_cursor_pages_and_filter(client: FlaskClient) -> None:
    """Cursor pages list every job once, in creation order; ?reference= filters; a forged cursor is 400."""
    made = [_job(client, reference=f"R{i % 2}")["id"] for i in range(5)]
    seen: list[int] = []
    cursor = None
    pages = 0
    while True:
        url = "/v1/jobs?limit=2" + (f"&cursor={cursor}" if cursor else "")
        page = client.get(url).get_json()
        seen += [j["id"] for j in page["items"]]
        pages += 1
        cursor = page["next_cursor"]
        if cursor is None:
            break
    assert seen == made and pages == 3
    filtered = client.get("/v1/jobs?reference=R1").get_json()
    assert [j["id"] for j in filtered["items"]] == made[1::2]
    assert client.get("/v1/jobs?cursor=not-ours").status_code == 400
    assert client.get("/v1/jobs?limit=0").status_code == 422


def test_readings_merge_per_field_and_keep_history(client: FlaskClient) -> None:
    """A later upload wins per field, untouched fields stay, and every value is in history with its upload."""
    job = _job(client)["id"]
    first = _post(client, job, "board,circuit,zs_ohm,r1_r2_ohm\nDB1,1,0.91,0.40\nDB1,2,0.5,0.2\n", "text/csv")
    assert first.status_code == 200
    one = first.get_json()
    assert one["accepted"] == 4 and one["rejected"] == []
    second = _post(client, job, '{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": "0.62 Ω"}]}',
                   "application/json").get_json()
    assert [v["circuit"] for v in second["verdicts"]] == ["1"]  # only what it touched
    circuits = client.get(f"/v1/jobs/{job}/circuits?history=true").get_json()["circuits"]
    c1 = circuits[0]
    assert c1["record"] == {"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.4, "zs_ohm": 0.62}
    zs = c1["history"]["zs_ohm"]
    assert [(h["value"], h["upload_id"]) for h in zs] == [(0.91, one["upload"]["id"]),
                                                          (0.62, second["upload"]["id"])]
    assert zs[0]["location"] == "line 2" and zs[1]["location"] == "/circuits/0"
    plain = client.get(f"/v1/jobs/{job}/circuits").get_json()["circuits"]
    assert "history" not in plain[0]


def test_bounded_readings_are_stored_as_bounds(client: FlaskClient) -> None:
    """'> 299 MΩ' and 'OL' stay bounded through storage (engine/README.md: never a plain number)."""
    job = _job(client)["id"]
    _post(client, job, '{"circuits": [{"board": "B", "circuit": "1", "ir_le_mohm": "> 299 MΩ", '
                       '"ir_ll_mohm": "OL"}]}', "application/json")
    record = client.get(f"/v1/jobs/{job}/circuits").get_json()["circuits"][0]["record"]
    assert record["ir_le_mohm"] == ">299" and record["ir_ll_mohm"] == "OL"


def test_job_verdicts_equal_engine_over_all_records(client: FlaskClient) -> None:
    """GET verdicts is engine.verify over every merged record of the job, under the job's ruleset."""
    job = _job(client, ruleset="iec-60364")["id"]
    _post(client, job, "board,circuit,device_kind,device_curve,device_rating_a,zs_ohm,polarity_ok\n"
                       "DB1,1,breaker,B,32,0.5,yes\nDB1,2,breaker,C,16,2.9,yes\n", "text/csv")
    _post(client, job, "board=DB1 circuit=2 zs=0.7Ω\n", "text/plain")
    body = client.get(f"/v1/jobs/{job}/verdicts").get_json()
    records = [build_record(r)[0] for r in (
        {"board": "DB1", "circuit": "1", "device_kind": "breaker", "device_curve": "B", "device_rating_a": 32,
         "zs_ohm": 0.5, "polarity_ok": True},
        {"board": "DB1", "circuit": "2", "device_kind": "breaker", "device_curve": "C", "device_rating_a": 16,
         "zs_ohm": 0.7, "polarity_ok": True})]
    assert body["verdicts"] == [v.as_dict() for v in verify(records, "iec-60364")]
    assert body["ruleset"]["id"] == "iec-60364" and body["job_id"] == job


def test_partly_bad_csv_merges_good_rows_and_keeps_the_upload(client: FlaskClient) -> None:
    """A CSV with a bad cell merges the rest; the upload is stored byte for byte with its sha256."""
    job = _job(client)["id"]
    raw = b"board,circuit,zs_ohm,pfc_ka\nDB1,1,0.5,2.1\nDB1,2,0.4 kA,1.9\n"
    body = _post(client, job, raw, "text/csv").get_json()
    assert body["accepted"] == 3 and body["rejected"][0]["line"] == 3
    assert body["upload"] == {"id": body["upload"]["id"], "sha256": hashlib.sha256(raw).hexdigest(),
                              "size": len(raw)}
    fetched = client.get(f"/v1/jobs/{job}/uploads/{body['upload']['id']}")
    assert fetched.get_data() == raw and fetched.mimetype == "text/csv"
    listed = client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]
    assert listed[0]["status"] == "merged" and listed[0]["rejected"][0]["field"] == "zs_ohm"


def test_rejected_body_is_still_stored(client: FlaskClient) -> None:
    """A JSON body refused with 422 is kept as received; the problem names its upload id."""
    job = _job(client)["id"]
    raw = b'{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": true}]}'
    refused = _post(client, job, raw, "application/json")
    assert refused.status_code == 422
    upload = refused.get_json()["upload"]
    assert client.get(f"/v1/jobs/{job}/uploads/{upload['id']}").get_data() == raw
    listed = client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]
    assert listed[0]["status"] == "rejected" and listed[0]["rejected"][0]["pointer"] == "/circuits/0/zs_ohm"
    assert client.get(f"/v1/jobs/{job}/circuits").get_json()["circuits"] == []
    empty = _post(client, job, b"", "text/csv")
    assert empty.status_code == 400 and empty.get_json()["upload"]["size"] == 0


def test_readings_naming_another_ruleset_are_refused(client: FlaskClient) -> None:
    """A body naming a ruleset other than the job's is a 422, not silently re-ruled."""
    job = _job(client)["id"]
    refused = _post(client, job, '{"ruleset": "iec-60364", "circuits": []}', "application/json")
    assert refused.status_code == 422 and refused.get_json()["code"] == "ruleset_mismatch"


def test_readings_to_missing_job_or_upload(client: FlaskClient) -> None:
    """Posting to, or fetching from, a job or upload that does not exist is a 404 problem."""
    assert _post(client, 999, "board,circuit,zs_ohm\nA,1,0.3\n", "text/csv").status_code == 404
    job = _job(client)["id"]
    assert client.get(f"/v1/jobs/{job}/uploads/999").status_code == 404
    other = _job(client, reference="other")["id"]
    upload = _post(client, other, "board,circuit,zs_ohm\nA,1,0.3\n", "text/csv").get_json()["upload"]["id"]
    assert client.get(f"/v1/jobs/{job}/uploads/{upload}").status_code == 404  # not across jobs


_BODIES = st.sampled_from(["application/json", "text/csv", "text/plain", "application/x-ndjson"])


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=200), content_type=_BODIES)
def test_no_readings_body_yields_a_500_and_every_body_is_kept(client: FlaskClient, data: bytes,
                                                               content_type: str) -> None:
    """Arbitrary bytes posted to a job never give a 5xx, and each one is stored as an upload."""
    job = _job(client)["id"]
    response = _post(client, job, data, content_type)
    assert response.status_code < 500, response.get_data()[:300]
    uploads = client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]
    assert [u["sha256"] for u in uploads] == [hashlib.sha256(data).hexdigest()]


def test_idempotency_key_resend_is_answered_not_merged_twice(client: FlaskClient) -> None:
    """A resend with the same Idempotency-Key gets the first answer and adds no upload or history row.

    Reference: the IETF httpapi Idempotency-Key header draft (same key + same body → the
    first result; same key + another body → 422).
    """
    job = _job(client)["id"]
    raw = b"board=DB1 circuit=1 zs=0.61\xce\xa9 r1r2=0.32\n"
    headers = {"Idempotency-Key": "batch-0001"}
    first = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=raw, content_type="text/plain",
                        headers=headers)
    again = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=raw, content_type="text/plain",
                        headers=headers)
    assert first.status_code == again.status_code == 200
    assert again.headers["Ohmtally-Replay"].endswith("Z") and "Ohmtally-Replay" not in first.headers
    assert again.get_json() == first.get_json()
    assert len(client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]) == 1
    history = client.get(f"/v1/jobs/{job}/circuits?history=true").get_json()["circuits"][0]["history"]
    assert len(history["zs_ohm"]) == 1
    other = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=raw + b"board=DB1 circuit=2 zs=1\n",
                        content_type="text/plain", headers=headers)
    assert other.status_code == 409 and other.get_json()["code"] == "idempotency_key_reused"
    bad = client.post(f"/v1/jobs/{job}/readings", data=raw, content_type="text/plain",
                      headers={"Idempotency-Key": "has space"})
    assert bad.status_code == 400 and bad.get_json()["code"] == "bad_idempotency_key"
    refused = {"Idempotency-Key": "batch-0002"}
    for _ in range(2):
        answer = client.post(f"/v1/jobs/{job}/readings", data=b"", content_type="text/plain", headers=refused)
        assert answer.status_code in (400, 422)
    assert len(client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]) == 2  # refused body kept once
