"""Answer size: bytes of JSON per circuit in ``POST /v1/verify``'s answer, full and compact views.

Run: ``python -m tests.bench.bench_size [--circuits 960]``.

The body is the synthetic installation (16 groups of an origin board, a
sub-board fed from it and a TT board: every check id) as neutral CSV, posted
to ``ohmtally serve`` (``tests.bench.servers``) with ``Accept-Encoding:
identity``, so the bytes counted are the JSON's. The full view is the default
answer; the compact one is ``?view=compact`` when this build has it (a 422
naming the parameter means it has not, and the row says so). Sizes do not
drift with the machine, so each is measured once.

Targets (issue 18): compact ≤ 600 B per circuit; full at most half the full
answer's bytes per circuit before that work (:data:`START`).
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import dataclass

import httpx

from . import synthetic
from .common import Figure, print_table, single, unavailable
from .servers import Stack, using

__all__ = ["COMPACT_BYTES", "START", "Start", "main", "measure", "run"]

COMPACT_BYTES = 600


@dataclass(frozen=True, slots=True, kw_only=True)
class Start:
    """The full answer's size before issue 18's work, measured by this module on that commit."""

    commit: str
    committed: str  # the commit's date
    measured: str  # when it was measured, in a worktree with this module copied in
    bytes_per_circuit: float


# 5,757,528 B for the 960 circuits of this module's body, served by 5878b31 (tests/bench/README.md: how).
# That build had eleven check ids and no `inferred` block; three check families came after it.
START = Start(commit="5878b31", committed="2026-12-02", measured="2026-12-02", bytes_per_circuit=5_997.4)


def measure(url: str, circuits: int, view: str | None) -> tuple[int, int] | None:
    """(answer bytes, verdicts in it) of ``circuits`` synthetic circuits; None if ``view`` is refused."""
    body = "".join(synthetic.csv_lines(circuits)).encode()
    params = {"view": view} if view else {}
    answer = httpx.post(url + "/v1/verify", content=body, params=params, timeout=300,
                        headers={"Content-Type": "text/csv; charset=utf-8", "Accept-Encoding": "identity"})
    if view and answer.status_code == 422 and "view" in answer.text:
        return None
    if answer.status_code != 200:
        raise RuntimeError(f"POST /v1/verify {params}: {answer.status_code} {answer.text[:500]}")
    verdicts = len(answer.json()["verdicts"])
    if verdicts != circuits:
        raise RuntimeError(f"{verdicts} verdicts for {circuits} circuits")
    return len(answer.content), verdicts


def run(circuits: int = 960, stack: Stack | None = None) -> list[Figure]:
    with using(stack, postgres=False) as servers:
        url = servers.ohmtally("SQLite")
        assert url is not None
        full = measure(url, circuits, None)
        compact = measure(url, circuits, "compact")
    assert full is not None
    per_full = full[0] / full[1]
    start = START.bytes_per_circuit
    print(f"size: {circuits:,} circuits; full answer {full[0]:,} B ({per_full:,.0f} B per circuit); "
          + ("compact: not in this build" if compact is None
             else f"compact {compact[0]:,} B ({compact[0] / compact[1]:,.0f} B per circuit)")
          + f"; before issue 18 ({START.commit}, {START.committed}): "
            f"{START.bytes_per_circuit:,.0f} B per circuit")
    figures = [single("size", f"full answer, B per circuit (vs {START.commit})", "B", per_full,
                      baseline=start, target=f"<= {START.bytes_per_circuit / 2:,.0f} B (half)",
                      met=per_full <= start / 2)]
    what, target = "compact answer, B per circuit", f"<= {COMPACT_BYTES} B"
    if compact is None:
        figures.append(unavailable("size", what, target))
    else:
        per_compact = compact[0] / compact[1]
        figures.append(single("size", what, "B", per_compact, target=target,
                              met=per_compact <= COMPACT_BYTES))
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=960)
    args = parser.parse_args(argv)
    print_table(run(args.circuits))
    return 0


if __name__ == "__main__":
    sys.exit(main())
