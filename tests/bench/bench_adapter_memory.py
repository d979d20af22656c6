"""Memory and speed of the csv adapter on a generated CSV (not committed; made on the fly).

Run: ``python -m tests.bench.bench_adapter_memory [--rows N]`` (default 1,000,000 rows).

Streams the rows through the ``csv`` adapter and merges them with
``adapters.iter_records`` (constant memory), and, over the very same generated
bytes, through ``csv.reader`` alone as the baseline. Prints rows/s for both,
their ratio, and the peak growth of the process's resident memory during each
pass (sampled with psutil). Exits 1 when the adapter's growth exceeds the target
(50 MB by default), so CI can run it as a check.
"""

from __future__ import annotations

import argparse
import csv
import io
import random
import sys
from collections.abc import Iterator

from adapters import AdapterOptions, iter_records
from adapters.csv_adapter import CsvAdapter
from tests.bench.common import measure_rss

__all__ = ["GeneratedCsv", "main"]

HEADER = "DB,Cct,Description,Zs (Ω),R1+R2,IR L-E [MΩ],IR L-N [MΩ],RCD ms,Polarity\n"


class GeneratedCsv(io.RawIOBase):
    """A CSV of ``rows`` invented rows, produced as it is read (never held whole)."""

    def __init__(self, rows: int, seed: int = 7) -> None:
        self._lines = self._generate(rows, seed)
        self._pending = b""

    @staticmethod
    def _generate(rows: int, seed: int) -> Iterator[bytes]:
        rng = random.Random(seed)
        yield HEADER.encode()
        for n in range(rows):
            ir = ">999" if rng.random() < 0.6 else str(rng.randint(2, 500))
            yield (f"DB{n % 20 + 1},{n // 20 + 1},Sockets {n % 7},{rng.randint(5, 300) / 100},"
                   f"{rng.randint(2, 150) / 100},{ir},{ir},{rng.randint(80, 400) / 10},ok\n").encode()

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: memoryview | bytearray) -> int:  # type: ignore[override]
        while len(self._pending) < len(buffer):
            chunk = b"".join(line for _, line in zip(range(512), self._lines, strict=False))
            if not chunk:
                break
            self._pending += chunk
        n = min(len(buffer), len(self._pending))
        buffer[:n] = self._pending[:n]
        self._pending = self._pending[n:]
        return n


def _baseline(rows: int) -> int:
    stream = io.TextIOWrapper(io.BufferedReader(GeneratedCsv(rows)), encoding="utf-8", newline="")
    return sum(1 for _ in csv.reader(stream)) - 1


def _adapter(rows: int) -> int:
    stream = io.BufferedReader(GeneratedCsv(rows))
    return sum(1 for _ in iter_records(CsvAdapter().read(stream, AdapterOptions())))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--target-mb", type=float, default=50.0)
    args = parser.parse_args(argv)
    base_rows, base_s, base_mb = measure_rss(lambda: _baseline(args.rows))
    rows, seconds, growth_mb = measure_rss(lambda: _adapter(args.rows))
    if rows != args.rows or base_rows != args.rows:
        print(f"row count mismatch: adapter {rows}, csv.reader {base_rows}, expected {args.rows}")
        return 1
    base_rate, rate = base_rows / base_s, rows / seconds
    print(f"rows                      {rows:,}")
    print(f"csv.reader baseline       {base_rate:12,.0f} rows/s   peak RSS growth {base_mb:6.1f} MB")
    print(f"csv adapter + merge       {rate:12,.0f} rows/s   peak RSS growth {growth_mb:6.1f} MB")
    print(f"adapter / baseline speed  {rate / base_rate:12.3f}")
    verdict = "ok" if growth_mb < args.target_mb else "EXCEEDED"
    print(f"memory target             {args.target_mb:12.1f} MB   {verdict}")
    return 0 if growth_mb < args.target_mb else 1


if __name__ == "__main__":
    sys.exit(main())
