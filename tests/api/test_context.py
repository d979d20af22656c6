"""A post loads only the boards it touches and their feeder chains, and still answers exactly the
verdicts a verification of the whole job gives (issue 18: "a post's verdicts equal a full
re-verification of the job").

Reference: ``engine.verify`` over every record the job holds, with its installation and boards,
computed independently of the API from the job's own listings.
"""

from __future__ import annotations

import random
from typing import Any

import pytest
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import Site, build_board, build_installation, build_record, verify
from tests.api.paging import all_pages

pytestmark = pytest.mark.postgres

# An invented site: DB1 at the origin; DB2 fed from DB1/5 (stated by board facts); DB3 fed from DB2/4
# (stated the older way, on DB3's circuits); DB4 a separate board nothing feeds.
SITE_LINES = ("installation earthing=TN-C-S ze=0.21 pfc=1.6kA\n"
              "board=DB2 zdb=0.36 fed_from=DB1/5\n")


def _circuit_line(board: str, number: int, rng: random.Random) -> str:
    extra = " board_fed_from=DB2/4" if board == "DB3" else ""
    role = " circuit_role=distribution" if (board, number) in (("DB1", 5), ("DB2", 4)) else ""
    return (f"board={board} circuit={number} device=B{rng.choice([6, 16, 20, 32])} "
            f"r1_r2_ohm={rng.uniform(0.05, 1.2):.2f} zs_ohm={rng.uniform(0.25, 1.6):.2f} "
            f"length_m={rng.randint(5, 60)} line_mm2=2.5 cpc_mm2=1.5 polarity_ok=yes{role}{extra}\n")


def _job_with_site(client: FlaskClient, rng: random.Random) -> int:
    job: int = client.post("/v1/jobs", json={"reference": "CTX", "site": "Invented site"}).get_json()["id"]
    text = SITE_LINES + "".join(_circuit_line(b, n, rng) for b in ("DB1", "DB2", "DB3", "DB4")
                                for n in range(1, 7))
    assert client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=text,
                       content_type="text/plain").status_code == 200
    return job


def _whole_job(client: FlaskClient, job: int) -> dict[tuple[str, str], dict[str, Any]]:
    records = [build_record({"board": c["board"], "circuit": c["circuit"], **c["record"]})[0]
               for c in all_pages(client, f"/v1/jobs/{job}/circuits", "circuits")]
    installation, _ = build_installation(client.get(f"/v1/jobs/{job}/installation").get_json()["facts"] or {})
    boards = [build_board({**b["facts"], "board": b["board"]})[0]
              for b in client.get(f"/v1/jobs/{job}/boards").get_json()["boards"]]
    site = Site.of(installation, [b for b in boards if b is not None])
    return {v.key: v.as_dict() for v in verify([r for r in records if r is not None], "bs7671-2018-a2",
                                               site=site)}


@settings(max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 10_000), board=st.sampled_from(["DB1", "DB2", "DB3", "DB4"]),
       number=st.integers(1, 8))
def test_a_posts_verdicts_equal_a_full_verification(client: FlaskClient, seed: int, board: str,
                                                    number: int) -> None:
    """Whatever circuit a post touches (on the origin board, a sub-board fed by facts, one fed by its
    circuits' own feeder, or an unrelated board; a new circuit or an existing one), its answer's verdicts
    are those of the whole job verified with its site."""
    rng = random.Random(seed)
    job = _job_with_site(client, rng)
    answer = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data=_circuit_line(board, number, rng),
                         content_type="text/plain").get_json()
    whole = _whole_job(client, job)
    (verdict,) = answer["verdicts"]
    assert verdict == whole[(board, str(number))]


def test_a_feeder_circuit_change_is_judged_with_its_downstream_boards_facts(client: FlaskClient) -> None:
    """A post to DB2's facts verifies DB2's circuits with the new Zdb, and each equals the whole job's."""
    job = _job_with_site(client, random.Random(7))
    answer = client.post(f"/v1/jobs/{job}/readings?adapter=lines", data="board=DB2 zdb=0.52\n",
                         content_type="text/plain").get_json()
    whole = _whole_job(client, job)
    assert answer["facts"] == ["board DB2"]
    assert sorted(v["circuit"] for v in answer["verdicts"]) == [str(n) for n in range(1, 7)]
    for verdict in answer["verdicts"]:
        assert verdict == whole[(verdict["board"], verdict["circuit"])]


def test_a_page_of_verdicts_loads_its_boards_and_feeders(client: FlaskClient) -> None:
    """Each page of a multi-board job equals the whole job's verdicts for its circuits (DB3's page
    needs DB2's sub-main DB2/4 and DB1's DB1/5 for the drop from the origin)."""
    job = _job_with_site(client, random.Random(11))
    whole = _whole_job(client, job)
    for board in ("DB3", "DB2", "DB4"):
        page = client.get(f"/v1/jobs/{job}/verdicts?board={board}").get_json()["verdicts"]
        assert page and all(v == whole[(v["board"], v["circuit"])] for v in page)
