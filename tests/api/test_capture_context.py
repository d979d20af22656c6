"""Capture at a tester's pace: every batch carries its board and circuit (issue: later batches lost
the context of ``board=`` / ``circuit=`` lines sent in earlier ones).

A real ``ohmtally serve`` and ``ohmtally capture`` with a short linger (0.05 s); the pty meter pauses
longer than that between lines, as a person saving one test at a time does, so nearly every line
goes in a POST of its own. What the job holds at the end is compared with the same lines read in
one piece by the lines adapter: the reference is the format's own rule (context is sticky from line
to line), applied to the whole file at once. The readings are the invented demo site's.
"""

from __future__ import annotations

import io
import os
import subprocess
import time
from pathlib import Path
from typing import Any

import pytest

from adapters import AdapterOptions, collect
from adapters.lines_adapter import LinesAdapter
from engine import FIELDS, record_to_dict

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
from .test_capture_harness import FaultProxy, PtyMeter, wait_until

pytestmark = pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs pseudo-terminals (POSIX)")
__all__ = ["meter", "no_capture_left_running", "real_api"]  # fixtures used by name

DEMO_LOG = ROOT / "examples" / "demo" / "db2-db3-logger.log"
PACE_S = 0.1  # between lines: twice the linger, so each pause closes a batch
FAST = ("--linger", "0.05")


def _expected(text: str) -> dict[tuple[str, str], dict[str, Any]]:
    """The records the lines adapter makes of the whole text read at once (the format's rule)."""
    got = collect(LinesAdapter().read(io.BytesIO(text.encode()), AdapterOptions()))
    assert got.errors == []
    return {r.key: record_to_dict(r) for r in got.records}


def _stored(api: RealApi, job: str) -> dict[tuple[str, str], dict[str, Any]]:
    """The job's circuits as the API holds them, with only the record's fields."""
    return {key: {k: v for k, v in circuit["record"].items() if k in FIELDS}
            for key, circuit in api.circuit_records(job).items()}


def _send_at_pace(pty: PtyMeter, lines: list[str]) -> None:
    for line in lines:
        pty.send(line + "\r\n")
        time.sleep(PACE_S)


def test_demo_logger_at_a_human_pace_puts_every_reading_on_its_circuit(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """The demo logger file, one line per 0.1 s with a 0.05 s linger: many POSTs, no line rejected,
    and the job holds exactly the records the file gives read in one piece (DB2/1-4, DB3/1-2)."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    text = DEMO_LOG.read_text(encoding="utf-8")
    lines = text.splitlines()
    cap = Capture(port=link, job=job, api=real_api.url, spool=spool, extra=FAST)
    cap.wait_open()
    _send_at_pace(pty, lines)
    assert wait_until(lambda: counts(spool).sent == len(lines), 15), cap.events
    assert cap.stop() in (0, 1)  # 1: a demo circuit fails on purpose (DB2/3 insulation)
    assert counts(spool).line_rejected == 0 and counts(spool).rejected == 0
    assert real_api.uploads(job) >= 10  # the pace really split the file into many batches
    assert real_api.job_lines(job) == lines
    expected = _expected(text)
    assert set(expected) == {("DB2", "1"), ("DB2", "2"), ("DB2", "3"), ("DB2", "4"),
                             ("DB3", "1"), ("DB3", "2")}
    assert _stored(real_api, job) == expected


def test_reconnect_and_restart_between_board_and_its_circuits(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """board=DB3, then the cable is pulled and replugged, then circuit=2, then capture is killed and
    started again: the readings after all that still land on DB3/2."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    cap = Capture(port=link, job=job, api=real_api.url, spool=spool, extra=FAST)
    cap.wait_open()
    pty.send("board=DB3\r\n")
    assert wait_until(lambda: counts(spool).sent == 1, 10), cap.events
    pty.unplug()
    time.sleep(0.3)
    replug(pty, link)
    cap.wait_open(2)
    pty.send("circuit=2\r\n")
    assert wait_until(lambda: counts(spool).sent == 2, 10), cap.events
    cap.kill()
    cap = Capture(port=link, job=job, api=real_api.url, spool=spool, extra=FAST)
    cap.wait_open()
    _send_at_pace(pty, ["R1+R2=0.17Ω", "RA=68Ω"])
    assert wait_until(lambda: counts(spool).sent == 4, 10), cap.events
    cap.stop()
    assert counts(spool).line_rejected == 0
    assert _stored(real_api, job) == {("DB3", "2"): {"board": "DB3", "circuit": "2", "r1_r2_ohm": 0.17,
                                                     "ra_ohm": 68.0}}


def test_replay_of_lines_far_apart_carries_each_ones_context(
        real_api: RealApi, meter: tuple[PtyMeter, str], tmp_path: Path) -> None:
    """A session whose API refused the batches holding 'circuit=2' and its reading (400) while
    taking those around them; --replay later sends just those two lines, and they land on DB2/2,
    not on no board (the board was sent in another batch, before)."""
    pty, link = meter
    job, spool = real_api.new_job(), tmp_path / "spool.sqlite"
    proxy = FaultProxy(real_api.url).start()
    try:
        cap = Capture(port=link, job=job, api=proxy.url, spool=spool, extra=FAST)
        cap.wait_open()
        _send_at_pace(pty, ["board=DB2", "circuit=1", "Zs=0.65Ω"])
        assert wait_until(lambda: counts(spool).sent == 3, 10), cap.events
        proxy.refuse_with = 400
        _send_at_pace(pty, ["circuit=2", "Zs=0.76Ω"])
        assert wait_until(lambda: counts(spool).rejected == 2, 10), cap.events
        proxy.refuse_with = None
        _send_at_pace(pty, ["circuit=3", "Zs=0.73Ω"])
        assert wait_until(lambda: counts(spool).sent == 5, 10), cap.events
        assert cap.stop() == 2  # lines were rejected
    finally:
        proxy.stop()
    assert set(_stored(real_api, job)) == {("DB2", "1"), ("DB2", "3")}
    replay = subprocess.run(ohmtally("capture", "--spool", str(spool), "--replay", "--api", real_api.url,
                                     "--quiet"), cwd=ROOT, capture_output=True, text=True, timeout=30)
    assert replay.returncode == 0, replay.stderr
    assert _stored(real_api, job)[("DB2", "2")] == {"board": "DB2", "circuit": "2", "zs_ohm": 0.76}
    assert counts(spool).sent == 7
