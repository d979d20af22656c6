"""Import pipeline: a wide CSV through the csv adapter, normalisation, verification and JSON.

Run: ``python -m tests.bench.bench_import [--rows N]`` (default 100,000).

The CSV (neutral wide layout, every check's columns) is generated into a
temporary file, not committed. Pipeline: ``CsvAdapter.read`` → merged records
(``adapters.collect``) → ``engine.verify`` → the ``POST /v1/verify`` body
(``api.answers.verify_body``, built as ``POST /v1/verify`` builds it) serialised
to JSON bytes with orjson, as the route does. Baseline over the very
same file: ``csv.reader`` plus ``json.dumps`` of the raw rows. Target: the
pipeline within 5× the baseline. Each stage's share is printed too, so the
slow one is plain.
"""

from __future__ import annotations

import argparse
import csv
import json
import sys
import tempfile
from pathlib import Path
from typing import Any

import orjson

from adapters import AdapterOptions, collect
from adapters.csv_adapter import CsvAdapter
from api.answers import verify_body
from engine import load_ruleset, verify
from engine.verify import collector_paused

from . import synthetic
from .common import Figure, best_of, print_table, timed

__all__ = ["TARGET_RATIO", "main", "run", "write_csv"]

TARGET_RATIO = 5.0


def write_csv(path: Path, rows: int) -> int:
    with path.open("w", encoding="utf-8", newline="") as out:
        for line in synthetic.csv_lines(rows):
            out.write(line)
    return path.stat().st_size


def _baseline(path: Path) -> int:
    with path.open(encoding="utf-8", newline="") as stream:
        rows = list(csv.reader(stream))
    return len(json.dumps(rows).encode())


def _dumps(body: dict[str, Any]) -> bytes:
    return orjson.dumps(body)


def _pipeline(path: Path, stages: dict[str, float]) -> int:
    rules = load_ruleset(None)
    with path.open("rb") as stream:
        collected, stages["adapter+normalise"] = timed(
            lambda: collect(CsvAdapter().read(stream, AdapterOptions())))
    verdicts, stages["verify"] = timed(lambda: verify(collected.records, rules))
    rejected = [e.as_dict() for e in collected.errors]
    with collector_paused():  # as POST /v1/verify builds its body (api/routes/verify.py)
        body, stages["body"] = timed(lambda: verify_body(rules, verdicts, rejected))
    data, stages["json"] = timed(lambda: _dumps(body))
    assert len(verdicts) == len(collected.records) and not rejected, rejected[:3]
    return len(data)


def run(rows: int = 100_000, repeat: int = 1) -> list[Figure]:
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as folder:
        path = Path(folder) / "import.csv"
        size = write_csv(path, rows)
        verify(synthetic.records(50))  # ruleset, tables and pint's registry loaded outside the timing
        _, base_s = best_of(max(repeat, 2), lambda: _baseline(path))
        stages: dict[str, float] = {}
        out_bytes, seconds = best_of(repeat, lambda: _pipeline(path, stages))
    ratio = seconds / base_s
    share = ", ".join(f"{name} {t:.2f} s" for name, t in stages.items())
    print(f"import: {rows:,} rows ({size / 1e6:.1f} MB CSV → {out_bytes / 1e6:.1f} MB JSON) "
          f"in {seconds:.2f} s ({rows / seconds:,.0f} rows/s): {share}")
    print(f"import: baseline csv.reader + json.dumps {base_s:.2f} s ({rows / base_s:,.0f} rows/s); "
          f"pipeline/baseline {ratio:.1f}×")
    return [Figure("import", "csv→verify→json, rows/s", rows / seconds, "/s", rows / base_s,
                   ratio, f"<= {TARGET_RATIO:g}× baseline time", ratio <= TARGET_RATIO)]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=100_000)
    args = parser.parse_args(argv)
    print_table(run(args.rows))
    return 0


if __name__ == "__main__":
    sys.exit(main())
