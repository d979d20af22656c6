"""CSV import to verdicts: ``ohmtally verify rows.csv --format json`` vs ``csv.reader`` + ``orjson.dumps``.

Run: ``python -m tests.bench.bench_import [--rows 20000] [--compact-rows 100000] [--rounds 5]``.

The CSV (neutral wide layout, every check's columns) is generated into a
temporary file. Each arm is a fresh process writing to a file
(``tests.bench.cli_runs``), interleaved round by round with its baseline over
the very same file: ``csv.reader`` of every row and ``orjson.dumps`` of them.

- Compact verdicts (the target's form): ``--compact-rows`` rows (100,000, the
  target's size) through ``ohmtally verify rows.csv --format json --view
  compact``, when this build has that option; else a row saying it has not.
- Full verdicts: ``--rows`` rows through ``ohmtally verify rows.csv --format
  json``. Trimmed to 20,000 rows in ``make bench``: it is not a target, the
  ratio does not depend on the size (the work is per row), and 100,000 rows
  of full verdicts take about 100 s a run here, 1.4 GB of JSON.
- Where the full run's time goes, measured once in this process after the
  rounds: the csv adapter with ``adapters.collect``, then ``engine.verify``;
  the rest of the command's median is building and writing the answer.

Target (issue 18): 100,000 rows to compact verdicts within 5× of the baseline.
"""

from __future__ import annotations

import argparse
import gc
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

from adapters import AdapterOptions, collect
from adapters.csv_adapter import CsvAdapter
from engine import verify

from . import cli_runs, synthetic
from .common import Figure, compare, interleave, print_table, unavailable

__all__ = ["TARGET_RATIO", "main", "run", "stages", "write_csv"]

TARGET_RATIO = 5.0


def write_csv(path: Path, rows: int) -> int:
    with path.open("w", encoding="utf-8", newline="") as out:
        for line in synthetic.csv_lines(rows):
            out.write(line)
    return path.stat().st_size


def stages(path: Path) -> dict[str, float]:
    """Seconds of the csv adapter (merged by ``collect``) and of ``verify``; collector paused (as the CLI)."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        began = time.perf_counter()
        with path.open("rb") as stream:
            collected = collect(CsvAdapter().read(stream, AdapterOptions()))
        adapted = time.perf_counter()
        verdicts = verify(collected.records)
        verified = time.perf_counter()
        assert len(verdicts) == len(collected.records) and not collected.errors, collected.errors[:3]
    finally:
        if enabled:
            gc.enable()
    return {"csv adapter + collect": adapted - began, "engine.verify": verified - adapted}


def run(rows: int = 20_000, compact_rows: int = 100_000, rounds: int = 5) -> list[Figure]:
    figures: list[Figure] = []
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as name:
        folder = Path(name)
        small, full_csv, big_csv = folder / "small.csv", folder / "full.csv", folder / "compact.csv"
        write_csv(small, 3)
        full_size = write_csv(full_csv, rows)
        compact = cli_runs.compact_view_available(small, folder / "small.out")
        arms: dict[str, Callable[[], float]] = {
            "baseline": lambda: cli_runs.baseline(cli_runs.CSV_BASELINE, full_csv, folder / "base.out"),
            "full": lambda: cli_runs.verify(full_csv, folder / "full.out")}
        if compact:
            write_csv(big_csv, compact_rows)
            arms["compact baseline"] = lambda: cli_runs.baseline(cli_runs.CSV_BASELINE, big_csv,
                                                                 folder / "cbase.out")
            arms["compact"] = lambda: cli_runs.verify(big_csv, folder / "compact.out", "compact")
        seconds = interleave(arms, rounds)
        shares = stages(full_csv)
    full = compare("import", f"{rows:,} CSV rows to full verdicts", "s", seconds["full"], seconds["baseline"],
                   target="(not a target)")
    rest = (full.value or 0.0) - sum(shares.values())
    print(f"import: {rows:,} rows ({full_size / 1e6:.1f} MB CSV): full verdicts {full.value:.2f} s, of which "
          + ", ".join(f"{stage} {s:.2f} s" for stage, s in shares.items())
          + f", the rest (start-up, the answer built and written) {rest:.2f} s")
    what = f"{compact_rows:,} CSV rows to compact verdicts"
    target = f"<= {TARGET_RATIO:g}× baseline"
    if compact:
        figures.append(compare("import", what, "s", seconds["compact"], seconds["compact baseline"],
                               target=target,
                               met=lambda _v, ratio: ratio is not None and ratio <= TARGET_RATIO))
    else:
        figures.append(unavailable("import", what, target))
    figures.append(full)
    return figures


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=20_000, help="rows for the full view")
    parser.add_argument("--compact-rows", type=int, default=100_000, help="rows for the compact view")
    parser.add_argument("--rounds", type=int, default=5)
    args = parser.parse_args(argv)
    print_table(run(args.rows, args.compact_rows, args.rounds))
    return 0


if __name__ == "__main__":
    sys.exit(main())
