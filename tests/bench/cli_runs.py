"""Timed runs of ``ohmtally verify`` and of the plain-Python baselines it is compared with, each a process.

Invariants:
- Every run is a fresh process whose standard output goes to a file, as a
  user's ``ohmtally verify FILE --format json > out.json`` does; the time is
  the whole process's (interpreter start, imports, reading, work, writing),
  for the command and for its baseline alike.
- The command is the console script of this environment with ``PYTHONPATH``
  set to this checkout, so a copy of ``tests/bench`` in an older worktree
  times the older code.
- A run that fails (exit status 3 or more, or nothing written) raises: a
  figure is never taken from a command that did not do the work. Exit 1
  (a circuit fails) and 2 (rejected input) are answers, not failures.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from .common import timed
from .servers import BIN, ROOT, bench_env

__all__ = ["CSV_BASELINE", "JSON_BASELINE", "baseline", "compact_view_available", "verify"]

# json.load + json.dumps of the same file (the verify target's yardstick, issue 18)
JSON_BASELINE = ("import json, sys\n"
                 "data = json.load(open(sys.argv[1], encoding='utf-8'))\n"
                 "open(sys.argv[2], 'w', encoding='utf-8').write(json.dumps(data))\n")
# csv.reader + orjson.dumps of the same file (the import target's yardstick, issue 18)
CSV_BASELINE = ("import csv, sys, orjson\n"
                "rows = list(csv.reader(open(sys.argv[1], encoding='utf-8', newline='')))\n"
                "open(sys.argv[2], 'wb').write(orjson.dumps(rows))\n")


def _argv(source: Path, view: str | None) -> list[str]:
    argv = [str(BIN / "ohmtally"), "verify", str(source), "--format", "json"]
    return [*argv, "--view", view] if view else argv


def verify(source: Path, out: Path, view: str | None = None) -> float:
    """Seconds for ``ohmtally verify SOURCE --format json [--view VIEW] > OUT``."""
    with out.open("wb") as sink:
        done, seconds = timed(lambda: subprocess.run(_argv(source, view), stdout=sink, stderr=subprocess.PIPE,
                                                      env=bench_env(), cwd=ROOT, check=False))
    if done.returncode > 2 or out.stat().st_size == 0:
        raise RuntimeError(f"ohmtally verify exited {done.returncode}: {done.stderr[-2000:]!r}")
    return seconds


def baseline(code: str, source: Path, out: Path) -> float:
    """Seconds for a Python process running ``code`` with the source and output paths as arguments."""
    done, seconds = timed(lambda: subprocess.run([sys.executable, "-c", code, str(source), str(out)],
                                                 capture_output=True, cwd=ROOT, check=False))
    if done.returncode != 0:
        raise RuntimeError(f"baseline exited {done.returncode}: {done.stderr[-2000:]!r}")
    return seconds


def compact_view_available(source: Path, out: Path) -> bool:
    """Whether this build's ``ohmtally verify`` takes ``--view compact`` (tried on a small file)."""
    with out.open("wb") as sink:
        done = subprocess.run(_argv(source, "compact"), stdout=sink, stderr=subprocess.PIPE, env=bench_env(),
                              cwd=ROOT, check=False)
    return done.returncode <= 2 and out.stat().st_size > 0
