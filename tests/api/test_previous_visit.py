"""The previous visit through the API: jobs naming an installation, the previous_visit check in a job's
verdicts, GET /v1/jobs/<id>/changes, the explicit previous job and rename map, and tenancy.

Thresholds are the ruleset's previous_visit figures (ohmtally's choice, `common practice`); the engine's
own tests (tests/engine/test_previous_visit.py) take each to its boundary. Tenancy rule: another
organisation's job is never used nor revealed (OWASP API Security Top 10, API1, common practice).
"""

from __future__ import annotations

from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from tests.api.keyring import bearer, issue_key, unique_org

pytestmark = pytest.mark.postgres


def _job(client: FlaskClient, headers: dict[str, str] | None = None, **fields: Any) -> dict[str, Any]:
    body = {"reference": "PI", "site": "Unit 4, Example Way", **fields}
    response = client.post("/v1/jobs", json=body, headers=headers or {})
    assert response.status_code == 201, response.get_json()
    job: dict[str, Any] = response.get_json()
    return job


def _post(client: FlaskClient, job_id: int, circuits: list[dict[str, Any]],
          headers: dict[str, str] | None = None, **extra: Any) -> dict[str, Any]:
    response = client.post(f"/v1/jobs/{job_id}/readings", json={"circuits": circuits, **extra},
                           headers=headers or {})
    assert response.status_code == 200, response.get_json()
    body: dict[str, Any] = response.get_json()
    return body


def _previous_checks(verdicts: list[dict[str, Any]]) -> dict[str, list[dict[str, Any]]]:
    return {f"{v['board']}/{v['circuit']}": [c for c in v["checks"] if c["check"] == "previous_visit"]
            for v in verdicts}


def _verdicts(client: FlaskClient, job_id: int,
              headers: dict[str, str] | None = None) -> list[dict[str, Any]]:
    response = client.get(f"/v1/jobs/{job_id}/verdicts", headers=headers or {})
    assert response.status_code == 200, response.get_json()
    verdicts: list[dict[str, Any]] = response.get_json()["verdicts"]
    return verdicts


def test_a_job_carries_its_installation_and_date(client: FlaskClient) -> None:
    """installation_ref, tested_on, previous_job_id and visit_map are stored, answered, and PATCHed."""
    job = _job(client, installation_ref="INST-9", tested_on="2026-11-30")
    assert (job["installation_ref"], job["tested_on"], job["previous_job_id"], job["visit_map"]) == \
        ("INST-9", "2026-11-30", None, None)
    moved = {"boards": {"CU": "DB1"}, "circuits": [{"from": {"board": "CU", "circuit": "7"},
                                                    "to": {"board": "DB1", "circuit": "3"}}]}
    patched = client.patch(f"/v1/jobs/{job['id']}", json={"visit_map": moved, "tested_on": "2026-12-01"})
    assert patched.status_code == 200, patched.get_json()
    assert patched.get_json()["visit_map"] == moved and patched.get_json()["tested_on"] == "2026-12-01"
    assert patched.get_json()["revision"] == job["revision"] + 1


def test_bad_visit_fields_are_422_with_pointers(client: FlaskClient) -> None:
    """A bad date, a map naming one old circuit twice, a missing previous job: 422, each with its pointer."""
    bad_date = client.post("/v1/jobs", json={"reference": "R", "site": "S", "tested_on": "30/11/2026"})
    assert bad_date.status_code == 422
    assert [e["pointer"] for e in bad_date.get_json()["errors"]] == ["/tested_on"]
    move = {"from": {"board": "CU", "circuit": "1"}, "to": {"board": "DB1", "circuit": "1"}}
    twice = client.post("/v1/jobs", json={"reference": "R", "site": "S",
                                          "visit_map": {"circuits": [move, move]}})
    assert twice.status_code == 422
    assert [e["pointer"] for e in twice.get_json()["errors"]] == ["/visit_map/circuits/1/from"]
    missing = client.post("/v1/jobs", json={"reference": "R", "site": "S", "previous_job_id": 2_000_000})
    assert missing.status_code == 422
    assert missing.get_json()["errors"][0]["pointer"] == "/previous_job_id"
    job = _job(client)
    itself = client.patch(f"/v1/jobs/{job['id']}", json={"previous_job_id": job["id"]})
    assert itself.status_code == 422 and itself.get_json()["code"] == "previous_job_invalid"


