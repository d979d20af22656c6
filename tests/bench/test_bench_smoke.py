"""Smoke test: ``python -m tests.bench --smoke`` runs every benchmark and prints its figures.

Not a timed test: nothing here depends on how fast the machine is.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from tests.bench import synthetic

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.slow
def test_smoke_run_prints_every_figure() -> None:
    """The whole bench on tiny sizes exits 0 and its final table names every benchmark's figures."""
    done = subprocess.run([sys.executable, "-m", "tests.bench", "--smoke"], cwd=ROOT, capture_output=True,
                          text=True, timeout=300, check=False)
    assert done.returncode == 0, done.stderr[-3000:]
    table = done.stdout.split("== all figures", 1)[1]
    figures = ("verify, circuits/s", "csv→verify→json", "RSS growth", "verify p99", "readings lost SQLite")
    for figure in figures:
        assert figure in table, table


def test_synthetic_set_reaches_every_check() -> None:
    """The engine benchmark's input makes all eleven check ids run (so the figure covers them all)."""
    from engine import CHECK_IDS, verify

    seen = {c.check for v in verify(synthetic.records(120)) for c in v.checks}
    assert seen == set(CHECK_IDS)
