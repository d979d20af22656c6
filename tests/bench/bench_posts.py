"""A one-circuit readings post into a 10,000-circuit job against the same post into a 50-circuit job.

Run: ``python -m tests.bench.bench_posts [--big 10000] [--small 50] [--rounds 7] [--posts 2]
[--no-postgres]``.

Two jobs on the same served app (``tests.bench.servers``: ``ohmtally serve``,
SQLite and, when it answers, PostgreSQL in a fresh schema). Both hold the
synthetic installation (origin board, sub-board fed from it, TT board, …),
one ``--big`` circuits, one ``--small``, loaded through ``POST
/v1/jobs/<id>/readings`` as CSV in bodies of 2,000 rows (under the default
row and value limits). Then, interleaved, one client posts one ``key=value``
line for the same circuit of both jobs (``G0-DB2/3``: a sub-board's circuit,
so its feeder chain is in play), big job then small job, ``--posts`` posts
each per round, ``--rounds`` rounds. Every post carries a value of its own
(never a repeat of the job's latest upload). Two posts to each job before the
rounds warm both workers. The time is the client's, loopback HTTP included.

Target (issue 18): the big job's post within 2× of the small job's.
"""

from __future__ import annotations

import argparse
import itertools
import statistics
import sys
import time
from collections.abc import Callable

import httpx

from . import synthetic
from .common import Figure, compare, interleave, print_table, timed
from .servers import Stack, using

__all__ = ["CHUNK_ROWS", "TARGET_RATIO", "main", "run"]

TARGET_RATIO = 2.0
CHUNK_ROWS = 2_000
CIRCUIT = ("G0-DB2", "3")
CSV = {"Content-Type": "text/csv; charset=utf-8"}
TEXT = {"Content-Type": "text/plain; charset=utf-8"}


def _job(client: httpx.Client, circuits: int, label: str) -> int:
    """A job holding ``circuits`` synthetic circuits, loaded in CSV bodies of CHUNK_ROWS rows."""
    job: int = client.post("/v1/jobs", json={"reference": f"POSTS-{label}-{circuits}",
                                             "site": "bench site"}).json()["id"]
    lines = synthetic.csv_lines(circuits)
    head = next(lines)
    while chunk := list(itertools.islice(lines, CHUNK_ROWS)):
        answer = client.post(f"/v1/jobs/{job}/readings", content=(head + "".join(chunk)).encode(),
                             headers=CSV)
        if answer.status_code != 200 or answer.json()["accepted"] == 0:
            raise RuntimeError(f"loading job {job}: {answer.status_code} {answer.text[:500]}")
    return job


def _poster(client: httpx.Client, job: int, values: itertools.count[int]) -> Callable[[], float]:
    """Seconds for one 1-circuit post into ``job``; each post a value no earlier post carried."""
    def post() -> float:
        zs = 0.4 + next(values) / 100_000
        line = f"board={CIRCUIT[0]} circuit={CIRCUIT[1]} zs={zs:.5f}\n".encode()
        answer, seconds = timed(lambda: client.post(f"/v1/jobs/{job}/readings", content=line, headers=TEXT))
        if answer.status_code != 200 or answer.json()["accepted"] != 1:
            raise RuntimeError(f"post into job {job}: {answer.status_code} {answer.text[:500]}")
        return seconds
    return post


def _figure(url: str, database: str, big: int, small: int, rounds: int, posts: int) -> Figure:
    with httpx.Client(base_url=url, timeout=600) as client:
        began = time.perf_counter()
        big_job = _job(client, big, database)
        loaded = time.perf_counter() - began
        small_job = _job(client, small, database)
        values = itertools.count(1)
        post_big, post_small = _poster(client, big_job, values), _poster(client, small_job, values)
        for _ in range(2):  # both workers have seen both jobs
            post_big()
            post_small()
        runs = interleave({"big": lambda: statistics.median(post_big() for _ in range(posts)),
                           "small": lambda: statistics.median(post_small() for _ in range(posts))}, rounds)
    ms_big, ms_small = ([s * 1000 for s in runs[k]] for k in ("big", "small"))
    print(f"posts on {database}: {big:,}-circuit job loaded in {loaded:.1f} s; 1-circuit post "
          f"{statistics.median(ms_big):.1f} ms into it, {statistics.median(ms_small):.1f} ms into "
          f"{small:,} circuits")
    return compare("posts", f"1-circuit post into {big:,} vs {small:,} circuits, {database}", "ms",
                   ms_big, ms_small, target=f"<= {TARGET_RATIO:g}× the small job's",
                   met=lambda _v, ratio: ratio is not None and ratio <= TARGET_RATIO)


def run(big: int = 10_000, small: int = 50, rounds: int = 7, posts: int = 2, postgres: bool = True,
        stack: Stack | None = None) -> list[Figure]:
    with using(stack, postgres=postgres) as servers:
        figures = []
        for database in servers.databases():
            url = servers.ohmtally(database)
            assert url is not None
            figures.append(_figure(url, database, big, small, rounds, posts))
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--big", type=int, default=10_000)
    parser.add_argument("--small", type=int, default=50)
    parser.add_argument("--rounds", type=int, default=7)
    parser.add_argument("--posts", type=int, default=2, help="posts to each job per round (median taken)")
    parser.add_argument("--no-postgres", action="store_true")
    args = parser.parse_args(argv)
    print_table(run(args.big, args.small, args.rounds, args.posts, not args.no_postgres))
    return 0


if __name__ == "__main__":
    sys.exit(main())