def test_first_visit_has_no_check_and_no_changes(client: FlaskClient) -> None:
    """A job with no earlier visit: no previous_visit result; changes answers previous null, lists empty."""
    job = _job(client, installation_ref="INST-1", tested_on="2026-11-01")
    posted = _post(client, job["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.5}])
    assert _previous_checks(posted["verdicts"]) == {"DB1/1": []}
    changes = client.get(f"/v1/jobs/{job['id']}/changes").get_json()
    assert changes == {"job_id": job["id"], "previous": None, "circuits": [], "appeared": [], "gone": [],
                       "ambiguous": [], "supply": []}


def test_readings_show_what_changed_since_the_last_visit(client: FlaskClient) -> None:
    """Posting this visit's readings into a job naming an installation shows per circuit what changed
    and which changes need a look: insulation > 999 → 4.5 MΩ and R1+R2 0.48 → 0.64 Ω (+1/3) do
    (previous_visit figures, common practice), Zs 0.9 → 0.92 Ω does not."""
    before = _job(client, installation_ref="INST-2", tested_on="2021-06-10")
    _post(client, before["id"], [{"board": "DB1", "circuit": "1", "ir_le_mohm": ">999", "r1_r2_ohm": 0.48,
                                  "zs_ohm": 0.9},
                                 {"board": "DB1", "circuit": "2", "r1_r2_ohm": 0.3}])
    now = _job(client, installation_ref="INST-2", tested_on="2026-11-20")
    posted = _post(client, now["id"], [{"board": "DB1", "circuit": "1", "ir_le_mohm": 4.5, "r1_r2_ohm": 0.64,
                                        "zs_ohm": 0.92},
                                       {"board": "DB1", "circuit": "3", "r1_r2_ohm": 0.3}])
    checks = _previous_checks(posted["verdicts"])
    assert sorted(c["inputs"]["field"] for c in checks["DB1/1"]) == ["ir_le_mohm", "r1_r2_ohm"]
    assert all(c["outcome"] == "investigate" for c in checks["DB1/1"])
    r1r2 = next(c for c in checks["DB1/1"] if c["inputs"]["field"] == "r1_r2_ohm")
    assert r1r2["inputs"]["previous"] == {"value": 0.48, "relation": "=", "unit": "Ω", "date": "2021-06-10",
                                          "job": before["id"]}
    assert checks["DB1/3"] == []  # new since the last visit: listed, not judged
    assert _previous_checks(_verdicts(client, now["id"])) == checks
    changes = client.get(f"/v1/jobs/{now['id']}/changes").get_json()
    assert changes["previous"] == {"job": before["id"], "date": "2021-06-10"}
    assert changes["appeared"] == [{"board": "DB1", "circuit": "3"}]
    assert changes["gone"] == [{"board": "DB1", "circuit": "2"}]
    (circuit,) = changes["circuits"]
    assert {row["field"]: row["needs_look"] for row in circuit["changes"]} == \
        {"ir_le_mohm": True, "r1_r2_ohm": True, "zs_ohm": False}
    page = client.get(f"/v1/jobs/{now['id']}/verdicts?format=html")
    assert page.status_code == 200 and "previous 0.48 Ω (2021-06-10)" in page.get_data(as_text=True)


def test_the_latest_earlier_visit_by_date_counts_not_by_posting_order(client: FlaskClient) -> None:
    """Two earlier visits posted newest first: the one with the later tested_on is the previous visit;
    a visit dated after this one is not."""
    newer = _job(client, installation_ref="INST-3", tested_on="2024-05-01")
    _post(client, newer["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.6}])
    older = _job(client, installation_ref="INST-3", tested_on="2019-05-01")
    _post(client, older["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.3}])
    later = _job(client, installation_ref="INST-3", tested_on="2030-01-01")
    _post(client, later["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 9.0}])
    now = _job(client, installation_ref="INST-3", tested_on="2026-11-20")
    posted = _post(client, now["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.62}])
    (check,) = _previous_checks(posted["verdicts"])["DB1/1"]
    assert check["outcome"] == "pass" and check["inputs"]["visit"]["job"] == newer["id"]
    assert client.get(f"/v1/jobs/{older['id']}/changes").get_json()["previous"] is None


def test_an_explicit_previous_job_and_a_rename_map(client: FlaskClient) -> None:
    """previous_job_id wins over the installation; a board renamed CU → DB1 is matched only through
    the job's visit_map."""
    before = _job(client, tested_on="2022-01-01")
    _post(client, before["id"], [{"board": "CU", "circuit": "1", "r1_r2_ohm": 0.5}])
    now = _job(client, previous_job_id=before["id"])
    posted = _post(client, now["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.9}])
    assert _previous_checks(posted["verdicts"]) == {"DB1/1": []}  # never guessed
    patched = client.patch(f"/v1/jobs/{now['id']}", json={"visit_map": {"boards": {"CU": "DB1"}}})
    assert patched.status_code == 200
    (check,) = _previous_checks(_verdicts(client, now["id"]))["DB1/1"]
    assert check["outcome"] == "investigate" and check["inputs"]["previous"]["value"] == 0.5
    changes = client.get(f"/v1/jobs/{now['id']}/changes").get_json()
    assert changes["circuits"][0]["previous_key"] == {"board": "CU", "circuit": "1"}


def test_a_zdb_change_is_listed_and_judged(client: FlaskClient) -> None:
    """A board's Zdb 0.25 → 0.5 Ω changes the Ze its circuits see by more than 20 % and 0.1 Ω
    (previous_visit figures, common practice)."""
    before = _job(client, installation_ref="INST-4", tested_on="2020-02-02")
    _post(client, before["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.4}],
          boards=[{"board": "DB1", "zdb_ohm": 0.25}])
    now = _job(client, installation_ref="INST-4", tested_on="2026-02-02")
    posted = _post(client, now["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.4}],
                   boards=[{"board": "DB1", "zdb_ohm": 0.5}])
    (check,) = _previous_checks(posted["verdicts"])["DB1/1"]
    assert check["inputs"]["field"] == "ze_ohm" and check["outcome"] == "investigate"
    supply = client.get(f"/v1/jobs/{now['id']}/changes").get_json()["supply"]
    assert [(row["where"], row["needs_look"]) for row in supply] == [("board DB1", True)]


def test_another_organisations_job_is_never_the_previous_visit(auth_app: Flask) -> None:
    """Bob's job with Alice's installation_ref and an earlier date is never used; naming it as
    previous_job_id is refused (422) exactly as a missing job is."""
    client = auth_app.test_client()
    _a, alice_key = issue_key(auth_app, unique_org("alpha"), "read,write")
    _b, bob_key = issue_key(auth_app, unique_org("bravo"), "read,write")
    alice, bob = bearer(alice_key), bearer(bob_key)
    theirs = _job(client, bob, installation_ref="SHARED-1", tested_on="2020-01-01")
    _post(client, theirs["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.1}], bob)
    mine = _job(client, alice, installation_ref="SHARED-1", tested_on="2026-01-01")
    posted = _post(client, mine["id"], [{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.9}], alice)
    assert _previous_checks(posted["verdicts"]) == {"DB1/1": []}
    assert client.get(f"/v1/jobs/{mine['id']}/changes", headers=alice).get_json()["previous"] is None
    named = client.post("/v1/jobs", json={"reference": "R", "site": "S", "previous_job_id": theirs["id"]},
                        headers=alice)
    missing = client.post("/v1/jobs", json={"reference": "R", "site": "S", "previous_job_id": 2_000_000},
                          headers=alice)
    assert named.status_code == missing.status_code == 422
    assert named.get_json()["detail"].replace(str(theirs["id"]), "N") == \
        missing.get_json()["detail"].replace("2000000", "N")
    patched = client.patch(f"/v1/jobs/{mine['id']}", json={"previous_job_id": theirs["id"]}, headers=alice)
    assert patched.status_code == 422
    assert client.get(f"/v1/jobs/{mine['id']}/changes", headers=bob).status_code == 404
