"""``ohmtally capture`` options, key handling, what the person sees (no port, no server)."""

from __future__ import annotations

import io
import json
from pathlib import Path

import httpx
import pytest

from api.capture.forwarder import BatchRejected, BatchSent, Halted
from api.capture.spool import Spool
from api.capture.status import JsonReporter, QuietReporter, Tally, verdict_line
from api.capture.transport import HttpTransport, api_base
from api.cli import EXIT_OK, EXIT_USAGE, main
from api.cli.capture import default_spool_path, read_api_key

from .test_capture_harness import FakeApi

# A verdict shaped as the API's verdict (engine/README.md); figures from BS 7671:2018 Table 41.3:
# B32, 0.4 s, maximum Zs 1.37 Ω.
FAIL_VERDICT = {"board": "DB1", "circuit": "3", "outcome": "fail", "checks": [
    {"check": "loop_impedance", "outcome": "fail", "value": 1.92, "limit": 1.37, "unit": "Ω"},
    {"check": "insulation", "outcome": "pass", "value": 200, "limit": 1, "unit": "MΩ"}]}


def test_verdict_line_names_the_deciding_check() -> None:
    """The status line names the circuit, its outcome and only the checks that decided it."""
    assert verdict_line(FAIL_VERDICT) == "DB1/3 FAIL: loop_impedance 1.92 vs limit 1.37 Ω"
    assert verdict_line({"board": "DB1", "circuit": "4", "outcome": "pass", "checks": []}) == "DB1/4 PASS"


def test_quiet_mode_still_prints_a_failing_circuit_at_once() -> None:
    """--quiet drops the status chatter but never a failing circuit or a rejected batch."""
    out = io.StringIO()
    reporter = QuietReporter(out)
    reporter.event("port", "port open")
    reporter.forward(BatchSent(key="k", lines=1, verdicts=(FAIL_VERDICT,)), Tally())
    reporter.forward(BatchRejected(key="k2", lines=2, status=400, code="bad", reason="why"), Tally())
    lines = out.getvalue().splitlines()
    assert lines[0] == "DB1/3 FAIL: loop_impedance 1.92 vs limit 1.37 Ω"
    assert "2 line(s) rejected by the API (HTTP 400 bad: why)" in lines[1] and len(lines) == 2


def test_json_log_is_one_object_per_line() -> None:
    """--json-log writes one parseable JSON object per event, with the event kind and its data."""
    out = io.StringIO()
    reporter = JsonReporter(out, every_s=0)
    reporter.forward(Halted(reason="HTTP 401 bad_key: no"), Tally())
    reporter.refresh(Tally(read=3))
    records = [json.loads(line) for line in out.getvalue().splitlines()]
    assert [r["event"] for r in records] == ["halted", "status"]
    assert records[1]["read"] == 3 and "_lock" not in records[1]


