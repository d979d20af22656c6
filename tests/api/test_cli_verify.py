"""``ohmtally verify``: formats, the --fail-on/--warn-on policy, and exit statuses.

Exit statuses are the contract's (api/README.md, "The command line"): 0 all pass, 1 a circuit
fails, 2 bad input, 3 usage; "fails" is read under the policy (issue 8).
Circuits are invented; pass/fail/incomplete come from the polarity check
(BS 7671 Reg. 643.6: recorded false fails, missing is incomplete), which
holds however many other checks join the engine.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from junitparser import Failure, JUnitXml

import api.cli
import api.cli.verify
from api.answers import verify_body
from api.cli import EXIT_BAD_INPUT, EXIT_FAIL, EXIT_OK, EXIT_USAGE, main
from api.intake.objects import records_from_objects
from engine import CheckResult, Outcome, Verdict, load_ruleset, verify

ROOT = Path(__file__).resolve().parents[2]
PASS_AND_INCOMPLETE = [{"board": "DB1", "circuit": "1", "polarity_ok": True},
                       {"board": "DB1", "circuit": "2"}]
FAILING = [{"board": "DB1", "circuit": "1", "polarity_ok": True},
           {"board": "DB1", "circuit": "3", "polarity_ok": False}]


def write(tmp_path: Path, name: str, circuits: Any) -> str:
    path = tmp_path / name
    path.write_text(json.dumps({"circuits": circuits}), encoding="utf-8")
    return str(path)


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    status = main(["verify", *argv])
    return status, capsys.readouterr().out


@pytest.mark.parametrize(("fail_on", "expected"), [
    ("fail", EXIT_OK), ("investigate", EXIT_OK), ("incomplete", EXIT_FAIL)])
def test_incomplete_circuit_fails_only_under_fail_on_incomplete(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], fail_on: str, expected: int) -> None:
    """A circuit lacking polarity_ok (incomplete) exits 1 only with --fail-on incomplete."""
    status, _ = run([write(tmp_path, "a.json", PASS_AND_INCOMPLETE), "--format", "json",
                     "--fail-on", fail_on], capsys)
    assert status == expected


@pytest.mark.parametrize("fail_on", ["fail", "investigate", "incomplete"])
def test_failed_polarity_exits_1_under_every_policy(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], fail_on: str) -> None:
    """A recorded polarity false is a failure whatever the policy: a policy can never hide it."""
    status, _ = run([write(tmp_path, "f.json", FAILING), "--fail-on", fail_on, "--warn-on", "none"],
                    capsys)
    assert status == EXIT_FAIL


@pytest.mark.parametrize(("fail_on", "expected"), [
    ("fail", EXIT_OK), ("investigate", EXIT_FAIL), ("incomplete", EXIT_FAIL)])
def test_investigate_fails_under_fail_on_investigate_and_incomplete(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        fail_on: str, expected: int) -> None:
    """An investigate verdict (stood in for the engine: no check yields one yet) follows --fail-on."""
    check = CheckResult(check="loop_impedance", outcome=Outcome.INVESTIGATE, detail="marginal")
    stand_in = [Verdict(board="DB1", circuit="1", outcome=Outcome.INVESTIGATE, checks=(check,))]
    monkeypatch.setattr(api.cli.verify, "verify", lambda records, ruleset, **_site: stand_in)
    status, _ = run([write(tmp_path, "i.json", PASS_AND_INCOMPLETE[:1]), "--fail-on", fail_on],
                    capsys)
    assert status == expected


def test_json_output_equals_verify_body_of_the_same_records(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """--format json is exactly verify_body for the same records (the API's body); a JSON file with a
    value that cannot be taken is refused whole, as POST /v1/verify refuses it (422, same pointers)."""
    path = write(tmp_path, "j.json", FAILING)
    status, out = run([path, "--format", "json"], capsys)
    records, _ = records_from_objects(FAILING)
    ruleset = load_ruleset(None)
    assert json.loads(out) == verify_body(ruleset, verify(records, ruleset), [])
    assert status == EXIT_FAIL
    bad = write(tmp_path, "k.json", [*FAILING, {"board": "DB2", "circuit": "1", "zs_ohm": "3 kA"}])
    status, out = run([bad, "--format", "json"], capsys)
    body = json.loads(out)
    assert body["verdicts"] == [] and status == EXIT_BAD_INPUT
    assert [(r["file"], r["pointer"], r["code"]) for r in body["rejected"]] == [
        (bad, "/circuits/2/zs_ohm", "bad_value")]


def test_rejected_input_exits_2_and_a_failure_wins_over_it(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Rejected input alone exits 2; with a failing circuit beside it (another file, or another line of
    a lines file, which is read row by row) the exit is 1."""
    bad = {"board": "DB2", "circuit": "1", "polarity_ok": True, "zs_ohm": "3 kA"}
    refused = write(tmp_path, "r.json", [bad])
    alone, _ = run([refused, "--format", "csv"], capsys)
    beside, _ = run([refused, write(tmp_path, "rf.json", [FAILING[1]]), "--format", "csv"], capsys)
    lines = tmp_path / "l.log"
    lines.write_text("board=DB2 circuit=1 zs=3kA\nboard=DB1 circuit=3 polarity_ok=no\n", encoding="utf-8")
    in_lines, _ = run([str(lines), "--format", "csv"], capsys)
    assert (alone, beside, in_lines) == (EXIT_BAD_INPUT, EXIT_FAIL, EXIT_FAIL)


def test_warnings_are_said_and_can_fail_a_pipeline(tmp_path: Path,
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    """An unknown column is read as nothing and said on stderr; --fail-on-warning makes it exit 2."""
    sheet = tmp_path / "w.csv"
    sheet.write_text("board,circuit,polarity_ok,Zss\nDB1,1,yes,0.4\n", encoding="utf-8")
    status = main(["verify", str(sheet), "--format", "json"])
    captured = capsys.readouterr()
    assert status == EXIT_OK and "Zss" in captured.err
    assert json.loads(captured.out)["summary"]["warnings"] == 1
    assert main(["verify", str(sheet), "--format", "json", "--fail-on-warning"]) == EXIT_BAD_INPUT


@pytest.mark.parametrize("content", [None, "{not json", b"\xff\xfe\x00bad"])
def test_unreadable_file_exits_2_and_the_other_files_are_still_verified(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], content: str | bytes | None) -> None:
    """A missing, malformed or undecodable file is rejected input; the good file's circuits remain."""
    broken = tmp_path / "broken.json"
    if isinstance(content, bytes):
        broken.write_bytes(content)
    elif content is not None:
        broken.write_text(content, encoding="utf-8")
    good = write(tmp_path, "good.json", PASS_AND_INCOMPLETE[:1])
    status, out = run([str(broken), good, "--format", "json"], capsys)
    body = json.loads(out)
    assert status == EXIT_BAD_INPUT
    assert [r["code"] for r in body["rejected"]] == ["unreadable"]
    assert ("DB1", "1") in {(v["board"], v["circuit"]) for v in body["verdicts"]}


@pytest.mark.parametrize("argv", [["--fail-on", "pass"], ["--warn-on", "fail"], ["--format", "xml"],
                                  ["--ruleset", "no-such-ruleset"]])
def test_usage_errors_exit_3(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                             argv: list[str]) -> None:
    """A misspelt policy, format or ruleset is a usage error, exit 3."""
    path = write(tmp_path, "u.json", FAILING)
    try:
        status = main(["verify", path, *argv])
    except SystemExit as exc:  # argparse exits from inside parse_args
        status = int(exc.code or 0)
    assert status == EXIT_USAGE


def test_junit_from_the_cli_follows_warn_on(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """--fail-on incomplete turns the incomplete polarity into a <failure> in the JUnit report."""
    status, out = run([write(tmp_path, "ju.json", PASS_AND_INCOMPLETE), "--format", "junit",
                       "--fail-on", "incomplete"], capsys)
    cases = {(c.classname, c.name): c for s in JUnitXml.fromstring(out.encode()) for c in s}
    assert [type(r) for r in cases[("DB1.2", "polarity")].result] == [Failure]
    assert status == EXIT_FAIL


def test_table_off_a_terminal_is_plain(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Captured stdout is not a TTY, so the table has no escape codes."""
    status, out = run([write(tmp_path, "t.json", FAILING)], capsys)
    assert "\x1b" not in out and "polarity" in out and "CAUTION" in out
    assert status == EXIT_FAIL


def test_installed_entry_exits_with_the_status(tmp_path: Path) -> None:
    """Run as a process (as a pipeline does): exit 1 on a failure, 0 otherwise, JUnit on stdout."""
    base = [sys.executable, "-m", "api.cli", "verify", "--format", "junit"]
    env = {"SOURCE_DATE_EPOCH": "1714555800", "PATH": "/usr/bin:/bin"}
    failing = subprocess.run([*base, write(tmp_path, "p.json", FAILING)], cwd=ROOT, env=env,
                             capture_output=True, check=False)
    passing = subprocess.run([*base, write(tmp_path, "q.json", PASS_AND_INCOMPLETE)], cwd=ROOT,
                             env=env, capture_output=True, check=False)
    assert (failing.returncode, passing.returncode) == (EXIT_FAIL, EXIT_OK), failing.stderr
    # SOURCE_DATE_EPOCH 1714555800 is 2024-05-01T09:30:00Z (reproducible-builds.org spec)
    assert b'timestamp="2024-05-01T09:30:00"' in failing.stdout


def test_a_site_document_and_fact_lines_are_verified_with_inheritance(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """`ohmtally verify site.json` judges circuits with the installation's and boards' facts (what the
    API does for the same body), and facts in one file reach circuits in another (a lines file's board
    line, a CSV circuit sheet)."""
    site = {"installation": {"earthing": "TN-C-S", "ze_ohm": 0.21},
            "boards": [{"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.41}],
            "circuits": [{"board": "DB2", "circuit": "1", "device": "B16", "zs_ohm": 0.95, "r1_r2_ohm": 0.5}]}
    doc = tmp_path / "site.json"
    doc.write_text(json.dumps(site), encoding="utf-8")
    _status, out = run([str(doc), "--format", "json"], capsys)
    (verdict,) = json.loads(out)["verdicts"]
    assert verdict["inherited"]["ze_ohm"] == "board DB2"  # Zs vs Zdb + R1+R2 read the board's Zdb
    assert verdict["inherited"]["earthing"] == "installation"
    facts = tmp_path / "facts.log"
    facts.write_text("installation earthing=TN-C-S ze=0.21\nboard=DB2 zdb=0.41 fed_from=DB1/5\n",
                     encoding="utf-8")
    sheet = tmp_path / "c.csv"
    sheet.write_text("board,circuit,device,zs_ohm,r1_r2_ohm\nDB2,1,B16,0.95,0.5\n", encoding="utf-8")
    _status, out = run([str(facts), str(sheet), "--format", "json"], capsys)
    (from_files,) = json.loads(out)["verdicts"]
    assert from_files["checks"] == verdict["checks"] and from_files["inherited"] == verdict["inherited"]


def _actions(command: str) -> list[list[str]]:
    """The command and each of its sub-actions (``db upgrade``, ``keys create`` …), as argv prefixes."""
    parser = api.cli.build_parser(command)
    found = [[command]]
    for action in parser._subparsers._group_actions if parser._subparsers else []:
        sub = action.choices[command]  # type: ignore[index]
        for inner in sub._actions:
            if isinstance(inner, argparse._SubParsersAction):
                found += [[command, name] for name in inner.choices]
    return found


@pytest.mark.parametrize("command", list(api.cli.COMMANDS))
def test_every_commands_help_prints(command: str, capsys: pytest.CaptureFixture[str]) -> None:
    """`ohmtally COMMAND --help` is a newcomer's first step: every command's and action's help prints
    (a help text with a bare '%' once made `verify --help` a traceback)."""
    for argv in _actions(command):
        with pytest.raises(SystemExit) as stopped:
            main([*argv, "--help"])
        assert stopped.value.code == 0, argv
        assert "usage: ohmtally" in capsys.readouterr().out, argv


def test_view_compact_carries_the_full_views_figures(tmp_path: Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    """`--view compact --format json` is the compact answer of POST /v1/verify?view=compact: the same
    outcomes, values and limits as the full view (engine.compact.decode spells the rows out), the same
    exit status; beside another format it is a usage error, never silently the full table."""
    from engine.compact import decode  # local: only this test reads the compact rows back

    readings = tmp_path / "db4.txt"
    readings.write_text("".join(
        f"board=DB4 circuit={n} device=B32 earthing=TN-S ze_ohm=0.35 r1_r2_ohm={0.2 + n / 10:.2f} "
        f"zs_ohm={0.55 + n / 10:.2f} polarity_ok=yes\n" for n in range(1, 10)), encoding="utf-8")
    full_exit = main(["verify", str(readings), "--format", "json"])
    full = json.loads(capsys.readouterr().out)
    compact_exit = main(["verify", str(readings), "--format", "json", "--view", "compact"])
    compact = json.loads(capsys.readouterr().out)
    assert full_exit == compact_exit == EXIT_FAIL  # Zs beyond B32's maximum on the later circuits
    assert compact["view"] == "compact" and compact["summary"] == full["summary"]
    assert compact["notice"] == full["notice"]
    assert {(v["board"], v["circuit"]): [tuple(r[:6]) for r in v["checks"]] for v in decode(compact)} == {
        (v["board"], v["circuit"]): [(c["check"], c["outcome"], c["value"], c["relation"], c["limit"],
                                      c["unit"]) for c in v["checks"]] for v in full["verdicts"]}
    assert main(["verify", str(readings), "--view", "compact"]) == EXIT_USAGE
    assert "--format json" in capsys.readouterr().err
