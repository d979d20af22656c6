"""``python -m tests.bench [--smoke] [--only NAME…] [--no-postgres]``: every benchmark, one table at the end.

``make bench`` runs this at full size (a few minutes on two cores). ``--smoke``
runs every benchmark on tiny inputs in seconds, to show they still run (CI);
its figures mean nothing, and it always uses the Python load generator, so CI
needs no wrk. Each benchmark prints its own lines as it goes; the
final table has every figure beside its same-run baseline and the ratio.
"""

from __future__ import annotations

import argparse
import sys
import time

from . import bench_api, bench_engine, bench_import, bench_stream_memory
from .common import Figure, print_table

__all__ = ["main"]

FULL = {"engine": {"circuits": 10_000}, "import": {"rows": 100_000}, "stream": {"rows": 1_000_000},
        "api": {"clients": 16, "requests": 40, "seconds": 8.0}}
SMOKE = {"engine": {"circuits": 200, "repeat": 1}, "import": {"rows": 300}, "stream": {"rows": 1_000},
         "api": {"clients": 2, "requests": 3, "generator": "python"}}
RUNNERS = {"engine": bench_engine.run, "import": bench_import.run, "stream": bench_stream_memory.run,
           "api": bench_api.run}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--smoke", action="store_true", help="tiny sizes: shows the benchmarks run")
    parser.add_argument("--only", nargs="+", choices=sorted(RUNNERS), default=list(RUNNERS))
    parser.add_argument("--no-postgres", action="store_true", help="API figures on SQLite only")
    args = parser.parse_args(argv)
    sizes = SMOKE if args.smoke else FULL
    figures: list[Figure] = []
    began = time.perf_counter()
    for name in args.only:
        options = dict(sizes[name])
        if name == "api":
            options["postgres"] = not (args.no_postgres or args.smoke)
        print(f"== {name} {options}", flush=True)
        figures += RUNNERS[name](**options)
    print(f"\n== all figures ({'smoke sizes: not figures to quote' if args.smoke else 'full sizes'}, "
          f"{time.perf_counter() - began:.0f} s)")
    print_table(figures)
    return 0


if __name__ == "__main__":
    sys.exit(main())
