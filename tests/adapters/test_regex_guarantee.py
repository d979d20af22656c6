"""Regex line profiles run under a guarantee: an operator's backtracking pattern cannot hold a worker.

``(\\w+\\s?)+$`` against a run of word characters ending in a character that is not one is the
classic catastrophic-backtracking case (exponential in the run's length for a backtracking engine:
Python's ``re`` takes about 0.6 s at 22 characters here, doubling with each more). RE2 matches in
time linear in the input (Cox, "Regular Expression Matching Can Be Simple And Fast", 2007;
RE2's documented guarantee). Each read runs in a child process with a time bound, so a regression
fails the test instead of hanging it.
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from adapters import AdapterError
from adapters.profiles import load_profile_file

ROOT = Path(__file__).resolve().parents[2]
EVIL = {"name": "evil", "kind": "regex", "pattern": r"^(?P<circuit>(\w+\s?)+)$"}


def test_backtracking_pattern_on_long_lines_finishes_in_bounded_time(tmp_path: Path) -> None:
    """200 lines of 60 word characters and a '!' (no match): each rejected on its own, all within
    10 s (a backtracking engine would need years for one of them), and the good line after them read."""
    (tmp_path / "evil.json").write_text(json.dumps(EVIL), encoding="utf-8")
    script = textwrap.dedent(f"""
        import io, time
        from adapters import AdapterOptions, collect
        from adapters.lines_adapter import LinesAdapter
        data = ("a" * 60 + "!\\n").encode() * 200 + b"DB1 ok\\n"
        started = time.perf_counter()
        got = collect(LinesAdapter().read(io.BytesIO(data),
                      AdapterOptions(profile="evil", profile_dir={str(tmp_path)!r})))
        print(len(got.errors), sorted({{e.code for e in got.errors}}), got.lines,
              round(time.perf_counter() - started, 3))
    """)
    done = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                          timeout=10)
    assert done.returncode == 0, done.stderr
    # every evil line is its own no_match error; the good last line is read (a context line)
    assert done.stdout.startswith("200 ['no_match'] 201 "), done.stdout


@pytest.mark.parametrize(("pattern", "why"), [
    (r"^(?P<circuit>\w+) (\1)", "back-reference"),
    (r"^(?P<circuit>\w+)(?=x)", "look-ahead"),
])
def test_patterns_re2_cannot_run_in_linear_time_are_refused_at_load(tmp_path: Path, pattern: str,
                                                                      why: str) -> None:
    """A profile needing backtracking features is a bad_profile with a pointer to /pattern, at load."""
    path = tmp_path / "p.json"
    path.write_text(json.dumps({"name": "p", "kind": "regex", "pattern": pattern}), encoding="utf-8")
    with pytest.raises(AdapterError) as refused:
        load_profile_file(path)
    assert refused.value.code == "bad_profile"
    assert refused.value.details["pointer"] == "/pattern"
    assert "linear time" in refused.value.message, why
