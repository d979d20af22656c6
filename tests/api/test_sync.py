"""Sync: the verdicts' ETag and 304, ?updated_since=, stable cursor pages, external references.

External references:
- RFC 9110: §8.8.3 (a strong ETag: equal tags, identical bodies), §13.1.2
  (If-None-Match uses the weak comparison, ``*`` matches any), §15.4.5 (304
  has no content).
- RFC 3339 §5.6 date-times, compared with the standard library's datetime.
- RFC 7396 JSON merge patch (members sent change; ``null`` removes).
Jobs and circuits are invented.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from datetime import datetime, timedelta
from typing import Any
from urllib.parse import quote

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select

from api.db.models import WebhookEvent

pytestmark = pytest.mark.postgres

CIRCUIT = {"board": "DB1", "circuit": "1", "polarity_ok": True}


def _job(client: FlaskClient, reference: str, **extra: Any) -> dict[str, Any]:
    response = client.post("/v1/jobs", json={"reference": reference, "site": "Invented site", **extra})
    assert response.status_code == 201
    body: dict[str, Any] = response.get_json()
    return body


def _post(client: FlaskClient, job_id: int, *circuits: dict[str, Any]) -> None:
    assert client.post(f"/v1/jobs/{job_id}/readings", json={"circuits": list(circuits)}).status_code == 200


def test_unchanged_verdicts_answer_304(client: FlaskClient) -> None:
    """If-None-Match with the ETag (plain, weak, listed, or *) gives a 304 without a body (§15.4.5)."""
    job = _job(client, "E-1")
    _post(client, job["id"], CIRCUIT)
    first = client.get(f"/v1/jobs/{job['id']}/verdicts")
    etag = first.headers["ETag"]
    assert first.status_code == 200 and etag.startswith('"') and etag.endswith('"')
    again = client.get(f"/v1/jobs/{job['id']}/verdicts")
    assert again.headers["ETag"] == etag and again.get_data() == first.get_data()  # strong: same bytes
    for header in (etag, f"W/{etag}", f'"other", {etag}', "*"):
        cached = client.get(f"/v1/jobs/{job['id']}/verdicts", headers={"If-None-Match": header})
        assert cached.status_code == 304 and cached.get_data() == b"" and cached.headers["ETag"] == etag
    stale = client.get(f"/v1/jobs/{job['id']}/verdicts", headers={"If-None-Match": '"not-it"'})
    assert stale.status_code == 200


def test_the_etag_changes_with_every_change(client: FlaskClient) -> None:
    """A readings post or a PATCH gives a new ETag, and the old one then gets the full 200."""
    job = _job(client, "E-2")
    tags = [client.get(f"/v1/jobs/{job['id']}/verdicts").headers["ETag"]]
    _post(client, job["id"], CIRCUIT)
    tags.append(client.get(f"/v1/jobs/{job['id']}/verdicts").headers["ETag"])
    _post(client, job["id"], {**CIRCUIT, "polarity_ok": False})
    tags.append(client.get(f"/v1/jobs/{job['id']}/verdicts").headers["ETag"])
    assert client.patch(f"/v1/jobs/{job['id']}", json={"external_ref": "crm-2"}).status_code == 200
    tags.append(client.get(f"/v1/jobs/{job['id']}/verdicts").headers["ETag"])
    assert len(set(tags)) == 4
    answer = client.get(f"/v1/jobs/{job['id']}/verdicts", headers={"If-None-Match": tags[0]})
    assert answer.status_code == 200 and answer.get_json()["verdicts"][0]["outcome"] == "fail"


def test_a_304_reads_no_record(client: FlaskClient, monkeypatch: pytest.MonkeyPatch) -> None:
    """The 304 is decided from the job row: with record loading broken it still answers 304."""
    job = _job(client, "E-3")
    _post(client, job["id"], CIRCUIT)
    etag = client.get(f"/v1/jobs/{job['id']}/verdicts").headers["ETag"]

    def no_records(*_args: Any) -> Any:
        raise AssertionError("records were read for a 304")

    routes = sys.modules["api.routes.jobs"]
    monkeypatch.setattr(routes, "circuits_page", no_records)
    monkeypatch.setattr(routes, "context_rows", no_records)
    assert client.get(f"/v1/jobs/{job['id']}/verdicts", headers={"If-None-Match": etag}).status_code == 304


def test_revision_counts_changes_and_a_no_op_patch_is_not_one(client: FlaskClient) -> None:
    """revision starts at 1 and goes up by one per change; a PATCH that changes nothing leaves it."""
    job = _job(client, "R-1", external_ref="crm-r")
    assert job["revision"] == 1
    _post(client, job["id"], CIRCUIT)
    assert client.get(f"/v1/jobs/{job['id']}").get_json()["revision"] == 2
    same = client.patch(f"/v1/jobs/{job['id']}", json={"external_ref": "crm-r"}).get_json()
    assert same["revision"] == 2
    changed = client.patch(f"/v1/jobs/{job['id']}", json={"site": "Another invented site"}).get_json()
    assert changed["revision"] == 3 and changed["site"] == "Another invented site"
    assert changed["external_ref"] == "crm-r"  # merge patch: members not sent stay


def test_updated_since_keeps_jobs_changed_at_or_after(client: FlaskClient) -> None:
    """?updated_since= (RFC 3339, any offset) lists exactly the jobs changed at or after the instant."""
    old, touched = _job(client, "U-1"), _job(client, "U-2")
    _post(client, touched["id"], CIRCUIT)
    mark = client.get(f"/v1/jobs/{touched['id']}").get_json()["updated_at"]
    new = _job(client, "U-3")
    instant = datetime.fromisoformat(mark)

    def ids(since: str) -> list[int]:
        response = client.get(f"/v1/jobs?updated_since={quote(since)}")
        assert response.status_code == 200, response.get_json()
        return [j["id"] for j in response.get_json()["items"]]

    assert ids(mark) == [touched["id"], new["id"]]  # at (inclusive) or after
    plus_one = instant.astimezone(datetime.fromisoformat("2026-01-01T00:00:00+01:00").tzinfo)
    assert ids(plus_one.isoformat()) == [touched["id"], new["id"]]  # same instant, +01:00
    assert ids((instant + timedelta(microseconds=1)).isoformat()) == [new["id"]]
    assert old["id"] in ids("2000-01-01T00:00:00Z")
    unescaped = client.get(f"/v1/jobs?updated_since={plus_one.isoformat()}")  # '+' arrives as a space
    assert [j["id"] for j in unescaped.get_json()["items"]] == [touched["id"], new["id"]]


@pytest.mark.parametrize("since", ["yesterday", "2026-12-01", "2026-12-01T09:30:00"])
def test_updated_since_needs_a_full_rfc3339_time(client: FlaskClient, since: str) -> None:
    """A date alone, a time without an offset or prose is a 422 naming updated_since."""
    response = client.get(f"/v1/jobs?updated_since={since}")
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["parameter"] == "updated_since"


def test_cursor_pages_are_stable_under_inserts(client: FlaskClient) -> None:
    """Jobs created between pages appear once, after the cursor; none is skipped or repeated."""
    first = [_job(client, f"P-{n}")["id"] for n in range(5)]
    page = client.get("/v1/jobs?limit=2").get_json()
    seen = [j["id"] for j in page["items"]]
    stamps = [j["created_at"] for j in page["items"]]
    later = [_job(client, f"P-late-{n}")["id"] for n in range(3)]
    cursor = page["next_cursor"]
    while cursor:
        page = client.get(f"/v1/jobs?limit=2&cursor={cursor}").get_json()
        seen.extend(j["id"] for j in page["items"])
        stamps.extend(j["created_at"] for j in page["items"])
        if len(seen) == 4:
            later.append(_job(client, "P-during")["id"])
        cursor = page["next_cursor"]
    # job ids are random (they count nothing: migration 0006); the order is the creation order
    assert stamps == sorted(stamps) and len(seen) == len(set(seen))
    assert seen == first + later


def test_external_refs_are_set_cleared_and_filtered(client: FlaskClient) -> None:
    """PATCH sets a job's external_ref, ?external_ref= finds it, null clears it (RFC 7396)."""
    job, other = _job(client, "X-1"), _job(client, "X-2", external_ref="crm-other")
    patched = client.patch(f"/v1/jobs/{job['id']}", data=json.dumps({"external_ref": "crm-1"}),
                           content_type="application/merge-patch+json")
    assert patched.status_code == 200 and patched.get_json()["external_ref"] == "crm-1"
    found = client.get("/v1/jobs?external_ref=crm-1").get_json()["items"]
    assert [j["id"] for j in found] == [job["id"]]
    by_other = client.get("/v1/jobs?external_ref=crm-other").get_json()["items"]
    assert [j["id"] for j in by_other] == [other["id"]]
    client.patch(f"/v1/jobs/{job['id']}", json={"external_ref": None})
    assert client.get("/v1/jobs?external_ref=crm-1").get_json()["items"] == []
    assert client.get(f"/v1/jobs/{job['id']}").get_json()["external_ref"] is None


