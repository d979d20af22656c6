"""What every benchmark shares: interleaved rounds, a figure row with its spread, the machine, the table.

Invariants:
- A figure compared with a baseline is measured in interleaved rounds: every
  round runs each arm once, in the same order (A B A B …), so a neighbour's
  burst or the host's drift lands on both arms instead of on one of them. The
  figure is the median of its rounds, printed with the min–max spread; the
  ratio is the ratio of the two medians, printed with the range of the ratios
  of the rounds taken pair by pair (how stable the comparison was).
- A target that is missed is printed as missed; a feature a target needs that
  this build lacks is a row saying so (``not available in this build``), never
  an error and never a pass. Nothing here fails a test on a time.
- Timings come from ``time.perf_counter``; nothing here changes process-wide
  state (a benchmark that pauses the collector restores it).
"""

from __future__ import annotations

import os
import platform
import statistics
import threading
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, TypeVar

import psutil

__all__ = ["UNAVAILABLE", "Figure", "compare", "interleave", "machine", "measure_rss", "print_table",
           "single", "timed", "unavailable"]

T = TypeVar("T")
UNAVAILABLE = "not available in this build"


@dataclass(frozen=True, slots=True, kw_only=True)
class Figure:
    """One line of the final table: a median over ``rounds`` with its spread, and its baseline's."""

    bench: str
    what: str
    unit: str
    value: float | None  # None: the feature is not in this build (see ``note``)
    spread: tuple[float, float] | None = None
    baseline: float | None = None  # same unit, same run, interleaved with ``value``'s rounds
    baseline_spread: tuple[float, float] | None = None
    ratio: float | None = None  # ratio of the medians (value / baseline unless the bench says otherwise)
    ratio_spread: tuple[float, float] | None = None  # the rounds' own ratios, pair by pair
    target: str = ""
    met: bool | None = None
    rounds: int = 1
    note: str = ""

    def cells(self) -> list[str]:
        met = "" if self.met is None else ("yes" if self.met else "NO")
        value = self.note if self.value is None else _with_spread(self.value, self.spread, self.unit)
        if self.note and self.value is not None:
            value += f" ({self.note})"
        ratio = "-" if self.ratio is None else _with_spread(self.ratio, self.ratio_spread, "", ratio=True)
        return [self.bench, self.what, value, _with_spread(self.baseline, self.baseline_spread, self.unit),
                ratio, self.target, met, str(self.rounds)]


def _number(x: float, *, ratio: bool = False) -> str:
    if ratio:
        return f"{x:.3g}"
    return f"{x:,.0f}" if abs(x) >= 100 else f"{x:,.3g}"


def _with_spread(x: float | None, spread: tuple[float, float] | None, unit: str, *, ratio: bool = False
                 ) -> str:
    if x is None:
        return "-"
    text = _number(x, ratio=ratio) + (f" {unit}" if unit else "")
    if spread is not None and spread[0] != spread[1]:
        text += f" ({_number(spread[0], ratio=ratio)}–{_number(spread[1], ratio=ratio)})"
    return text


def timed(work: Callable[[], T]) -> tuple[T, float]:
    began = time.perf_counter()
    out = work()
    return out, time.perf_counter() - began


def interleave(arms: Mapping[str, Callable[[], T]], rounds: int) -> dict[str, list[T]]:
    """Each arm once per round, in ``arms``' order, ``rounds`` times (A B A B …): every arm's results."""
    out: dict[str, list[T]] = {name: [] for name in arms}
    for _ in range(rounds):
        for name, arm in arms.items():
            out[name].append(arm())
    return out


def _range(values: Sequence[float]) -> tuple[float, float]:
    return (min(values), max(values))


def compare(bench: str, what: str, unit: str, measured: Sequence[float],
            baseline: Sequence[float] | None = None, *, target: str = "",
            met: Callable[[float, float | None], bool] | None = None) -> Figure:
    """A figure from interleaved rounds: medians, spreads, ratio of medians and the rounds' ratios.

    ``met(value, ratio)`` decides the target from the medians (None: no target).
    """
    value = statistics.median(measured)
    base = statistics.median(baseline) if baseline else None
    ratio = value / base if base else None
    pairwise = None
    if baseline and len(baseline) == len(measured) and all(baseline):
        pairwise = _range([m / b for m, b in zip(measured, baseline, strict=True)])
    return Figure(bench=bench, what=what, unit=unit, value=value, spread=_range(measured), baseline=base,
                  baseline_spread=_range(baseline) if baseline else None, ratio=ratio, ratio_spread=pairwise,
                  target=target, met=None if met is None else met(value, ratio), rounds=len(measured))


def single(bench: str, what: str, unit: str, value: float, *, baseline: float | None = None,
           target: str = "", met: bool | None = None, note: str = "") -> Figure:
    """A figure that does not drift (a size, a count, a memory peak): measured once."""
    ratio = value / baseline if baseline else None
    return Figure(bench=bench, what=what, unit=unit, value=value, baseline=baseline, ratio=ratio,
                  target=target, met=met, note=note)


def unavailable(bench: str, what: str, target: str, why: str = UNAVAILABLE) -> Figure:
    """The row of a figure whose feature this build lacks: it appears once the feature does."""
    return Figure(bench=bench, what=what, unit="", value=None, target=target, rounds=0, note=why)


def machine() -> str:
    """The host the figures come from: cores, CPU model, memory, Python, kernel."""
    model = platform.processor() or "unknown CPU"
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as info:
            model = next((ln.split(":", 1)[1].strip() for ln in info if ln.startswith("model name")), model)
    except OSError:
        pass
    memory = psutil.virtual_memory().total / 2**30
    return (f"nproc {os.cpu_count()}, {model}, {memory:.0f} GiB RAM, Python {platform.python_version()}, "
            f"{platform.system()} {platform.release()}, load average {os.getloadavg()[0]:.2f} at the end")


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


HEAD = ["bench", "figure", "measured (min–max)", "baseline (min–max)", "ratio (rounds' range)", "target",
        "met", "rounds"]


def print_table(figures: Sequence[Figure], *, markdown: bool = False) -> None:
    rows = [f.cells() for f in figures]
    if markdown:
        print("| " + " | ".join(HEAD) + " |")
        print("|" + "---|" * len(HEAD))
        for row in rows:
            print("| " + " | ".join(cell.replace("|", "\\|") for cell in row) + " |")
        return
    table = [HEAD, *rows]
    widths = [max(len(r[i]) for r in table) for i in range(len(HEAD))]
    for n, row in enumerate(table):
        print("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip())
        if n == 0:
            print("  ".join("-" * w for w in widths))
