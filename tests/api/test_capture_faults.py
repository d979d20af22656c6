"""``ohmtally capture`` end to end under scripted faults: a pty meter, a real ``ohmtally serve``.

Each test ends by reading the job back (``GET /v1/jobs/<id>/uploads``, each
upload's raw body, and ``/circuits``) and checking it holds exactly the lines
the meter sent, none twice. The meter lines are our own invented readings:
they are transport payload here, not evidence about any rule.
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
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any, ClassVar

import httpx
import pytest

from api.capture.spool import Spool

from .test_capture_harness import FakeApi, FaultProxy, PtyMeter, free_port, wait_until

ROOT = Path(__file__).resolve().parents[2]
pytestmark = pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs pseudo-terminals (POSIX)")


class RealApi:
    """``ohmtally serve`` on a free loopback port, with keys off and its own SQLite file."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.port = free_port()
        self.env = {**os.environ, "OHMTALLY_AUTH": "off",
                    "OHMTALLY_DATABASE_URL": f"sqlite:///{folder / 'api.sqlite3'}"}
        self.env.pop("OHMTALLY_API_KEY", None)
        subprocess.run([sys.executable, "-m", "api.cli", "db", "upgrade"], cwd=ROOT, env=self.env,
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
                self.proc = subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind",
                                              f"127.0.0.1:{self.port}", "--workers", "1"], cwd=ROOT,
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
        """Every line of every merged upload of the job, in upload order."""
        uploads = httpx.get(f"{self.url}/v1/jobs/{job}/uploads").json()["uploads"]
        out: list[str] = []
        for upload in uploads:
            if upload["status"] == "merged":
                out += httpx.get(self.url + upload["href"]).text.splitlines()
        return out

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
            [sys.executable, "-m", "api.cli", "capture", "--port", port, "--job", job, "--api", api,
             "--spool", str(spool), "--json-log", "--linger", "0.1", "--drain", "5", *extra],
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
def _no_capture_left_running() -> Iterator[None]:
    """A failed test must not leave a capture reading ptys that later tests reuse."""
    yield
    while Capture.started:
        cap = Capture.started.pop()
        if cap.proc.poll() is None:
            cap.kill()


def _counts(spool: Path) -> Any:
    s = Spool(spool, read_only=True)
    try:
        return s.counts()
    finally:
        s.close()


def _line(n: int) -> str:
    return f"board=DB2 circuit={n} zs_ohm=0.{40 + n} r1_r2_ohm=0.{20 + n}"


# BS 7671:2018 Table 41.3 (REFERENCE-VALUES.md): B32 breaker, 0.4 s, maximum Zs 1.37 Ω; 2.5 Ω fails.
FAILING = ('board=DB2 circuit=9 earthing=TN-C-S device_kind=breaker device_standard="BS EN 60898" '
           "device_curve=B device_rating_a=32 zs_ohm=2.5")


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


def _replug(pty: PtyMeter, link: str) -> None:
    pty.replug()
    tmp = link + ".new"
    os.symlink(pty.port, tmp)
    os.replace(tmp, link)