def test_api_key_from_file_or_environment(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The key comes from --key-file (first line, trimmed) before OHMTALLY_API_KEY; never argv."""
    monkeypatch.setenv("OHMTALLY_API_KEY", "from-env")
    key_file = tmp_path / "key"
    key_file.write_text("  from-file  \nsecond line\n", encoding="utf-8")
    assert read_api_key(key_file) == "from-file"
    assert read_api_key(None) == "from-env"
    monkeypatch.delenv("OHMTALLY_API_KEY")
    assert read_api_key(None) is None
    with pytest.raises(SystemExit) as refused:  # a key on argv is refused, not taken as --key-file
        main(["capture", "--key", "secret", "--job", "1"])
    assert refused.value.code == EXIT_USAGE


def test_transport_sends_key_idempotency_key_and_profile() -> None:
    """Each POST carries Authorization: Bearer, the batch's Idempotency-Key, text/plain, and
    ?adapter=lines&profile= when a line profile is chosen."""
    api = FakeApi().start()
    seen: list[httpx.Request] = []
    client = httpx.Client(event_hooks={"request": [seen.append]})
    try:
        transport = HttpTransport(api.url, "7", api_key="k-123", profile="my-logger", client=client)
        reply = transport.post_lines("board=A circuit=1 zs_ohm=0.2\n", idempotency_key="batch-1")
    finally:
        client.close()
        api.stop()
    assert reply.status == 200 and reply.body["accepted"] == 1
    request = seen[0]
    assert request.headers["authorization"] == "Bearer k-123"
    assert request.headers["idempotency-key"] == "batch-1"
    assert request.headers["content-type"].startswith("text/plain")
    assert request.url.path == "/v1/jobs/7/readings"
    assert dict(request.url.params) == {"adapter": "lines", "profile": "my-logger"}
    assert api_base("http://h:8000/") == api_base("http://h:8000/v1") == "http://h:8000/v1"


def test_default_spool_is_per_user_and_per_job(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    """The default spool lives in the user's data dir, one file per job, with a filesystem-safe name."""
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path))
    path = default_spool_path("site 12/b")
    assert path.name == "spool-site_12_b.sqlite"
    assert str(path).startswith(str(tmp_path))  # platformdirs follows XDG_DATA_HOME on Linux


def test_show_lists_rejected_lines(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """--show prints the spool's counts and every line still to deal with, with the server's reason."""
    spool = Spool(tmp_path / "s.sqlite", job="7", api="http://x")
    spool.append("board=A circuit=1 zs_ohm=0.2")
    spool.append("garbage")
    batch = spool.next_batch(50)
    assert batch is not None
    spool.settle_sent(batch, {2: ("bad_syntax", "expected key=value")})
    spool.close()
    assert main(["capture", "--spool", str(tmp_path / "s.sqlite"), "--show"]) == EXIT_OK
    out = capsys.readouterr().out
    assert "2 line(s): 1 sent, 0 unsent" in out and "garbage  [bad_syntax: expected key=value]" in out
    assert "--replay" in out


@pytest.mark.parametrize("argv", [
    ["capture", "--job", "7", "--api", "http://x"],  # no --port
    ["capture", "--port", "loop://"],  # no --job
    ["capture", "--spool", "/nonexistent/none.sqlite", "--show"],
])
def test_usage_errors_exit_3(argv: list[str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Missing options and a missing spool are usage errors (exit 3, as the CLI's table says)."""
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path))
    assert main(argv) == EXIT_USAGE


def test_spool_of_another_job_is_refused(tmp_path: Path) -> None:
    """Pointing capture at a spool made for another job is a usage error, not a silent mix-up."""
    Spool(tmp_path / "s.sqlite", job="7").close()
    argv = ["capture", "--spool", str(tmp_path / "s.sqlite"), "--job", "8", "--api", "http://x",
            "--port", "loop://", "--quiet"]
    assert main(argv) == EXIT_USAGE


def test_list_ports_runs(capsys: pytest.CaptureFixture[str]) -> None:
    """--list-ports asks pyserial's list_ports and prints JSON a script can read."""
    assert main(["capture", "--list-ports", "--json-log"]) == EXIT_OK
    assert isinstance(json.loads(capsys.readouterr().out), list)


def test_live_status_line_shows_counts_and_the_failing_circuit(capsys: pytest.CaptureFixture[str]) -> None:
    """The default status line carries port state, the counts and the last verdict; a failing
    circuit is also printed on its own line above it."""
    from api.capture.status import LiveReporter

    reporter = LiveReporter()
    tally = Tally(port="open", read=5, unsent=1, sent=4, last_verdict=verdict_line(FAIL_VERDICT))
    reporter.forward(BatchSent(key="k", lines=1, verdicts=(FAIL_VERDICT,)), tally)
    reporter.refresh(tally)
    reporter.close(tally)
    err = capsys.readouterr().err
    assert "DB1/3 FAIL: loop_impedance 1.92 vs limit 1.37 Ω" in err
    assert "port open  read 5  spooled 1  sent 4  rejected 0" in err
