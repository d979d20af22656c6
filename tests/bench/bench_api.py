"""API under concurrent load: ``POST /v1/verify`` and a logger's ``POST /v1/jobs/<id>/readings``.

Run: ``python -m tests.bench.bench_api [--clients 16] [--seconds 8] [--requests 40]
[--generator auto|wrk|python] [--no-postgres]``.

What it does, in one run:
- ``ohmtally serve --workers 2`` on a free loopback port, ``OHMTALLY_AUTH=off``
  (allowed on loopback only), rate limit off, on a fresh SQLite file and then
  on PostgreSQL (``OHMTALLY_BENCH_POSTGRES_URL``, default
  ``postgresql+psycopg://postgres@127.0.0.1:5432/test``) in a schema of its
  own, dropped at the end. Skipped with a note when PostgreSQL is not there.
- The load comes from a separate process, a closed loop of ``--clients``
  clients: wrk (``tests.bench.wrk_load``, Debian's package; ``make bench``
  installs it where apt-get can) for ``--seconds`` per run, else the Python
  generator ``tests.bench.loadgen``, ``--requests`` per client. wrk leaves the
  server nearly all of the two cores; the Python generator takes about half a
  millisecond of CPU per request from them. The table names the generator.
- verify: one 48-circuit board (every check's fields) as JSON. readings: 1 to
  10 ``key=value`` lines per post, each client to its own job. At the end
  every job's readings are counted through ``GET /v1/jobs/<id>/circuits?history=true``
  and compared with the readings the clients were told were accepted (zero
  lost is the target) and with what the server's upload records say it
  accepted (``GET /v1/jobs/<id>/uploads``): those two must be equal, and may
  exceed the clients' count only by the readings still in flight when a
  time-bounded run stopped.
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

from . import synthetic, wrk_load
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
          jobs: list[int] | None = None, *, seconds: float | None = None) -> dict[str, Any]:
    """One load run: wrk for ``seconds`` when given, else the Python generator, ``requests`` each."""
    if seconds is not None:
        path = {"verify": "/v1/verify", "bare": "/bare"}.get(mode, "")
        return wrk_load.run(url, mode, clients, seconds, path=path, body=body, jobs=jobs)
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
    report.update(generator="python", in_flight_fields=0)
    return report


def board_body() -> bytes:
    """One 48-circuit board (origin board: rings, RCDs, a feeder, three-phase) as a verify body."""
    circuits = []
    for row in synthetic.rows(48, circuits_per_board=48):
        record, _ = build_record(row)
        assert record is not None
        circuits.append(record_to_dict(record))
    return json.dumps({"circuits": circuits}).encode()


def _stored_readings(url: str, jobs: list[int]) -> tuple[int, int]:
    """(readings stored in the jobs' history, readings the jobs' uploads say were accepted)."""
    stored = accepted = 0
    with httpx.Client(base_url=url, timeout=60) as client:
        for job in jobs:
            body = client.get(f"/v1/jobs/{job}/circuits", params={"history": "true"}).json()
            for circuit in body["circuits"]:
                stored += sum(len(values) for values in circuit["history"].values())
            accepted += sum(u["accepted"] for u in client.get(f"/v1/jobs/{job}/uploads").json()["uploads"])
    return stored, accepted


def _line(name: str, report: dict[str, Any]) -> str:
    return (f"{name}: {report['ok']}/{report['requests']} ok {report['statuses']}, "
            f"{report['throughput_per_s']:,.0f}/s, p50 {report['p50_ms']:.1f} ms, "
            f"p99 {report['p99_ms']:.1f} ms")


def _verify_figures(url: str, clients: int, requests: int, folder: Path, seconds: float | None
                    ) -> list[Figure]:
    body = folder / "board.json"
    body.write_bytes(board_body())
    size = len(httpx.post(url + "/v1/verify", content=body.read_bytes(),
                          headers={"Content-Type": "application/json"}, timeout=60).content)
    api = _load(url, "verify", clients, requests, body, seconds=seconds)
    with _bare(size) as bare_url:
        bare = _load(bare_url, "bare", clients, requests, body, seconds=seconds)
    print(_line(f"api verify (48 circuits, {size:,} B answer)", api))
    print(_line("bare same-size answer", bare))
    return [
        Figure("api", f"verify p99 @{clients}", api["p99_ms"], "ms", bare["p99_ms"],
               api["p99_ms"] / bare["p99_ms"], f"<= {VERIFY_P99_MS:g} ms", api["p99_ms"] <= VERIFY_P99_MS),
        Figure("api", "verify p50", api["p50_ms"], "ms", bare["p50_ms"], api["p50_ms"] / bare["p50_ms"]),
        Figure("api", "verify throughput", api["throughput_per_s"], "/s", bare["throughput_per_s"],
               api["throughput_per_s"] / bare["throughput_per_s"], "", api["ok"] == api["requests"]),
    ]


def _readings_figures(url: str, label: str, clients: int, requests: int, seconds: float | None
                      ) -> list[Figure]:
    with httpx.Client(base_url=url, timeout=30) as client:
        jobs = [client.post("/v1/jobs", json={"reference": f"BENCH-{n}", "site": "bench site"}).json()["id"]
                for n in range(clients)]
        # a body no client sends (a client's first post would otherwise be taken as a re-post of it)
        sample, _ = readings_body(random.Random(-1), 9999, 0)
        size = len(client.post(f"/v1/jobs/{jobs[0]}/readings", content=sample,
                               headers={"Content-Type": "text/plain; charset=utf-8"}).content)
    api = _load(url, "readings", clients, requests, jobs=jobs, seconds=seconds)
    stored, server_accepted = (n - 2 * sample.count(b"\n") for n in _stored_readings(url, jobs))
    told = api["fields_sent"]  # readings in posts the clients got a 200 for
    lost = max(0, told - stored)
    # what the server merged equals what it stored, and exceeds what the clients were told only by
    # the readings of posts still in flight when a time-bounded run stopped
    consistent = stored == server_accepted and 0 <= server_accepted - told <= api["in_flight_fields"]
    with _bare(size) as bare_url:
        bare = _load(bare_url, "bare", clients, requests, None, seconds=seconds)
    print(_line(f"api readings on {label} (1–10 lines, ~{size:,} B answer)", api)
          + f"; readings accepted {told:,}, stored {stored:,} (uploads say {server_accepted:,}; "
            f"{api['in_flight_fields']} in flight at the end), lost {lost}")
    print(_line("bare same-size answer", bare))
    return [
        Figure("api", f"readings posts/s {label}", api["throughput_per_s"], "/s", bare["throughput_per_s"],
               api["throughput_per_s"] / bare["throughput_per_s"], f">= {READINGS_PER_S:g}/s",
               api["throughput_per_s"] >= READINGS_PER_S),
        Figure("api", f"readings p99 {label}", api["p99_ms"], "ms", bare["p99_ms"],
               api["p99_ms"] / bare["p99_ms"]),
        Figure("api", f"readings lost {label}", lost, "", None, None, "0",
               lost == 0 and consistent and api["ok"] == api["requests"]),
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


def run(clients: int = 16, requests: int = 40, postgres: bool = True, seconds: float = 8.0,
        generator: str = "auto") -> list[Figure]:
    use_wrk = generator == "wrk" or (generator == "auto" and wrk_load.available())
    if generator == "wrk" and not wrk_load.available():
        raise RuntimeError("wrk is not installed (Debian: apt-get install wrk; `make bench` does it)")
    timed = seconds if use_wrk else None
    source = f"wrk, {seconds:g} s per run" if use_wrk else "the Python generator"
    print(f"api: load from {source}, {clients} clients")
    figures: list[Figure] = [Figure("api", f"load generator: {'wrk' if use_wrk else 'python'}", clients,
                                    "clients", None, None)]
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as name:
        folder = Path(name)
        with _ohmtally(f"sqlite:///{folder / 'bench.sqlite3'}") as url:
            figures += _verify_figures(url, clients, requests, folder, timed)
            figures += _readings_figures(url, "SQLite", clients, requests, timed)
        if postgres:
            with _postgres_schema() as pg_url:
                if pg_url is not None:
                    with _ohmtally(pg_url) as url:
                        figures += _readings_figures(url, "PostgreSQL", clients, requests, timed)
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--clients", type=int, default=16)
    parser.add_argument("--requests", type=int, default=40, help="requests per client")
    parser.add_argument("--seconds", type=float, default=8.0, help="per run, with wrk")
    parser.add_argument("--generator", choices=("auto", "wrk", "python"), default="auto")
    parser.add_argument("--no-postgres", action="store_true")
    args = parser.parse_args(argv)
    print_table(run(args.clients, args.requests, not args.no_postgres, args.seconds, args.generator))
    return 0


if __name__ == "__main__":
    sys.exit(main())