def test_unplug_mid_line_then_replug_loses_and_duplicates_nothing(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """Pulling the cable mid-line discards (and counts) the partial line, reconnects on its own, and
    the job gets every complete line once; a failing circuit's verdict shows as soon as it is sent."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    cap = Capture(port=link, job=job, api=real_api.url, spool=spool)
    cap.wait_open()
    sent = [_line(1), FAILING]
    pty.send("".join(f"{t}\r\n" for t in sent))
    assert wait_until(lambda: cap.count("verdict", "DB2/9 FAIL") == 1, 10), cap.events
    pty.send("board=DB2 circuit=3 zs_o")  # the cable goes mid-line
    time.sleep(1.0)  # let capture read the half line (it reads every 0.2 s at most) before the cut
    pty.unplug()
    assert wait_until(lambda: cap.count("partial") == 1, 10), cap.events
    time.sleep(0.5)
    _replug(pty, link)
    cap.wait_open(2)
    sent += [_line(3), _line(4)]
    pty.send(f"{_line(3)}\n{_line(4)}\n")
    assert wait_until(lambda: _counts(spool).sent == 4, 10), cap.events
    assert cap.stop() == 1  # a circuit failed (as `ohmtally verify`)
    assert real_api.job_lines(job) == sent
    assert real_api.job_circuits(job) == {("DB2", "1"), ("DB2", "9"), ("DB2", "3"), ("DB2", "4")}
    assert _counts(spool).discarded_partials == 1


def test_server_down_for_a_while_then_spool_drains(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """With the API stopped, lines keep spooling and are retried; when it returns they drain, in
    order, each once."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    cap = Capture(port=link, job=job, api=real_api.url, spool=spool)
    cap.wait_open()
    real_api.stop()
    try:
        sent = [_line(n) for n in range(1, 7)]
        for text in sent:
            pty.send(text + "\n")
            time.sleep(0.05)
        assert wait_until(lambda: _counts(spool).unsent == 6, 10), "\n".join(map(str, cap.events))
        assert wait_until(lambda: cap.count("retrying") >= 2, 10), cap.events
    finally:
        real_api.start(same_port=True)
    assert wait_until(lambda: _counts(spool).sent == 6, 40), cap.events
    assert cap.stop() == 0
    assert real_api.job_lines(job) == sent


def test_sigkill_and_restart_resends_unsent_with_the_same_key(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """A capture killed with lines unsent resumes from its spool on restart: the batch it had
    assigned goes again under the same Idempotency-Key, and the job gets each line once."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    proxy = FaultProxy(real_api.url, refuse_with=503).start()
    try:
        cap = Capture(port=link, job=job, api=proxy.url, spool=spool)
        cap.wait_open()
        sent = [_line(n) for n in range(1, 5)]
        pty.send("".join(f"{t}\n" for t in sent))
        assert wait_until(lambda: _counts(spool).unsent == 4 and len(proxy.answered) >= 1, 10)
        key_before = proxy.answered[0][0]
        cap.kill()
        proxy.refuse_with = None
        cap = Capture(port=link, job=job, api=proxy.url, spool=spool)
        cap.wait_open()
        sent.append(_line(5))
        pty.send(_line(5) + "\n")
        assert wait_until(lambda: _counts(spool).sent == 5, 15), cap.events
        assert cap.stop() == 0
    finally:
        proxy.stop()
    ok_keys = [key for key, status in proxy.answered if status == 200]
    assert key_before is not None and ok_keys[0] == key_before
    assert real_api.job_lines(job) == sent


def test_500_429_400_and_bad_lines_are_retried_kept_and_replayed(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """500 and 429 are retried (Retry-After honoured); a 400 keeps its batch in the spool marked
    rejected and reported; a bad line inside a 200 is recorded against its row; --show lists
    them and --replay delivers the 400-rejected lines, so the job ends with every line once."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    proxy = FaultProxy(real_api.url, faults=[{"status": 500}, {"status": 429, "retry_after": "1"}, {},
                                             {"status": 400, "code": "injected_bad_request"}]).start()
    try:
        cap = Capture(port=link, job=job, api=proxy.url, spool=spool)
        cap.wait_open()
        pty.send(_line(1) + "\n")  # 500, then 429, then taken
        assert wait_until(lambda: _counts(spool).sent == 1, 15), "\n".join(map(str, cap.events))
        pty.send(_line(2) + "\n")  # 400: rejected as a batch, kept
        assert wait_until(lambda: cap.count("batch_rejected") == 1, 10), cap.events
        pty.send(_line(3) + "\nnot a reading at all\n")
        assert wait_until(lambda: _counts(spool).line_rejected == 1, 10), cap.events
        assert cap.stop() == 2  # lines were rejected
    finally:
        proxy.stop()
    assert [status for _, status in proxy.answered] == [500, 429, 200, 400, 200]
    retry = [e for e in cap.events if e["event"] == "retrying"]
    assert retry[1]["wait_s"] == 1.0  # the 429's Retry-After: 1
    shown = json.loads(subprocess.run(
        [sys.executable, "-m", "api.cli", "capture", "--spool", str(spool), "--show", "--json-log"],
        cwd=ROOT, capture_output=True, text=True, timeout=30, check=True).stdout)
    assert [(x["state"], x["text"], x["code"]) for x in shown["lines"]] == [
        ("rejected", _line(2), "injected_bad_request"),
        ("line_rejected", "not a reading at all", "bad_syntax")]
    replay = subprocess.run([sys.executable, "-m", "api.cli", "capture", "--spool", str(spool), "--replay",
                             "--api", real_api.url, "--quiet"], cwd=ROOT, capture_output=True, text=True,
                            timeout=30)
    # The bad line is refused again (reported, kept); the 400-rejected reading now arrives.
    assert replay.returncode == 2 and "line rejected: bad_syntax" in replay.stderr
    assert _counts(spool).line_rejected == 1 and _counts(spool).rejected == 0
    lines = real_api.job_lines(job)
    assert Counter(t for t in lines if t.startswith("board=")) == Counter([_line(1), _line(3), _line(2)])
    assert real_api.job_circuits(job) == {("DB2", "1"), ("DB2", "2"), ("DB2", "3")}


