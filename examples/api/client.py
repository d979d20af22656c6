"""ohmtally's REST API from Python with httpx: every endpoint, in the order a job uses them.

Run against a server (``ohmtally demo`` prints its URL, or ``OHMTALLY_AUTH=off
ohmtally serve`` on loopback)::

    python examples/api/client.py --url http://127.0.0.1:8000
"""

from __future__ import annotations

import argparse
import json
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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--url", default="http://127.0.0.1:8000")
    args = parser.parse_args()
    with httpx.Client(base_url=args.url, timeout=30, headers={"X-Request-Id": "client-example"}) as api:
        show("health", api.get("/v1/health"))
        show("rulesets", api.get("/v1/rulesets"))
        show("one ruleset, limits with sources", api.get("/v1/rulesets/bs7671-2018-a2"))
        show("adapters and profiles", api.get("/v1/adapters"))

        circuits = [{"board": "DB1", "circuit": "1", "device_kind": "breaker", "device_curve": "B",
                     "device_rating_a": 32, "zs_ohm": "0.62 Ω", "polarity_ok": True}]
        show("verify JSON", api.post("/v1/verify", json={"circuits": circuits}))
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

        posted = show("readings: CSV", api.post(f"/v1/jobs/{job['id']}/readings",
                                                content=(DEMO / "db1-meter-export.csv").read_bytes(),
                                                headers={"Content-Type": "text/csv"}, params=METER))
        show("readings: lines", api.post(f"/v1/jobs/{job['id']}/readings",
                                         content=(DEMO / "db2-db3-logger.log").read_bytes(),
                                         headers={"Content-Type": "text/plain"}, params={"adapter": "lines"}))
        show("circuits with history", api.get(f"/v1/jobs/{job['id']}/circuits", params={"history": "true"}))
        show("verdicts", api.get(f"/v1/jobs/{job['id']}/verdicts"))
        show("uploads", api.get(f"/v1/jobs/{job['id']}/uploads"))
        show("one upload, as received", api.get(f"/v1/jobs/{job['id']}/uploads/{posted['upload']['id']}"))
        spec = api.get("/v1/openapi.json").json()
        print(f"--- OpenAPI {spec['openapi']}: {len(spec['paths'])} paths")


if __name__ == "__main__":
    main()
