"""Smoke test: ``python -m tests.bench --smoke`` runs every benchmark; and the rounds' arithmetic is right.

Not a timed test: nothing here depends on how fast the machine is.
"""

from __future__ import annotations

import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest

import engine
from engine import CHECK_IDS, verify
from tests.bench import bench_engine, synthetic
from tests.bench.common import UNAVAILABLE, compare, interleave, unavailable

ROOT = Path(__file__).resolve().parents[2]

# Each benchmark's figure as the final table names it; either its value or "not available in this build".
FIGURES = (
    "verify, circuits/s", "full results", "compact results",
    "circuits, full view", "circuits, --view compact",
    "CSV rows to compact verdicts", "CSV rows to full verdicts",
    "full answer, B per circuit", "compact answer, B per circuit",
    "1-circuit post into 200 vs 50 circuits, SQLite",
    "verify 48 circuits, requests/s", "verify p99", "readings posts/s SQLite", "readings lost SQLite",
    "peak RSS growth",
)


@pytest.mark.slow
def test_smoke_run_prints_every_figure() -> None:
    """The whole bench on tiny sizes exits 0 and its final table names every benchmark's figures."""
    done = subprocess.run([sys.executable, "-m", "tests.bench", "--smoke"], cwd=ROOT, capture_output=True,
                          text=True, timeout=300, check=False)
    assert done.returncode == 0, done.stderr[-3000:]
    table = done.stdout.split("== all figures", 1)[1]
    lines = table.splitlines()
    for figure in FIGURES:
        assert any(figure in line for line in lines), (figure, table)
    assert "nproc" in lines[0], lines[0]  # the machine is named beside the figures


def test_synthetic_set_reaches_every_check() -> None:
    """The engine benchmark's input makes every check id run (so the figure covers them all)."""
    seen = {c.check for v in verify(synthetic.records(120)) for c in v.checks}
    # previous_visit runs only beside a previous visit, which this single-visit set has not
    # (tests/engine/test_previous_visit.py covers it)
    assert seen == set(CHECK_IDS) - {"previous_visit"}


def test_rounds_alternate_the_arms() -> None:
    """Interleaving runs A B A B …: each round runs every arm once, in order."""
    calls: list[str] = []

    def arm(name: str, value: float) -> Callable[[], float]:
        def run() -> float:
            calls.append(name)
            return value
        return run

    runs = interleave({"a": arm("a", 1.0), "b": arm("b", 2.0)}, 3)
    assert calls == ["a", "b"] * 3
    assert runs == {"a": [1.0] * 3, "b": [2.0] * 3}


def test_compare_takes_medians_spread_and_pairwise_ratios() -> None:
    """The figure is the median of its rounds; the ratio is of the medians; the range is the rounds' own."""
    figure = compare("x", "y", "s", [3.0, 1.0, 2.0], [1.0, 1.0, 4.0], target="t", met=lambda v, r: v < 3)
    assert (figure.value, figure.spread) == (2.0, (1.0, 3.0))
    assert (figure.baseline, figure.baseline_spread) == (1.0, (1.0, 4.0))
    assert figure.ratio == 2.0
    assert figure.ratio_spread == (0.5, 3.0)  # 3/1, 1/1, 2/4
    assert figure.met is True and figure.rounds == 3


def test_unavailable_feature_is_a_row_not_a_pass() -> None:
    """A figure whose feature is missing says so, and is neither met nor missed."""
    figure = unavailable("engine", "compact results", ">= 50,000/s")
    assert figure.met is None and figure.value is None
    assert UNAVAILABLE in figure.cells()


def test_engine_compact_results_are_found_once_they_exist(monkeypatch: pytest.MonkeyPatch) -> None:
    """Once the engine offers compact results (a stand-in ``verify_compact`` here), the bench runs them."""
    seen: list[int] = []
    monkeypatch.setattr(engine, "verify_compact", lambda records: seen.append(len(records)), raising=False)
    found = bench_engine.compact_engine()
    assert found is not None
    assert found[0] in ("engine.verify_compact", "verify(view='compact')")  # a view keyword comes first
    if found[0] == "engine.verify_compact":
        found[1](synthetic.records(3))
        assert seen == [3]
