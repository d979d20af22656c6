"""API under concurrent load: ``POST /v1/verify`` and a logger's ``POST /v1/jobs/<id>/readings``.

Run: ``python -m tests.bench.bench_api [--clients 16] [--requests 40] [--no-postgres]``.

What it does, in one run:
- ``ohmtally serve --workers 2`` on a free loopback port, ``OHMTALLY_AUTH=off``
  (allowed on loopback only), rate limit off, on a fresh SQLite file and then
  on PostgreSQL (``OHMTALLY_BENCH_POSTGRES_URL``, default
  ``postgresql+psycopg://postgres@127.0.0.1:5432/test``) in a schema of its
  own, dropped at the end. Skipped with a note when PostgreSQL is not there.
- The load comes from ``tests.bench.loadgen`` in a separate process: a closed
  loop of ``--clients`` threads, each sending ``--requests`` requests.
- verify: one 48-circuit board (every check's fields) as JSON. readings: 1 to
  10 ``key=value`` lines per post, each client to its own job. At the end
  every job's readings are counted through ``GET /v1/jobs/<id>/circuits?history=true``
  and compared with the readings the clients were told were accepted: zero
  lost is the target.
- Baseline: the bare app (``tests.bench.bare_app``) under the same gunicorn
  settings, answering a fixed JSON document of the same size as the real
  response, under the same load. Ratios are API / bare.

Targets: verify p99 ≤ 50 ms at 16 clients; readings ≥ 500 posts/s on SQLite
and on PostgreSQL with no reading lost.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import random
import socket
import subprocess
import sys
import tempfile
import time
import uuid
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx

from engine import build_record, record_to_dict

from . import synthetic
from .common import Figure, print_table
from .loadgen import readings_body

__all__ = ["main", "run"]

ROOT = Path(__file__).resolve().parents[2]
BIN = Path(sys.executable).parent
POSTGRES_URL = os.environ.get("OHMTALLY_BENCH_POSTGRES_URL",
                              "postgresql+psycopg://postgres@127.0.0.1:5432/test")
VERIFY_P99_MS = 50.0
READINGS_PER_S = 500.0


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port: int = sock.getsockname()[1]
        return port


def _env(**extra: str) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("OHMTALLY_")}
    env.update({"OHMTALLY_AUTH": "off", "OHMTALLY_RATE_LIMIT": "", "OHMTALLY_WEBHOOK_WORKER": "off",
                "OHMTALLY_LOG_LEVEL": "WARNING", "PYTHONPATH": str(ROOT)})
    env.update(extra)
    return env


def _wait(url: str, path: str, process: subprocess.Popen[bytes]) -> None:
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if process.poll() is not None:
            said = process.stderr.read() if process.stderr else b""
            raise RuntimeError(f"server exited with {process.returncode}: {said[-2000:]!r}")
        method = "GET" if path.startswith("/v1") else "POST"
        with contextlib.suppress(httpx.HTTPError):
            if httpx.request(method, url + path, timeout=2).status_code < 500:
                return
        time.sleep(0.2)
    raise RuntimeError(f"server at {url} did not answer in 30 s")


@contextlib.contextmanager
def _serving(argv: list[str], env: dict[str, str], probe: str) -> Iterator[str]:
    port = _free_port()
    argv = [a.replace("{port}", str(port)) for a in argv]
    process = subprocess.Popen(argv, env=env, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    url = f"http://127.0.0.1:{port}"
    try:
        _wait(url, probe, process)
        yield url
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()


def _ohmtally(database_url: str) -> contextlib.AbstractContextManager[str]:
    env = _env(OHMTALLY_DATABASE_URL=database_url)
    subprocess.run([str(BIN / "ohmtally"), "db", "upgrade"], env=env, cwd=ROOT, check=True,
                   stdout=subprocess.DEVNULL)
    return _serving([str(BIN / "ohmtally"), "serve", "--bind", "127.0.0.1:{port}", "--workers", "2"],
                    env, "/v1/health")


def _bare(size: int) -> contextlib.AbstractContextManager[str]:
    env = _env(OHMTALLY_BENCH_BARE_BYTES=str(size))
    return _serving([str(BIN / "gunicorn"), "--workers", "2", "--bind", "127.0.0.1:{port}",
                     "--log-level", "warning", "tests.bench.bare_app:create_app()"], env, "/bare")


def _load(url: str, mode: str, clients: int, requests: int, body: Path | None = None,
          jobs: list[int] | None = None) -> dict[str, Any]:
    argv = [sys.executable, "-m", "tests.bench.loadgen", "--url", url, "--mode", mode,
            "--clients", str(clients), "--requests", str(requests)]
    if body is not None:
        argv += ["--body-file", str(body)]
    if jobs:
        argv += ["--jobs", ",".join(map(str, jobs))]
    done = subprocess.run(argv, env=_env(), cwd=ROOT, capture_output=True, text=True, check=False)
    if not done.stdout.strip():
        raise RuntimeError(f"load generator failed: {done.stderr[-2000:]}")
    report: dict[str, Any] = json.loads(done.stdout)
    return report


def board_body() -> bytes:
    """One 48-circuit board (origin board: rings, RCDs, a feeder, three-phase) as a verify body."""
    circuits = []
    for row in synthetic.rows(48, circuits_per_board=48):
        record, _ = build_record(row)
        assert record is not None
        circuits.append(record_to_dict(record))
    return json.dumps({"circuits": circuits}).encode()


def _stored_readings(url: str, jobs: list[int]) -> int:
    total = 0
    with httpx.Client(base_url=url, timeout=60) as client:
        for job in jobs:
            body = client.get(f"/v1/jobs/{job}/circuits", params={"history": "true"}).json()
            for circuit in body["circuits"]:
                total += sum(len(values) for values in circuit["history"].values())
    return total


def _line(name: str, report: dict[str, Any]) -> str:
    return (f"{name}: {report['ok']}/{report['requests']} ok {report['statuses']}, "
            f"{report['throughput_per_s']:,.0f}/s, p50 {report['p50_ms']:.1f} ms, "
            f"p99 {report['p99_ms']:.1f} ms")


def _verify_figures(url: str, clients: int, requests: int, folder: Path) -> list[Figure]:
    body = folder / "board.json"
    body.write_bytes(board_body())
    size = len(httpx.post(url + "/v1/verify", content=body.read_bytes(),
                          headers={"Content-Type": "application/json"}, timeout=60).content)
    api = _load(url, "verify", clients, requests, body)
    with _bare(size) as bare_url:
        bare = _load(bare_url, "bare", clients, requests, body)
    print(_line(f"api verify (48 circuits, {size:,} B answer)", api))
    print(_line("bare same-size answer", bare))
    return [
        Figure("api", f"verify p99 @{clients}", api["p99_ms"], "ms", bare["p99_ms"],
               api["p99_ms"] / bare["p99_ms"], f"<= {VERIFY_P99_MS:g} ms", api["p99_ms"] <= VERIFY_P99_MS),
        Figure("api", "verify p50", api["p50_ms"], "ms", bare["p50_ms"], api["p50_ms"] / bare["p50_ms"]),
        Figure("api", "verify throughput", api["throughput_per_s"], "/s", bare["throughput_per_s"],
               api["throughput_per_s"] / bare["throughput_per_s"], "", api["ok"] == api["requests"]),
    ]


def _readings_figures(url: str, label: str, clients: int, requests: int) -> list[Figure]:
    with httpx.Client(base_url=url, timeout=30) as client:
        jobs = [client.post("/v1/jobs", json={"reference": f"BENCH-{n}", "site": "bench site"}).json()["id"]
                for n in range(clients)]
        # a body no client sends (a client's first post would otherwise be taken as a re-post of it)
        sample, _ = readings_body(random.Random(-1), 9999, 0)
        size = len(client.post(f"/v1/jobs/{jobs[0]}/readings", content=sample,
                               headers={"Content-Type": "text/plain; charset=utf-8"}).content)
    api = _load(url, "readings", clients, requests, jobs=jobs)
    stored = _stored_readings(url, jobs) - 2 * sample.count(b"\n")
    lost = api["fields_sent"] - stored
    with _bare(size) as bare_url:
        bare = _load(bare_url, "bare", clients, requests, None)
    print(_line(f"api readings on {label} (1–10 lines, ~{size:,} B answer)", api)
          + f"; readings accepted {api['fields_sent']:,}, stored {stored:,}, lost {lost}")
    print(_line("bare same-size answer", bare))
    return [
        Figure("api", f"readings posts/s {label}", api["throughput_per_s"], "/s", bare["throughput_per_s"],
               api["throughput_per_s"] / bare["throughput_per_s"], f">= {READINGS_PER_S:g}/s",
               api["throughput_per_s"] >= READINGS_PER_S),
        Figure("api", f"readings p99 {label}", api["p99_ms"], "ms", bare["p99_ms"],
               api["p99_ms"] / bare["p99_ms"]),
        Figure("api", f"readings lost {label}", lost, "", None, None, "0",
               lost == 0 and api["ok"] == api["requests"]),
    ]


@contextlib.contextmanager
def _postgres_schema() -> Iterator[str | None]:
    try:
        import psycopg

        plain = POSTGRES_URL.replace("postgresql+psycopg://", "postgresql://")
        connection = psycopg.connect(plain, autocommit=True, connect_timeout=3)
    except Exception as exc:  # no server: the SQLite figures still stand
        print(f"api: PostgreSQL not reachable ({type(exc).__name__}); its figures are skipped")
        yield None
        return
    schema = f"ohmtally_bench_{uuid.uuid4().hex[:8]}"
    connection.execute(f'CREATE SCHEMA "{schema}"')
    try:
        sep = "&" if "?" in POSTGRES_URL else "?"
        yield f"{POSTGRES_URL}{sep}options=-csearch_path%3D{schema}"
    finally:
        connection.execute(f'DROP SCHEMA "{schema}" CASCADE')
        connection.close()


def run(clients: int = 16, requests: int = 40, postgres: bool = True) -> list[Figure]:
    figures: list[Figure] = []
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as name:
        folder = Path(name)
        with _ohmtally(f"sqlite:///{folder / 'bench.sqlite3'}") as url:
            figures += _verify_figures(url, clients, requests, folder)
            figures += _readings_figures(url, "SQLite", clients, requests)
        if postgres:
            with _postgres_schema() as pg_url:
                if pg_url is not None:
                    with _ohmtally(pg_url) as url:
                        figures += _readings_figures(url, "PostgreSQL", clients, requests)
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--clients", type=int, default=16)
    parser.add_argument("--requests", type=int, default=40, help="requests per client")
    parser.add_argument("--no-postgres", action="store_true")
    args = parser.parse_args(argv)
    print_table(run(args.clients, args.requests, not args.no_postgres))
    return 0


if __name__ == "__main__":
    sys.exit(main())