def test_bad_patches_are_refused(client: FlaskClient) -> None:
    """An unknown member or a ruleset change is a 422; a non-JSON body a 415; a missing job a 404."""
    job = _job(client, "X-3")
    assert client.patch(f"/v1/jobs/{job['id']}", json={"ruleset": "iec-60364"}).status_code == 422
    assert client.patch(f"/v1/jobs/{job['id']}", json={"colour": "red"}).status_code == 422
    assert client.patch(f"/v1/jobs/{job['id']}", data="x", content_type="text/plain").status_code == 415
    assert client.patch("/v1/jobs/99999", json={"external_ref": "x"}).status_code == 404


def test_circuit_external_ref(client: FlaskClient) -> None:
    """A circuit's ref is set by PATCH once readings made it, shows in /circuits, is a 404 before."""
    job = _job(client, "X-4")
    path = f"/v1/jobs/{job['id']}/circuits/{quote('Main DB')}/{quote('L1 sockets')}"
    assert client.patch(path, json={"external_ref": "asset-1"}).status_code == 404
    _post(client, job["id"], {"board": "Main DB", "circuit": "L1 sockets", "polarity_ok": True})
    patched = client.patch(path, json={"external_ref": "asset-1"})
    assert patched.status_code == 200 and patched.get_json()["external_ref"] == "asset-1"
    circuits = client.get(f"/v1/jobs/{job['id']}/circuits").get_json()["circuits"]
    assert [(c["board"], c["circuit"], c["external_ref"]) for c in circuits] == [
        ("Main DB", "L1 sockets", "asset-1")]
    assert client.patch(path, json={}).status_code == 422  # external_ref is required here


def test_verdict_events_carry_the_circuit_ref(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """A verdict.changed event names the circuit's and the job's external_ref."""
    app = app_factory(db_url, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    client = app.test_client()
    assert client.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/x",
                                             "events": ["verdict.changed"]}).status_code == 201
    job = _job(client, "X-5", external_ref="crm-5")
    _post(client, job["id"], CIRCUIT)
    client.patch(f"/v1/jobs/{job['id']}/circuits/DB1/1", json={"external_ref": "asset-5"})
    _post(client, job["id"], {**CIRCUIT, "polarity_ok": False})
    with app.extensions["ohmtally.db"]() as session:
        last = session.scalars(select(WebhookEvent).order_by(WebhookEvent.id.desc())).first()
    assert last is not None
    data = json.loads(last.body)["data"]
    assert (data["job_external_ref"], data["circuit_external_ref"], data["outcome"]) == (
        "crm-5", "asset-5", "fail")
