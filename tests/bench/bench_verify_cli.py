"""``ohmtally verify`` on 20,000 circuits, full and compact views, against ``json.load`` + ``json.dumps``.

Run: ``python -m tests.bench.bench_verify_cli [--circuits 20000] [--rounds 5]``.

The input is the synthetic installation as a JSON verify body (``{"circuits":
[…]}``, every check's fields), written to a temporary file. Arms, interleaved
round by round, each a fresh process writing to a file (``tests.bench.cli_runs``):
- baseline: ``json.load`` of the file and ``json.dumps`` of what it read;
- ``ohmtally verify FILE --format json`` (the full view);
- ``ohmtally verify FILE --format json --view compact`` when this build has
  the option (tried first on a small file); else a row saying it has not.

Targets (issue 18): the full view within 10× of the baseline's time, the
compact view within 5×.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path

from engine import record_to_dict

from . import cli_runs, synthetic
from .common import Figure, compare, interleave, print_table, unavailable

__all__ = ["COMPACT_RATIO", "FULL_RATIO", "main", "run", "write_body"]

FULL_RATIO = 10.0
COMPACT_RATIO = 5.0


def write_body(path: Path, circuits: int) -> int:
    """The synthetic installation as a verify body; returns its size in bytes."""
    body = {"circuits": [record_to_dict(r) for r in synthetic.records(circuits)]}
    path.write_text(json.dumps(body), encoding="utf-8")
    return path.stat().st_size


def run(circuits: int = 20_000, rounds: int = 5) -> list[Figure]:
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as name:
        folder = Path(name)
        source, small = folder / "circuits.json", folder / "small.json"
        size = write_body(source, circuits)
        write_body(small, 3)
        start_up = cli_runs.verify(small, folder / "small.out")
        compact = cli_runs.compact_view_available(small, folder / "small.out")
        arms: dict[str, Callable[[], float]] = {
            "baseline": lambda: cli_runs.baseline(cli_runs.JSON_BASELINE, source, folder / "baseline.out"),
            "full": lambda: cli_runs.verify(source, folder / "full.out")}
        if compact:
            arms["compact"] = lambda: cli_runs.verify(source, folder / "compact.out", "compact")
        seconds = interleave(arms, rounds)
        written = {arm: (folder / f"{arm}.out").stat().st_size for arm in arms}
    print(f"verify cli: {circuits:,} circuits ({size / 1e6:.1f} MB JSON); ohmtally verify on 3 circuits "
          f"takes {start_up:.2f} s (start-up); output per circuit: "
          + ", ".join(f"{arm} {written[arm] / circuits:,.0f} B" for arm in arms))
    base = seconds["baseline"]
    figures = [compare("verify cli", f"ohmtally verify {circuits:,} circuits, full view", "s",
                       seconds["full"], base, target=f"<= {FULL_RATIO:g}× baseline",
                       met=lambda _v, ratio: ratio is not None and ratio <= FULL_RATIO)]
    what = f"ohmtally verify {circuits:,} circuits, --view compact"
    if compact:
        figures.append(compare("verify cli", what, "s", seconds["compact"], base,
                               target=f"<= {COMPACT_RATIO:g}× baseline",
                               met=lambda _v, ratio: ratio is not None and ratio <= COMPACT_RATIO))
    else:
        figures.append(unavailable("verify cli", what, f"<= {COMPACT_RATIO:g}× baseline"))
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=20_000)
    parser.add_argument("--rounds", type=int, default=5)
    args = parser.parse_args(argv)
    print_table(run(args.circuits, args.rounds))
    return 0


if __name__ == "__main__":
    sys.exit(main())
