"""The servers the HTTP benchmarks load: ``ohmtally serve`` on each database, and the bare endpoint.

Invariants:
- The served code is the checkout this package sits in (``PYTHONPATH`` is its
  root): copy ``tests/bench`` into an older worktree and the same benchmark
  serves the older code (how two versions are compared, README).
- ``ohmtally serve --workers 2`` on a free loopback port, ``OHMTALLY_AUTH=off``
  (allowed on loopback only), rate limit and webhook sender off, on a fresh
  SQLite file, or on PostgreSQL in a schema of its own created for the run and
  dropped at the end (``OHMTALLY_BENCH_POSTGRES_URL``, default
  ``postgresql+psycopg://postgres@127.0.0.1:5432/test``). A PostgreSQL that
  does not answer is a note, and its figures are skipped.
- A :class:`Stack` starts each server on first use and stops every one when it
  closes, so one ``python -m tests.bench`` run starts each once for all the
  benchmarks that need it.
"""

from __future__ import annotations

import contextlib
import os
import socket
import subprocess
import sys
import tempfile
import time
import uuid
from collections.abc import Iterator
from pathlib import Path
from types import TracebackType

import httpx
import psycopg

__all__ = ["BIN", "POSTGRES_URL", "ROOT", "Stack", "bench_env", "using"]

ROOT = Path(__file__).resolve().parents[2]
BIN = Path(sys.executable).parent
POSTGRES_URL = os.environ.get("OHMTALLY_BENCH_POSTGRES_URL",
                              "postgresql+psycopg://postgres@127.0.0.1:5432/test")
WORKERS = 2


def bench_env(**extra: str) -> dict[str, str]:
    """This environment less its OHMTALLY_ settings, plus the bench's; the checkout first on the path."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("OHMTALLY_")}
    env.update({"OHMTALLY_AUTH": "off", "OHMTALLY_RATE_LIMIT": "", "OHMTALLY_WEBHOOK_WORKER": "off",
                "OHMTALLY_LOG_LEVEL": "WARNING", "PYTHONPATH": str(ROOT)})
    env.update(extra)
    return env


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port: int = sock.getsockname()[1]
        return port


def _wait(url: str, probe: str, process: subprocess.Popen[bytes]) -> None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if process.poll() is not None:
            said = process.stderr.read() if process.stderr else b""
            raise RuntimeError(f"server exited with {process.returncode}: {said[-2000:]!r}")
        with contextlib.suppress(httpx.HTTPError):
            if httpx.get(url + probe, timeout=2).status_code < 500:
                return
        time.sleep(0.2)
    raise RuntimeError(f"server at {url} did not answer in 60 s")


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


@contextlib.contextmanager
def _ohmtally(database_url: str) -> Iterator[str]:
    env = bench_env(OHMTALLY_DATABASE_URL=database_url)
    subprocess.run([str(BIN / "ohmtally"), "db", "upgrade"], env=env, cwd=ROOT, check=True,
                   stdout=subprocess.DEVNULL)
    with _serving([str(BIN / "ohmtally"), "serve", "--bind", "127.0.0.1:{port}", "--workers", str(WORKERS)],
                  env, "/v1/health") as url:
        yield url


@contextlib.contextmanager
def _bare() -> Iterator[str]:
    with _serving([str(BIN / "gunicorn"), "--workers", str(WORKERS), "--bind", "127.0.0.1:{port}",
                   "--log-level", "warning", "tests.bench.bare_app:create_app()"], bench_env(),
                  "/bare/16") as url:
        yield url


@contextlib.contextmanager
def _postgres_schema() -> Iterator[str | None]:
    plain = POSTGRES_URL.replace("postgresql+psycopg://", "postgresql://")
    try:
        connection = psycopg.connect(plain, autocommit=True, connect_timeout=3)
    except psycopg.Error as exc:  # no server: the SQLite figures still stand
        print(f"bench: PostgreSQL not reachable ({type(exc).__name__}); its figures are skipped")
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


class Stack:
    """Servers for one bench run, each started on first use; ``close()`` stops them all."""

    def __init__(self, folder: Path, *, postgres: bool = True) -> None:
        self._folder = folder
        self._postgres = postgres
        self._exits = contextlib.ExitStack()
        self._urls: dict[str, str | None] = {}

    def databases(self) -> list[str]:
        """The databases to measure on: SQLite always, PostgreSQL when asked for and answering."""
        names = ["SQLite"]
        if self._postgres and self.ohmtally("PostgreSQL") is not None:
            names.append("PostgreSQL")
        return names

    def ohmtally(self, database: str) -> str | None:
        """The URL of ``ohmtally serve`` on ``database`` ("SQLite" or "PostgreSQL"); None if it cannot run."""
        if database not in self._urls:
            if database == "SQLite":
                db_url: str | None = f"sqlite:///{self._folder / 'bench.sqlite3'}"
            else:
                db_url = self._exits.enter_context(_postgres_schema())
            self._urls[database] = None if db_url is None else self._exits.enter_context(_ohmtally(db_url))
        return self._urls[database]

    def bare(self) -> str:
        """The URL of the bare app (``POST /bare/<bytes>``) under the same gunicorn settings."""
        if "bare" not in self._urls:
            self._urls["bare"] = self._exits.enter_context(_bare())
        url = self._urls["bare"]
        assert url is not None
        return url

    def close(self) -> None:
        self._exits.close()

    def __enter__(self) -> Stack:
        return self

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        self.close()


@contextlib.contextmanager
def using(stack: Stack | None, *, postgres: bool = True) -> Iterator[Stack]:
    """``stack`` when a run shares one, else a stack of this benchmark's own in a temporary folder."""
    if stack is not None:
        yield stack
        return
    with contextlib.ExitStack() as exits:
        folder = Path(exits.enter_context(tempfile.TemporaryDirectory(prefix="ohmtally-bench-")))
        yield exits.enter_context(Stack(folder, postgres=postgres))
