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
import time
from collections import Counter
from pathlib import Path

import pytest

from api.capture.spool import Spool

from .capture_live import (
    ROOT,
    Capture,
    RealApi,
    counts,
    meter,
    no_capture_left_running,
    ohmtally,
    real_api,
    replug,
)
from .test_capture_harness import FakeApi, FaultProxy, PtyMeter, free_port, wait_until

pytestmark = pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs pseudo-terminals (POSIX)")
__all__ = ["meter", "no_capture_left_running", "real_api"]  # fixtures used by name


def _line(n: int) -> str:
    return f"board=DB2 circuit={n} zs_ohm=0.{40 + n} r1_r2_ohm=0.{20 + n}"


# BS 7671:2018 Table 41.3: B32 breaker, 0.4 s, maximum Zs 1.37 Ω; 2.5 Ω fails.
FAILING = ('board=DB2 circuit=9 earthing=TN-C-S device_kind=breaker device_standard="BS EN 60898" '
           "device_curve=B device_rating_a=32 zs_ohm=2.5")


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
    replug(pty, link)
    cap.wait_open(2)
    sent += [_line(3), _line(4)]
    pty.send(f"{_line(3)}\n{_line(4)}\n")
    assert wait_until(lambda: counts(spool).sent == 4, 10), cap.events
    assert cap.stop() == 1  # a circuit failed (as `ohmtally verify`)
    assert real_api.job_lines(job) == sent
    assert real_api.job_circuits(job) == {("DB2", "1"), ("DB2", "9"), ("DB2", "3"), ("DB2", "4")}
    assert counts(spool).discarded_partials == 1


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
        assert wait_until(lambda: counts(spool).unsent == 6, 10), "\n".join(map(str, cap.events))
        assert wait_until(lambda: cap.count("retrying") >= 2, 10), cap.events
    finally:
        real_api.start(same_port=True)
    assert wait_until(lambda: counts(spool).sent == 6, 40), cap.events
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
        assert wait_until(lambda: counts(spool).unsent == 4 and len(proxy.answered) >= 1, 10)
        key_before = proxy.answered[0][0]
        cap.kill()
        proxy.refuse_with = None
        cap = Capture(port=link, job=job, api=proxy.url, spool=spool)
        cap.wait_open()
        sent.append(_line(5))
        pty.send(_line(5) + "\n")
        assert wait_until(lambda: counts(spool).sent == 5, 15), cap.events
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
        assert wait_until(lambda: counts(spool).sent == 1, 15), "\n".join(map(str, cap.events))
        pty.send(_line(2) + "\n")  # 400: rejected as a batch, kept
        assert wait_until(lambda: cap.count("batch_rejected") == 1, 10), cap.events
        pty.send(_line(3) + "\nnot a reading at all\n")
        assert wait_until(lambda: counts(spool).line_rejected == 1, 10), cap.events
        assert cap.stop() == 2  # lines were rejected
    finally:
        proxy.stop()
    assert [status for _, status in proxy.answered] == [500, 429, 200, 400, 200]
    retry = [e for e in cap.events if e["event"] == "retrying"]
    assert retry[1]["wait_s"] == 1.0  # the 429's Retry-After: 1
    shown = json.loads(subprocess.run(
        ohmtally("capture", "--spool", str(spool), "--show", "--json-log"),
        cwd=ROOT, capture_output=True, text=True, timeout=30, check=True).stdout)
    assert [(x["state"], x["text"], x["code"]) for x in shown["lines"]] == [
        ("rejected", _line(2), "injected_bad_request"),
        ("line_rejected", "not a reading at all", "bad_syntax")]
    replay = subprocess.run(ohmtally("capture", "--spool", str(spool), "--replay", "--api", real_api.url,
                                     "--quiet"), cwd=ROOT, capture_output=True, text=True,
                            timeout=30)
    # The bad line is refused again (reported, kept); the 400-rejected reading now arrives.
    assert replay.returncode == 2 and "line rejected: bad_syntax" in replay.stderr
    assert counts(spool).line_rejected == 1 and counts(spool).rejected == 0
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
        assert wait_until(lambda: counts(tmp_path / "spool.sqlite").sent == 1, 15), cap.events
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
    assert wait_until(lambda: counts(spool).unsent == 2 and cap.count("retrying") >= 1, 10)
    cap.proc.send_signal(signal.SIGINT)
    assert wait_until(lambda: cap.count("draining") == 1, 10), cap.events
    assert wait_until(lambda: cap.count("port", "port closed") == 1, 5), cap.events
    assert cap.proc.poll() is None  # still draining: the 30 s bound has not passed
    started = time.monotonic()
    assert cap.stop() == 2
    assert time.monotonic() - started < 5
    assert [r.text for r in Spool(spool, read_only=True).rows(states=["unsent"])] == [_line(1), _line(2)]
