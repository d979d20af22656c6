"""A live capture bench: a real ``ohmtally serve``, ``ohmtally capture`` processes, a pty meter.

Shared by the capture fault and context tests. The commands are started through
``python -m api.cli`` (the ``ohmtally`` console script's module), never by
importing the CLI's sub-command modules, which may move.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any, ClassVar

import httpx
import pytest

from api.capture.spool import Spool

from .test_capture_harness import PtyMeter, free_port, wait_until

__all__ = ["ROOT", "Capture", "RealApi", "counts", "meter", "no_capture_left_running", "ohmtally",
           "real_api", "replug"]

ROOT = Path(__file__).resolve().parents[2]


def ohmtally(*args: str) -> list[str]:
    """The argv that runs ``ohmtally ARGS…`` with this interpreter."""
    return [sys.executable, "-m", "api.cli", *args]


class RealApi:
    """``ohmtally serve`` on a free loopback port, with keys off and its own SQLite file."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.port = free_port()
        self.env = {**os.environ, "OHMTALLY_AUTH": "off",
                    "OHMTALLY_DATABASE_URL": f"sqlite:///{folder / 'api.sqlite3'}"}
        self.env.pop("OHMTALLY_API_KEY", None)
        subprocess.run(ohmtally("db", "upgrade"), cwd=ROOT, env=self.env,
                       check=True, capture_output=True, timeout=60)
        self.proc: subprocess.Popen[bytes] | None = None

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}"

    def start(self, *, same_port: bool = False) -> None:
        """Start serving; if the free port was taken meanwhile (other suites run too), pick another,
        unless a restart must come back on the same port."""
        for _attempt in range(5):
            log = self.folder / "serve.log"
            with log.open("ab") as sink:
                self.proc = subprocess.Popen(ohmtally("serve", "--bind", f"127.0.0.1:{self.port}",
                                                       "--workers", "1"), cwd=ROOT,
                                             env=self.env, stdout=sink, stderr=sink)
            if wait_until(lambda: self._healthy() or self.proc is None or self.proc.poll() is not None, 30) \
                    and self._healthy():
                return
            self.stop()
            if not same_port:
                self.port = free_port()
            time.sleep(0.5)
        raise AssertionError(f"ohmtally serve did not come up: {log.read_text(errors='replace')[-2000:]}")

    def stop(self) -> None:
        if self.proc is not None:
            if self.proc.poll() is None:
                self.proc.terminate()
            self.proc.wait(timeout=20)
            self.proc = None

    def _healthy(self) -> bool:
        try:
            return httpx.get(self.url + "/v1/health", timeout=1).status_code == 200
        except httpx.HTTPError:
            return False

    def new_job(self) -> str:
        resp = httpx.post(self.url + "/v1/jobs", json={"reference": "capture-test", "site": "Test bench"})
        assert resp.status_code == 201, resp.text
        return str(resp.json()["id"])

    def job_lines(self, job: str) -> list[str]:
        """Every line the meter sent in every merged upload of the job, in upload order (the ``#%``
        context directives capture puts in front of a batch are not the meter's lines)."""
        return [line for line in self.job_bodies(job) if not line.startswith("#%")]

    def job_bodies(self, job: str) -> list[str]:
        """Every line of every merged upload of the job, directives included, in upload order."""
        uploads = httpx.get(f"{self.url}/v1/jobs/{job}/uploads").json()["uploads"]
        out: list[str] = []
        for upload in uploads:
            if upload["status"] == "merged":
                out += httpx.get(self.url + upload["href"]).text.splitlines()
        return out

    def uploads(self, job: str) -> int:
        return len(httpx.get(f"{self.url}/v1/jobs/{job}/uploads").json()["uploads"])

    def circuit_records(self, job: str) -> dict[tuple[str, str], dict[str, Any]]:
        got = httpx.get(f"{self.url}/v1/jobs/{job}/circuits").json()["circuits"]
        return {(c["board"], c["circuit"]): c for c in got}

    def job_circuits(self, job: str) -> set[tuple[str, str]]:
        got = httpx.get(f"{self.url}/v1/jobs/{job}/circuits").json()["circuits"]
        return {(c["board"], c["circuit"]) for c in got}


@pytest.fixture(scope="module")
def real_api() -> Iterator[RealApi]:
    with tempfile.TemporaryDirectory() as folder:
        api = RealApi(Path(folder))
        api.start()
        try:
            yield api
        finally:
            api.stop()


class Capture:
    """An ``ohmtally capture --json-log`` process; its events collected as they come."""

    started: ClassVar[list[Capture]] = []

    def __init__(self, *, port: str, job: str, api: str, spool: Path, extra: tuple[str, ...] = ()) -> None:
        env = {k: v for k, v in os.environ.items() if k != "OHMTALLY_API_KEY"}
        self.proc = subprocess.Popen(
            ohmtally("capture", "--port", port, "--job", job, "--api", api, "--spool", str(spool),
                     "--json-log", "--linger", "0.1", "--drain", "5", *extra),
            cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        self.events: list[dict[str, Any]] = []
        self._thread = threading.Thread(target=self._collect, daemon=True)
        self._thread.start()
        Capture.started.append(self)

    def _collect(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self.events.append(json.loads(line))

    def count(self, kind: str, contains: str = "") -> int:
        return sum(1 for e in list(self.events) if e["event"] == kind and contains in e["message"])

    def wait_open(self, times: int = 1) -> None:
        assert wait_until(lambda: self.count("port", "port open") >= times, 20), self.events

    def stop(self) -> int:
        """Ctrl-C: drain, then exit."""
        self.proc.send_signal(signal.SIGINT)
        code = self.proc.wait(timeout=20)
        self._close()
        return code

    def kill(self) -> None:
        self.proc.send_signal(signal.SIGKILL)
        self.proc.wait(timeout=10)
        self._close()

    def _close(self) -> None:
        self._thread.join(timeout=5)
        assert self.proc.stdout is not None and self.proc.stderr is not None
        self.stderr = self.proc.stderr.read()
        self.proc.stdout.close()
        self.proc.stderr.close()


@pytest.fixture(autouse=True)
def no_capture_left_running() -> Iterator[None]:
    """A failed test must not leave a capture reading ptys that later tests reuse."""
    yield
    while Capture.started:
        cap = Capture.started.pop()
        if cap.proc.poll() is None:
            cap.kill()


def counts(spool: Path) -> Any:
    s = Spool(spool, read_only=True)
    try:
        return s.counts()
    finally:
        s.close()


@pytest.fixture()
def meter(tmp_path: Path) -> Iterator[tuple[PtyMeter, str]]:
    """A pty meter behind a fixed path (a symlink), so a re-plugged meter keeps its name as a
    USB adapter keeps /dev/ttyUSB0."""
    pty = PtyMeter()
    link = tmp_path / "meter"
    link.symlink_to(pty.port)
    yield pty, str(link)
    link.unlink()
    pty.unplug()


def replug(pty: PtyMeter, link: str) -> None:
    pty.replug()
    tmp = link + ".new"
    os.symlink(pty.port, tmp)
    os.replace(tmp, link)
