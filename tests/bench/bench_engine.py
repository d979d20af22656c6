"""Engine: circuits verified per second on one core, on a synthetic set that reaches every check id.

Run: ``python -m tests.bench.bench_engine [--circuits N] [--rounds N]`` (default 10,000, 5).

Arms, interleaved round by round (A B C D A B C D …), on the same records:
- baseline: a plain loop summing every numeric field and reading of each
  record (the data touched once, no rules), ``BASELINE_PASSES`` times over so
  a run lasts long enough to time: the same-run yardstick that shows the
  machine's drift;
- ``verify``: ``engine.verify`` (verdict objects, sentences included);
- full results: ``verify`` plus ``Verdict.as_dict()`` of every verdict (the
  data the full view's answer is made of);
- compact results, when the engine has them (:func:`compact_engine` names the
  hooks it looks for); else a row saying they are not in this build.

Every arm runs in this one thread, so on one core; the process is not pinned
to a CPU (on a shared host a pinned process waits for its CPU while the other
one idles). The cyclic collector is paused around each timed run after a full
collection, as ``ohmtally verify`` runs: its cost depends on what else the
process holds, not on the engine. Target (issue 18): compact results ≥ 50,000
circuits/s on one core. It is absolute (circuits per second on this machine, named in the
table's heading); the issue's anchor, a numbers-only loop of the same checks,
ran 236k/s on this machine class.
"""

from __future__ import annotations

import argparse
import collections
import gc
import inspect
import sys
from collections.abc import Callable
from typing import Any

import engine
from engine import CHECK_IDS, FIELDS, CircuitRecord, Reading, Verdict, verify

from . import synthetic
from .common import Figure, compare, interleave, print_table, timed, unavailable

__all__ = ["BASELINE_PASSES", "TARGET_PER_S", "compact_engine", "main", "run"]

TARGET_PER_S = 50_000
BASELINE_PASSES = 20
_NAMES = tuple(FIELDS)
Work = Callable[[list[CircuitRecord]], Any]


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


def _baseline(records: list[CircuitRecord]) -> float:
    return sum(_sum_fields(records) for _ in range(BASELINE_PASSES))


def _full(records: list[CircuitRecord]) -> list[dict[str, Any]]:
    return [v.as_dict() for v in verify(records)]


def compact_engine() -> tuple[str, Work] | None:
    """The engine's compact results, if this build has them: (how they were reached, the work).

    Looked for, in order: a ``view`` keyword of ``engine.verify`` (``view="compact"``);
    ``engine.verify_compact(records)``; a ``compact()`` or ``as_compact()`` method on
    ``Verdict``. Whoever adds compact results under another name adds it here.
    """
    if "view" in inspect.signature(verify).parameters:
        compact_view: dict[str, Any] = {"view": "compact"}
        return "verify(view='compact')", lambda records: verify(records, **compact_view)
    direct = getattr(engine, "verify_compact", None)
    if callable(direct):
        return "engine.verify_compact", direct
    for method in ("compact", "as_compact"):
        if callable(getattr(Verdict, method, None)):
            return (f"verify + Verdict.{method}()",
                    lambda records, m=method: [getattr(v, m)() for v in verify(records)])
    return None


def _rate(work: Work, records: list[CircuitRecord], passes: int = 1) -> Callable[[], float]:
    """A timed run of ``work`` as circuits per second, the collector paused after a full collection."""
    def measured() -> float:
        gc.collect()
        enabled = gc.isenabled()
        gc.disable()
        try:
            _, seconds = timed(lambda: work(records))
        finally:
            if enabled:
                gc.enable()
        return passes * len(records) / seconds
    return measured


def run(circuits: int = 10_000, rounds: int = 5) -> list[Figure]:
    records = synthetic.records(circuits)
    verdicts = verify(records)  # also loads the ruleset and tables outside the timing
    seen = {c.check for v in verdicts for c in v.checks}
    outcomes = collections.Counter(v.outcome.value for v in verdicts)
    del verdicts
    compact = compact_engine()
    arms = {"baseline": _rate(_baseline, records, BASELINE_PASSES), "verify": _rate(verify, records),
            "full": _rate(_full, records)}
    if compact is not None:
        compact[1](records[:50])
        arms["compact"] = _rate(compact[1], records)
    rates = interleave(arms, rounds)
    print(f"engine: {circuits:,} circuits, {len(seen)} check ids reached, outcomes {dict(outcomes)}, "
          f"{rounds} interleaved rounds")
    target = f">= {TARGET_PER_S:,}/s (absolute)"
    base = rates["baseline"]
    figures = [
        compare("engine", "verify, circuits/s (vs field sum)", "/s", rates["verify"], base),
        compare("engine", "full results (verify + as_dict), circuits/s", "/s", rates["full"], base),
    ]
    if compact is None:
        figures.append(unavailable("engine", "compact results, circuits/s", target))
    else:
        figures.append(compare("engine", f"compact results ({compact[0]}), circuits/s", "/s",
                               rates["compact"], base, target=target,
                               met=lambda v, _r: v >= TARGET_PER_S))
    single_visit = set(CHECK_IDS) - {"previous_visit"}  # it needs a previous visit; the set is one visit
    figures.append(Figure(bench="engine", what="check ids reached", unit="ids", value=len(seen),
                          target=f"{len(single_visit)} (all of one visit)", met=seen == single_visit))
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=10_000)
    parser.add_argument("--rounds", type=int, default=5)
    args = parser.parse_args(argv)
    print_table(run(args.circuits, args.rounds))
    return 0


if __name__ == "__main__":
    sys.exit(main())
