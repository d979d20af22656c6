"""Engine: circuits verified per second on a synthetic set that reaches every check id.

Run: ``python -m tests.bench.bench_engine [--circuits N]`` (default 10,000).

Baseline (same run, same records): a plain Python loop that sums every
numeric field and reading of each record, i.e. touching the data once with no
rules at all. The ratio says how many such passes one verification costs.
Target: ≥ 50,000 circuits/s on one core.
"""

from __future__ import annotations

import argparse
import collections
import sys

from engine import FIELDS, CircuitRecord, Reading, verify

from . import synthetic
from .common import Figure, best_of, print_table

__all__ = ["TARGET_PER_S", "main", "run"]

TARGET_PER_S = 50_000
_NAMES = tuple(FIELDS)


def _sum_fields(records: list[CircuitRecord]) -> float:
    total = 0.0
    for record in records:
        for name in _NAMES:
            value = getattr(record, name)
            if isinstance(value, Reading):
                total += value.value or 0.0
            elif isinstance(value, int | float):
                total += value
    return total


def run(circuits: int = 10_000, repeat: int = 3) -> list[Figure]:
    records = synthetic.records(circuits)
    verify(records[:50])  # load the ruleset and tables once, outside the timing
    verdicts, seconds = best_of(repeat, lambda: verify(records))
    _, base_seconds = best_of(repeat, lambda: _sum_fields(records))
    seen = {c.check for v in verdicts for c in v.checks}
    outcomes = collections.Counter(v.outcome.value for v in verdicts)
    print(f"engine: {circuits:,} circuits, {len(seen)} check ids reached, outcomes {dict(outcomes)}")
    rate, base_rate = circuits / seconds, circuits / base_seconds
    print(f"engine: verify {rate:,.0f} circuits/s; field-sum baseline {base_rate:,.0f} circuits/s; "
          f"verify costs {base_rate / rate:,.0f}× the baseline")
    return [
        Figure("engine", "verify, circuits/s", rate, "/s", base_rate, rate / base_rate,
               f">= {TARGET_PER_S:,}/s", rate >= TARGET_PER_S),
        Figure("engine", "check ids reached", len(seen), "ids", None, None, "11", len(seen) == 11),
    ]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=10_000)
    args = parser.parse_args(argv)
    print_table(run(args.circuits))
    return 0


if __name__ == "__main__":
    sys.exit(main())
