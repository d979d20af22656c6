"""The installation and boards of a job: facts recorded once, inherited by every circuit, merged with
history, re-verifying what they affect (issue 15) — on SQLite and PostgreSQL.

Reference for every verdict: ``engine.verify`` over the job's records with the same site (the job's
verdicts must be what the engine says about what the job holds). Limits named where a test depends on
one: BS 7671:2018+A2 Table 41.3 (B32: 1.37 Ω); the handbook rule of thumb 0.8 × 1.37 = 1.096 Ω,
printed rounded down to 1.09 Ω as the trade prints such limits (the ruleset's rounding entry).
"""

from __future__ import annotations

from typing import Any

import pytest
from flask.testing import FlaskClient

from engine import Site, build_board, build_installation, build_record, verify
from tests.api.paging import all_pages

pytestmark = pytest.mark.postgres

INSTALLATION = {"earthing": "TN-C-S (PME)", "nominal_voltage_v": 230, "supply": "public",
                "ze_ohm": 0.21, "pfc_ka": 1.9}
DB2 = {"board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9, "location": "workshop (invented)"}


def _job(client: FlaskClient, reference: str = "S-1") -> int:
    made = client.post("/v1/jobs", json={"reference": reference, "site": "Invented Test Site"})
    assert made.status_code == 201
    job_id: int = made.get_json()["id"]
    return job_id


def _lines(client: FlaskClient, job: int, text: str) -> dict[str, Any]:
    posted = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=text, content_type="text/plain")
    assert posted.status_code == 200, posted.get_json()
    body: dict[str, Any] = posted.get_json()
    return body


def _check(verdict: dict[str, Any], name: str) -> dict[str, Any]:
    (found,) = [c for c in verdict["checks"] if c["check"] == name]
    return found


def test_a_one_field_post_is_fully_judged_once_the_job_knows_its_site(client: FlaskClient) -> None:
    """PUT the installation and a board, then `board=DB2 circuit=3 zs_ohm=0.82` with the device: the loop
    check is judged (not incomplete for want of the earthing system) and the verdict names where each
    inherited value came from."""
    job = _job(client)
    assert client.put(f"/v1/jobs/{job}/installation", json=INSTALLATION).status_code == 200
    assert client.put(f"/v1/jobs/{job}/boards/DB2", json=DB2).status_code == 200
    body = _lines(client, job, "board=DB2 circuit=3 device=B32 zs_ohm=0.82\n")
    (verdict,) = body["verdicts"]
    loop = _check(verdict, "loop_impedance")
    assert loop["outcome"] == "pass" and loop["limit"] == pytest.approx(1.09)
    assert verdict["inherited"]["earthing"] == "installation"
    assert verdict["inherited"]["ze_ohm"] == "board DB2"  # a sub-board's circuits see its Zdb, not Ze


def test_the_jobs_verdicts_are_the_engines_with_the_same_site(client: FlaskClient) -> None:
    """GET …/verdicts equals engine.verify over the job's records and its installation and boards."""
    job = _job(client)
    client.put(f"/v1/jobs/{job}/installation", json=INSTALLATION)
    client.put(f"/v1/jobs/{job}/boards/DB2", json=DB2)
    _lines(client, job, "board=DB1 circuit=5 device=C40 r1_r2_ohm=0.18 zs_ohm=0.39 "
                        "circuit_role=distribution\n"
                        "board=DB2 circuit=1 device=B16 r1_r2_ohm=0.62 zs_ohm=1.05 polarity_ok=yes\n")
    records = [build_record({"board": c["board"], "circuit": c["circuit"], **c["record"]})[0]
               for c in all_pages(client, f"/v1/jobs/{job}/circuits", "circuits")]
    installation, _ = build_installation(client.get(f"/v1/jobs/{job}/installation").get_json()["facts"])
    board, _ = build_board({**client.get(f"/v1/jobs/{job}/boards/DB2").get_json()["facts"], "board": "DB2"})
    assert board is not None
    expected = {v.key: v.as_dict() for v in verify([r for r in records if r is not None], "bs7671-2018-a2",
                                                   site=Site.of(installation, [board]))}
    got = all_pages(client, f"/v1/jobs/{job}/verdicts", "verdicts")
    assert {(v["board"], v["circuit"]): v for v in got} == expected


