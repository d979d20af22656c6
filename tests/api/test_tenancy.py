"""Tenancy: another organisation's job is a 404 word for word like a missing job, on every job route.

The routes come from the app's own OpenAPI document, so a job route added
later is covered without editing this test. Source for the rule: the
issue's "another organisation's job → 404 (never reveal it exists)"
(common practice: OWASP API Security Top 10, API1 broken object level
authorisation).
"""

from __future__ import annotations

import json
import re
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from tests.api.keyring import bearer, issue_key, unique_org

pytestmark = pytest.mark.postgres

LINES = b"board=DB1 circuit=1 zs=0.41 r1r2=0.30\nboard=DB1 circuit=2 zs=0.52\n"
MISSING = 2_000_000  # an id no test creates


def _setup(app: Flask) -> tuple[FlaskClient, dict[str, str], dict[str, str], dict[str, Any]]:
    client = app.test_client()
    _a, alice = issue_key(app, unique_org("alpha"), "read,write,admin")
    _b, bob = issue_key(app, unique_org("bravo"), "read,write,admin")
    job = client.post("/v1/jobs", json={"reference": "SECRET-REF", "site": "Alpha's client, 1 Private Road"},
                      headers=bearer(alice)).get_json()
    posted = client.post(f"/v1/jobs/{job['id']}/readings?adapter=lines", data=LINES,
                         content_type="text/plain", headers=bearer(alice)).get_json()
    return client, bearer(alice), bearer(bob), {"job": job, "upload": posted["upload"]["id"]}


def _fill(template: str, job_id: int, upload_id: int) -> str:
    return (template.replace("{job_id}", str(job_id)).replace("{upload_id}", str(upload_id))
            .replace("{board}", "DB1").replace("{circuit}", "1"))


def _body_for(method: str) -> dict[str, Any]:
    if method in ("post", "patch", "put"):
        return {"data": LINES, "content_type": "text/plain"}
    return {}


def _stripped(response: Any, job_id: int) -> str:
    """The problem without its request id, the job id in it written as ``N``."""
    body = dict(response.get_json())
    body.pop("request_id", None)
    return re.sub(rf"\b{job_id}\b", "N", json.dumps(body, sort_keys=True))


def test_every_job_route_hides_another_organisations_job(auth_app: Flask) -> None:
    """Bob's key on each of Alice's job routes gets exactly the 404 a missing job gets; nothing changes."""
    client, alice, bob, made = _setup(auth_app)
    job_id, upload_id = made["job"]["id"], made["upload"]
    before = (client.get(f"/v1/jobs/{job_id}/circuits?history=true", headers=alice).get_json(),
              client.get(f"/v1/jobs/{job_id}/uploads", headers=alice).get_json())
    spec = client.get("/v1/openapi.json").get_json()
    tried = 0
    for template, operations in spec["paths"].items():
        if "{job_id}" not in template:
            continue
        for method in operations:
            if method not in ("get", "post", "patch", "put", "delete"):
                continue
            theirs = client.open(_fill(template, job_id, upload_id), method=method.upper(),
                                 headers=bob, **_body_for(method))
            missing = client.open(_fill(template, MISSING, upload_id), method=method.upper(),
                                  headers=bob, **_body_for(method))
            assert theirs.status_code == missing.status_code, (method, template)
            # a body this test cannot shape for a route (a PATCH's JSON) may be refused first,
            # identically for both; every route this test can feed must say 404
            if method == "get" or template.endswith("/readings"):
                assert theirs.status_code == 404, (method, template)
            assert 400 <= theirs.status_code < 500
            assert _stripped(theirs, job_id) == _stripped(missing, MISSING)
            assert "SECRET-REF" not in theirs.get_data(as_text=True)
            tried += 1
    assert tried >= 6  # job, circuits, verdicts, readings, uploads, one upload at least
    after = (client.get(f"/v1/jobs/{job_id}/circuits?history=true", headers=alice).get_json(),
             client.get(f"/v1/jobs/{job_id}/uploads", headers=alice).get_json())
    assert after == before


def test_listing_never_leaks_through_pages_or_filters(auth_app: Flask) -> None:
    """GET /v1/jobs for Bob shows none of Alice's jobs: not by reference filter, not past a cursor."""
    client, alice, bob, made = _setup(auth_app)
    for n in range(5):
        client.post("/v1/jobs", json={"reference": f"A-{n}", "site": "alpha site"}, headers=alice)
    bobs = client.post("/v1/jobs", json={"reference": "B-1", "site": "bravo site"}, headers=bob).get_json()
    seen: list[int] = []
    cursor = None
    while True:
        query = "?limit=1" + (f"&cursor={cursor}" if cursor else "")
        page = client.get(f"/v1/jobs{query}", headers=bob).get_json()
        seen += [item["id"] for item in page["items"]]
        assert all(item["organisation"] == bobs["organisation"] for item in page["items"])
        cursor = page["next_cursor"]
        if not cursor:
            break
    assert seen == [bobs["id"]]
    assert client.get("/v1/jobs?reference=SECRET-REF", headers=bob).get_json()["items"] == []
    alices = client.get("/v1/jobs?limit=2", headers=alice).get_json()  # Alice's cursor, used by Bob
    leaked = client.get(f"/v1/jobs?cursor={alices['next_cursor']}", headers=bob).get_json()["items"]
    assert all(item["organisation"] == bobs["organisation"] for item in leaked)
    mine = client.get("/v1/jobs?limit=500", headers=alice).get_json()["items"]
    assert len(mine) == 6 and made["job"]["id"] in {j["id"] for j in mine}


def test_idempotency_keys_are_per_organisation(auth_app: Flask) -> None:
    """Bob reusing Alice's Idempotency-Key gets his own new job, never Alice's stored answer."""
    client, alice, bob, _made = _setup(auth_app)
    body = {"reference": "SAME", "site": "same words"}
    first = client.post("/v1/jobs", json=body, headers={**alice, "Idempotency-Key": "k-1"})
    other = client.post("/v1/jobs", json=body, headers={**bob, "Idempotency-Key": "k-1"})
    assert first.status_code == other.status_code == 201
    assert "Ohmtally-Replay" not in other.headers
    assert first.get_json()["id"] != other.get_json()["id"]
    assert first.get_json()["organisation"] != other.get_json()["organisation"]
