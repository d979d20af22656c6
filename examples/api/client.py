"""ohmtally's REST API from Python with httpx: the endpoints in the order a job uses them.

Run against a server (``make demo`` prints its URL; or ``OHMTALLY_AUTH=off ohmtally serve``,
loopback only)::

    python examples/api/client.py --url http://127.0.0.1:8000

With keys on, put a key with the read and write scopes in ``OHMTALLY_API_KEY``. The job is made
here: its id is random, so it is always read from the answer, never assumed.
"""

from __future__ import annotations

import argparse
import json
import os
import uuid
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx

DEMO = Path(__file__).resolve().parent.parent / "demo"
# The demo meter export is in an invented layout: name its mapping profile.
METER = {"profile": "example-semicolon-decimal-comma"}


def show(title: str, response: httpx.Response) -> Any:
    print(f"--- {title}: HTTP {response.status_code} {response.headers.get('content-type', '')}")
    if "json" not in response.headers.get("content-type", ""):
        print(response.content[:200])
        return response.content
    body = response.json()
    print(json.dumps(body, ensure_ascii=False, indent=2)[:1500])
    return body


def pages(api: httpx.Client, path: str, **params: Any) -> Iterator[dict[str, Any]]:
    """Every page of a paged listing: follow ``next_cursor`` (``?cursor=``) until it is null."""
    while True:
        page = api.get(path, params=params).raise_for_status().json()
        yield page
        if page["next_cursor"] is None:
            return
        params["cursor"] = page["next_cursor"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--url", default="http://127.0.0.1:8000")
    args = parser.parse_args()
    headers = {"X-Request-Id": "client-example"}
    if os.environ.get("OHMTALLY_API_KEY"):
        headers["Authorization"] = f"Bearer {os.environ['OHMTALLY_API_KEY']}"
    with httpx.Client(base_url=args.url, timeout=30, headers=headers) as api:
        show("health", api.get("/v1/health"))
        show("ready", api.get("/v1/ready"))
        show("rulesets", api.get("/v1/rulesets"))
        show("one ruleset, limits with sources", api.get("/v1/rulesets/bs7671-2018-a2"))
        show("adapters and profiles", api.get("/v1/adapters"))

        site = {"installation": {"earthing": "TN-C-S (PME)", "ze_ohm": 0.31},
                "circuits": [{"board": "DB1", "circuit": "1", "device": "B20", "cable": "2.5/1.5",
                              "zs_ohm": "0.62 Ω", "r1_r2_ohm": 0.31, "polarity_ok": True}]}
        show("verify a site document", api.post("/v1/verify", json=site))
        show("verify CSV", api.post("/v1/verify", content=(DEMO / "db1-meter-export.csv").read_bytes(),
                                    headers={"Content-Type": "text/csv"}, params=METER))
        show("a bad field (problem+json)", api.post("/v1/verify", json={"circuits": [{"board": "DB1",
                                                                                      "circuit": "1",
                                                                                      "zs_ohm": True}]}))

        job = show("create a job", api.post("/v1/jobs", json={"reference": "EX-0042",
                                                              "site": "Invented example site"}))
        show("list jobs (first page)", api.get("/v1/jobs", params={"limit": 10}))
        show("jobs by reference", api.get("/v1/jobs", params={"reference": "EX-0042"}))
        show("the job", api.get(f"/v1/jobs/{job['id']}"))

        # The demo's own files, as its three sources send them: a schedule (a site document with the
        # installation and boards), a meter's CSV export, a logger's lines with board facts.
        show("installation and boards: the schedule",
             api.post(f"/v1/jobs/{job['id']}/readings", content=(DEMO / "schedule.json").read_bytes(),
                      headers={"Content-Type": "application/json"}))
        posted = show("readings: CSV", api.post(f"/v1/jobs/{job['id']}/readings",
                                                content=(DEMO / "db1-meter-export.csv").read_bytes(),
                                                headers={"Content-Type": "text/csv"}, params=METER))
        # A logger sends one key per batch and the same key again when it did not hear the answer:
        # the second post is answered with the first answer (Ohmtally-Replay) and merges nothing.
        batch = {"Content-Type": "text/plain", "Idempotency-Key": f"client-example-{uuid.uuid4()}"}
        lines = (DEMO / "db2-db3-logger.log").read_bytes()
        show("readings: lines", api.post(f"/v1/jobs/{job['id']}/readings", content=lines, headers=batch,
                                         params={"adapter": "lines"}))
        again = api.post(f"/v1/jobs/{job['id']}/readings", content=lines, headers=batch,
                         params={"adapter": "lines"})
        print(f"--- the same batch again: HTTP {again.status_code}, "
              f"Ohmtally-Replay: {again.headers.get('Ohmtally-Replay')}")
        show("the installation", api.get(f"/v1/jobs/{job['id']}/installation"))
        show("boards", api.get(f"/v1/jobs/{job['id']}/boards"))
        show("circuits of DB3 with history", api.get(f"/v1/jobs/{job['id']}/circuits",
                                                     params={"history": "true", "board": "DB3"}))
        outcomes: dict[str, int] = {}
        for number, page in enumerate(pages(api, f"/v1/jobs/{job['id']}/verdicts", limit=5), 1):
            for verdict in page["verdicts"]:
                outcomes[verdict["outcome"]] = outcomes.get(verdict["outcome"], 0) + 1
            print(f"--- verdicts page {number}: HTTP 200, {len(page['verdicts'])} circuit(s), "
                  f"next_cursor {'null' if page['next_cursor'] is None else 'set'}")
        print(f"--- verdicts: every page read: {outcomes}")
        print("    " + page["notice"])
        show("uploads", api.get(f"/v1/jobs/{job['id']}/uploads"))
        show("one upload, as received", api.get(f"/v1/jobs/{job['id']}/uploads/{posted['upload']['id']}"))
        spec = api.get("/v1/openapi.json").json()
        print(f"--- OpenAPI {spec['openapi']}: {len(spec['paths'])} paths")


if __name__ == "__main__":
    main()