def test_board_facts_have_history_and_a_put_replaces(client: FlaskClient) -> None:
    """Two PUTs of DB2: the second's facts stand, a fact it leaves out is cleared, and ?history=true lists
    every value with its upload (a cleared one as null)."""
    job = _job(client)
    first = client.put(f"/v1/jobs/{job}/boards/DB2", json=DB2).get_json()
    second = client.put(f"/v1/jobs/{job}/boards/DB2", json={"zdb_ohm": 0.44, "board_fed_from": "DB1/5"})
    assert second.status_code == 200
    state = client.get(f"/v1/jobs/{job}/boards/DB2?history=true").get_json()
    assert state["facts"] == {"board_fed_from": "DB1/5", "zdb_ohm": 0.44}
    assert [h["value"] for h in state["history"]["zdb_ohm"]] == [0.41, 0.44]
    assert [h["value"] for h in state["history"]["pfc_ka"]] == [0.9, None]
    assert state["history"]["zdb_ohm"][0]["upload_id"] == first["upload"]["id"]
    listed = client.get(f"/v1/jobs/{job}/boards").get_json()["boards"]
    assert [b["board"] for b in listed] == ["DB2"]


def test_a_put_reports_the_circuits_whose_outcome_it_turned(client: FlaskClient) -> None:
    """Ze for the origin board's circuits comes from the installation: a Ze that makes a circuit's
    temperature-corrected Zs exceed its maximum turns it from pass to fail, and the PUT says so."""
    job = _job(client)
    _lines(client, job, "board=DB1 circuit=1 device=B32 zs_ohm=1.2 r1_r2_ohm=0.9 polarity_ok=yes\n")
    client.put(f"/v1/jobs/{job}/installation", json={**INSTALLATION, "ze_ohm": 0.3})
    before = all_pages(client, f"/v1/jobs/{job}/verdicts", "verdicts")[0]
    changed = client.put(f"/v1/jobs/{job}/installation", json={**INSTALLATION, "ze_ohm": 0.05}).get_json()
    after = all_pages(client, f"/v1/jobs/{job}/verdicts", "verdicts")[0]
    if before["outcome"] == after["outcome"]:
        assert changed["changed"] == []
    else:
        assert changed["changed"] == [{"board": "DB1", "circuit": "1", "before": before["outcome"],
                                       "after": after["outcome"]}]
    assert changed["notice"].startswith("Decision aid")


def test_board_fact_lines_and_installation_lines_in_a_readings_post(client: FlaskClient) -> None:
    """A logger's board line (a board and no circuit) and installation line state facts: the job
    holds them, the answer names them, and the board's circuits are verified with them."""
    job = _job(client)
    body = _lines(client, job, "installation earthing=TN-C-S ze=0.21 pfc=1.9kA\n"
                               "board=DB2 zdb=0.41 pfc=0.9kA fed_from=DB1/5\n"
                               "board=DB2 circuit=1 device=B16 zs_ohm=0.95\n")
    assert body["facts"] == ["board DB2", "installation"]
    assert client.get(f"/v1/jobs/{job}/boards/DB2").get_json()["facts"]["zdb_ohm"] == 0.41
    assert client.get(f"/v1/jobs/{job}/installation").get_json()["facts"]["earthing"] == "TN-C-S"
    (verdict,) = body["verdicts"]
    assert verdict["inherited"]["ze_ohm"] == "board DB2"


