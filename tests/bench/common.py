"""What every benchmark shares: a figure row, timing, RSS sampling and the final table.

Invariants:
- Every figure is reported beside a baseline measured in the same run on the
  same input; the ratio is what to compare across machines (absolute times
  drift on shared hosts, ratios hold).
- A target that is missed is printed as missed; nothing here fails a test on a
  time. Benchmarks are measurements, not assertions.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import psutil

__all__ = ["Figure", "best_of", "measure_rss", "print_table", "timed"]


@dataclass(frozen=True, slots=True)
class Figure:
    """One line of the final table."""

    bench: str
    what: str
    value: float
    unit: str
    baseline: float | None = None  # same unit, same run
    ratio: float | None = None  # value / baseline, or as the bench defines it
    target: str = ""
    met: bool | None = None

    def cells(self) -> list[str]:
        def fmt(x: float | None) -> str:
            if x is None:
                return "-"
            return f"{x:,.0f}" if abs(x) >= 100 else f"{x:,.3g}"
        met = "" if self.met is None else ("yes" if self.met else "NO")
        return [self.bench, self.what, f"{fmt(self.value)} {self.unit}", fmt(self.baseline),
                "-" if self.ratio is None else f"{self.ratio:.3g}", self.target, met]


def timed(work: Callable[[], Any]) -> tuple[Any, float]:
    began = time.perf_counter()
    out = work()
    return out, time.perf_counter() - began


def best_of(runs: int, work: Callable[[], Any]) -> tuple[Any, float]:
    """The result and the fastest of ``runs`` timings (the least disturbed by neighbours)."""
    best = float("inf")
    out: Any = None
    for _ in range(runs):
        out, seconds = timed(work)
        best = min(best, seconds)
    return out, best


def measure_rss(work: Callable[[], Any]) -> tuple[Any, float, float]:
    """(result, seconds, peak RSS growth in MB) of ``work()``, RSS sampled every 5 ms."""
    process = psutil.Process()
    start = process.memory_info().rss
    peak = start
    done = threading.Event()

    def sample() -> None:
        nonlocal peak
        while not done.is_set():
            peak = max(peak, process.memory_info().rss)
            time.sleep(0.005)

    sampler = threading.Thread(target=sample, daemon=True)
    sampler.start()
    out, seconds = timed(work)
    done.set()
    sampler.join()
    peak = max(peak, process.memory_info().rss)
    return out, seconds, (peak - start) / 1e6


def print_table(figures: Sequence[Figure]) -> None:
    head = ["bench", "figure", "value", "baseline", "ratio", "target", "met"]
    rows = [head, *(f.cells() for f in figures)]
    widths = [max(len(r[i]) for r in rows) for i in range(len(head))]
    for n, row in enumerate(rows):
        print("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip())
        if n == 0:
            print("  ".join("-" * w for w in widths))
