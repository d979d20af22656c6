"""Long work shows progress on a terminal and stays quiet for programs (issue 18 item 5).

- In a pseudo-terminal, ``ohmtally verify`` on a large file draws its bars on stderr (bytes read,
  circuits verified) while stdout keeps only the report.
- Piped, or with ``--format json``, nothing but the report and warnings is written.
- Verifying in steps gives exactly the verdicts of one call (the engine's own ``verify``).
"""

from __future__ import annotations

import os
import pty
import select
import subprocess
import sys
import time
from pathlib import Path

from api.cli.progress import TerminalProgress, verify_in_steps
from engine import build_record, load_ruleset, verify
from tests.bench.synthetic import rows

ROOT = Path(__file__).resolve().parents[2]


def _big_csv(path: Path, count: int) -> Path:
    listed = list(rows(count))
    names = sorted({name for row in listed for name in row})
    lines = [",".join(names)] + [",".join(str(row.get(n, "")) for n in names) for row in listed]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _in_a_terminal(argv: list[str], out: Path, timeout: float = 120.0) -> tuple[int, bytes]:
    """Run with stderr (and stdin) on a pseudo-terminal and stdout to a file: (status, what stderr got)."""
    leader, follower = pty.openpty()
    with out.open("wb") as report:
        child = subprocess.Popen(argv, cwd=ROOT, stdin=follower, stderr=follower, stdout=report,
                                 env={**os.environ, "COLUMNS": "120", "TERM": "xterm"})
    os.close(follower)
    seen = b""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        ready, _, _ = select.select([leader], [], [], 0.2)
        if ready:
            try:
                chunk = os.read(leader, 65536)
            except OSError:
                break
            if not chunk:
                break
            seen += chunk
        elif child.poll() is not None:
            break
    os.close(leader)
    return child.wait(timeout=10), seen


def test_bars_on_a_terminal_and_silence_for_a_program(tmp_path: Path) -> None:
    """A 1,500-circuit CSV: bars on a terminal's stderr for the table; none for --format json."""
    sheet = _big_csv(tmp_path / "big.csv", 1500)
    base = [sys.executable, "-m", "api.cli", "verify", str(sheet)]
    status, shown = _in_a_terminal([*base, "--format", "table"], tmp_path / "table.txt")
    assert status in (0, 1)
    assert b"verifying circuits" in shown and b"reading" in shown
    assert b"verifying circuits" not in (tmp_path / "table.txt").read_bytes()  # the report stays clean
    _status, quiet = _in_a_terminal([*base, "--format", "json"], tmp_path / "out.json")
    assert b"verifying circuits" not in quiet and b"reading" not in quiet
    piped = subprocess.run([*base, "--format", "table"], cwd=ROOT, capture_output=True, check=False)
    assert b"verifying circuits" not in piped.stderr


def test_steps_give_the_verdicts_of_one_call() -> None:
    """verify_in_steps (as the bars draw it) equals one verify call, a circuit given twice included."""
    listed = list(rows(1300))
    records = [r for r in (build_record(row)[0] for row in [*listed, listed[5]]) if r is not None]
    ruleset = load_ruleset(None)

    class Counting(TerminalProgress):
        def __init__(self) -> None:
            self.steps: list[int] = []

        def verifying(self, total: int):  # type: ignore[no-untyped-def]
            return self.steps.append

    reporter = Counting()
    stepped = verify_in_steps(records, ruleset, None, reporter)  # type: ignore[arg-type]
    assert [v.as_dict() for v in stepped] == [v.as_dict() for v in verify(records, ruleset)]
    assert sum(reporter.steps) == len({r.key for r in records}) and len(reporter.steps) > 1