def test_the_three_ways_in_give_the_same_verdicts(client: FlaskClient) -> None:
    """The same site as a JSON site document, as CSV sheets (installation, boards, circuits) and as
    lines with fact lines gives equal verdicts."""
    site_doc = {"installation": {"earthing": "TN-C-S", "ze_ohm": 0.21, "pfc_ka": 1.9},
                "boards": [{"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9}],
                "circuits": [{"board": "DB1", "circuit": "5", "device": "C40", "r1_r2_ohm": 0.18},
                             {"board": "DB2", "circuit": "1", "device": "B16", "zs_ohm": 0.95}]}
    by_json = _job(client, "J")
    assert client.post(f"/v1/jobs/{by_json}/readings", json=site_doc).status_code == 200
    by_csv = _job(client, "C")
    for sheet in ("Ze at origin,PFC at origin,earthing\n0.21,1.9,TN-C-S\n",
                  "board,board_fed_from,Zdb,PFC at board\nDB2,DB1/5,0.41,0.9\n",
                  "board,circuit,device,r1_r2_ohm,zs_ohm\nDB1,5,C40,0.18,\nDB2,1,B16,,0.95\n"):
        posted = client.post(f"/v1/jobs/{by_csv}/readings", data=sheet, content_type="text/csv")
        assert posted.status_code == 200, posted.get_json()
    by_lines = _job(client, "L")
    _lines(client, by_lines, "installation earthing=TN-C-S ze=0.21 pfc=1.9kA\n"
                             "board=DB2 zdb=0.41 pfc=0.9kA fed_from=DB1/5\n"
                             "board=DB1 circuit=5 device=C40 r1_r2_ohm=0.18\n"
                             "board=DB2 circuit=1 device=B16 zs_ohm=0.95\n")

    def verdicts(job: int) -> list[Any]:
        return [{k: v for k, v in verdict.items() if k != "description"}
                for verdict in all_pages(client, f"/v1/jobs/{job}/verdicts", "verdicts")]

    assert verdicts(by_json) == verdicts(by_csv) == verdicts(by_lines)


@pytest.mark.parametrize(("path", "body", "status", "code"), [
    ("installation", {"ze_ohm": "0.4 kA"}, 422, "invalid_facts"),
    ("installation", ["TN-S"], 422, "invalid_body"),
    ("boards/DB2", {"board": "DB9", "zdb_ohm": 0.3}, 422, "board_mismatch"),
    ("boards/DB2", {"zdb_ohm": -1, "pfc_ka": "0.9 V"}, 422, "invalid_facts"),
])
def test_bad_facts_change_nothing(client: FlaskClient, path: str, body: Any, status: int, code: str) -> None:
    """A fact the engine cannot read, a body that is no object, a board that is not the path's: a
    problem with a pointer, and nothing is stored."""
    job = _job(client)
    refused = client.put(f"/v1/jobs/{job}/{path}", json=body)
    assert refused.status_code == status and refused.get_json()["code"] == code
    assert client.get(f"/v1/jobs/{job}/installation").get_json()["facts"] is None
    assert client.get(f"/v1/jobs/{job}/boards").get_json()["boards"] == []


def test_unknown_fact_names_are_warnings_and_an_unknown_board_is_404(client: FlaskClient) -> None:
    """A typo in a fact name is read as nothing and said (warning with its pointer); the known facts
    are taken. A board never recorded is a 404."""
    job = _job(client)
    put = client.put(f"/v1/jobs/{job}/boards/DB2", json={"zdb_ohm": 0.41, "zbd_ohm": 0.5}).get_json()
    assert put["state"]["facts"] == {"zdb_ohm": 0.41}
    assert [(w["pointer"], w["code"]) for w in put["warnings"]] == [("/zbd_ohm", "unknown_field")]
    missing = client.get(f"/v1/jobs/{job}/boards/DB7")
    assert missing.status_code == 404 and missing.get_json()["code"] == "board_not_found"


def test_a_put_with_an_idempotency_key_is_applied_once(client: FlaskClient) -> None:
    """The same PUT resent with its key is the first answer replayed: one upload, one history row."""
    job = _job(client)
    headers = {"Idempotency-Key": "facts-1"}
    first = client.put(f"/v1/jobs/{job}/installation", json=INSTALLATION, headers=headers)
    again = client.put(f"/v1/jobs/{job}/installation", json=INSTALLATION, headers=headers)
    assert first.get_data() == again.get_data() and "Ohmtally-Replay" in again.headers
    history = client.get(f"/v1/jobs/{job}/installation?history=true").get_json()["history"]
    assert [len(values) for values in history.values()] == [1] * len(INSTALLATION)