@pytest.mark.parametrize("upstream", ["fake", "real"])
def test_answer_lost_after_the_server_stored_it_is_not_duplicated(
        upstream: str, real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """When the server stored a batch but its answer was lost (here: replaced by a 500), the resend
    carries the same key and body, so the API (which honours Idempotency-Key) stores the lines once."""
    fake = FakeApi().start() if upstream == "fake" else None
    url = fake.url if fake else real_api.url
    job = real_api.new_job() if fake is None else "7"
    pty, link = meter
    proxy = FaultProxy(url, faults=[{"after": 500}]).start()
    try:
        cap = Capture(port=link, job=job, api=proxy.url, spool=tmp_path / "spool.sqlite")
        cap.wait_open()
        pty.send(_line(1) + "\n")
        assert wait_until(lambda: _counts(tmp_path / "spool.sqlite").sent == 1, 15), cap.events
        assert cap.stop() == 0
    finally:
        proxy.stop()
        if fake:
            fake.stop()
    assert [s for _, s in proxy.answered] == [500, 200] and len({k for k, _ in proxy.answered}) == 1
    stored = fake.lines[job] if fake else real_api.job_lines(job)
    assert stored == [_line(1)]


def test_ctrl_c_drains_and_a_second_ctrl_c_quits_keeping_the_spool(
        meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """With the API unreachable, the first Ctrl-C stops reading and keeps trying to send; the
    second quits at once (exit 2: lines unsent), and the lines stay in the spool for next time."""
    pty, link = meter
    spool = tmp_path / "spool.sqlite"
    cap = Capture(port=link, job="7", api=f"http://127.0.0.1:{free_port()}", spool=spool,
                  extra=("--drain", "30"))
    cap.wait_open()
    pty.send(f"{_line(1)}\n{_line(2)}\n")
    assert wait_until(lambda: _counts(spool).unsent == 2 and cap.count("retrying") >= 1, 10)
    cap.proc.send_signal(signal.SIGINT)
    assert wait_until(lambda: cap.count("draining") == 1, 10), cap.events
    assert wait_until(lambda: cap.count("port", "port closed") == 1, 5), cap.events
    assert cap.proc.poll() is None  # still draining: the 30 s bound has not passed
    started = time.monotonic()
    assert cap.stop() == 2
    assert time.monotonic() - started < 5
    assert [r.text for r in Spool(spool, read_only=True).rows(states=["unsent"])] == [_line(1), _line(2)]
