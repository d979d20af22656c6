"""A bounded load generator, run as its own process so it never shares the server's interpreter.

Run: ``python -m tests.bench.loadgen --url URL --mode verify|readings|bare --clients N
--requests N --body-file F [--jobs 1,2,…] [--round R] [--path /bare/N]``. Prints one JSON object: requests,
errors, statuses, wall time, throughput and latency percentiles (ms).

Invariants:
- Bounded: each client thread sends exactly ``--requests`` requests, one at a
  time (a closed loop: a client waits for its answer before the next), so the
  load is ``--clients`` concurrent requests at most.
- ``readings`` mode: client ``i`` posts to job ``jobs[i % len(jobs)]``; each
  post carries 1 to 10 ``key=value`` lines (a logger's post), each line two
  readings of one circuit, with values unique to the post (so no post is a
  duplicate of another, in this round or any other: ``--round`` shifts them).
  ``fields_sent`` counts the readings in posts that
  got a 200, for the caller to compare with what the job holds.
"""

from __future__ import annotations

import argparse
import json
import random
import sys
import threading
import time
from pathlib import Path
from typing import Any

import httpx

__all__ = ["main", "percentile", "readings_body"]


def percentile(sorted_ms: list[float], q: float) -> float:
    if not sorted_ms:
        return float("nan")
    index = min(len(sorted_ms) - 1, max(0, round(q / 100 * (len(sorted_ms) - 1))))
    return sorted_ms[index]


def readings_body(rng: random.Random, client: int, n: int, circuits: int = 48) -> tuple[bytes, int]:
    """1–10 lines of one board, unique to (client, n); returns the body and its reading count."""
    lines = []
    for _ in range(rng.randint(1, 10)):
        circuit = rng.randint(1, circuits)
        zs = 0.3 + (client * 7919 + n) % 997 / 1000
        lines.append(f"board=DB{client % 4 + 1} circuit={circuit} zs={zs:.3f}Ω r1r2={zs / 3:.4f}")
    return ("\n".join(lines) + "\n").encode(), 2 * len(lines)


def _client(args: argparse.Namespace, index: int, body: bytes, jobs: list[int],
            out: list[tuple[float, int, int]]) -> None:
    rng = random.Random(index + 1_000 * args.round)
    with httpx.Client(base_url=args.url, timeout=60) as client:
        for n in range(args.requests):
            if args.mode == "readings":
                payload, fields = readings_body(rng, index, n + 100_000 * args.round)
                path = f"/v1/jobs/{jobs[index % len(jobs)]}/readings"
                headers = {"Content-Type": "text/plain; charset=utf-8"}
            else:
                payload, fields = body, 0
                path = args.path or "/v1/verify"
                headers = {"Content-Type": "application/json"}
            began = time.perf_counter()
            try:
                status = client.post(path, content=payload, headers=headers).status_code
            except httpx.HTTPError:
                status = 0
            out.append(((time.perf_counter() - began) * 1000, status, fields if status == 200 else 0))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--url", required=True)
    parser.add_argument("--mode", choices=("verify", "readings", "bare"), required=True)
    parser.add_argument("--clients", type=int, default=16)
    parser.add_argument("--requests", type=int, default=50, help="requests per client")
    parser.add_argument("--body-file", type=Path)
    parser.add_argument("--path", default="", help="the URL path for verify and bare (default /v1/verify)")
    parser.add_argument("--round", type=int, default=0, help="interleaved round: keeps bodies unique")
    parser.add_argument("--jobs", default="")
    args = parser.parse_args(argv)
    body = args.body_file.read_bytes() if args.body_file else b""
    jobs = [int(j) for j in args.jobs.split(",") if j]
    results: list[list[tuple[float, int, int]]] = [[] for _ in range(args.clients)]
    threads = [threading.Thread(target=_client, args=(args, i, body, jobs, results[i]))
               for i in range(args.clients)]
    began = time.perf_counter()
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    wall = time.perf_counter() - began
    flat = [r for part in results for r in part]
    ok_ms = sorted(ms for ms, status, _ in flat if status == 200)
    statuses: dict[str, int] = {}
    for _, status, _ in flat:
        statuses[str(status)] = statuses.get(str(status), 0) + 1
    report: dict[str, Any] = {
        "mode": args.mode, "clients": args.clients, "requests": len(flat),
        "ok": len(ok_ms), "statuses": statuses, "wall_s": wall,
        "throughput_per_s": len(ok_ms) / wall if wall else 0.0,
        "p50_ms": percentile(ok_ms, 50), "p99_ms": percentile(ok_ms, 99),
        "fields_sent": sum(f for _, _, f in flat),
    }
    json.dump(report, sys.stdout)
    print()
    return 0 if len(ok_ms) == len(flat) else 1


if __name__ == "__main__":
    sys.exit(main())
