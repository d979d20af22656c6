"""``python -m tests.bench [--smoke] [--only NAME…] [--no-postgres] [--rounds N] [--markdown]``.

Every benchmark, then one table of every figure.

``make bench`` runs this at full size (11 to 14 minutes on two cores). Each
figure is measured in interleaved rounds against a baseline of the same run
(``tests/bench/README.md``: why and how). ``--smoke`` runs every benchmark on
tiny inputs with two rounds, in seconds, to show they still run (CI); its
figures mean nothing, it always uses the Python load generator (CI needs no
wrk) and no PostgreSQL. The servers are started once for the whole run.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from . import (
    bench_api,
    bench_engine,
    bench_import,
    bench_posts,
    bench_size,
    bench_stream_memory,
    bench_verify_cli,
)
from .common import Figure, machine, print_table
from .servers import Stack

__all__ = ["FULL", "SMOKE", "main"]

# Full sizes. Trimmed where a target allows (tests/bench/README.md says why): the full view's import at
# 20,000 rows (not a target), the stream at 200,000 rows (its memory is flat from the first boards on).
FULL: dict[str, dict[str, Any]] = {
    "engine": {"circuits": 10_000, "rounds": 5},
    "verify": {"circuits": 20_000, "rounds": 5},
    "import": {"rows": 20_000, "compact_rows": 100_000, "rounds": 5},
    "size": {"circuits": 960},
    "posts": {"big": 10_000, "small": 50, "rounds": 5, "posts": 2},
    "api": {"clients": 16, "requests": 40, "seconds": 5.0, "rounds": 5},
    "stream": {"rows": 200_000},
}
SMOKE: dict[str, dict[str, Any]] = {
    "engine": {"circuits": 150, "rounds": 2},
    "verify": {"circuits": 100, "rounds": 2},
    "import": {"rows": 100, "compact_rows": 200, "rounds": 2},
    "size": {"circuits": 60},
    "posts": {"big": 200, "small": 50, "rounds": 2, "posts": 1},
    "api": {"clients": 2, "requests": 2, "rounds": 2, "generator": "python"},
    "stream": {"rows": 1_000},
}
Runner = Callable[[dict[str, Any], Stack, bool], list[Figure]]
RUNNERS: dict[str, Runner] = {
    "engine": lambda o, _s, _pg: bench_engine.run(**o),
    "verify": lambda o, _s, _pg: bench_verify_cli.run(**o),
    "import": lambda o, _s, _pg: bench_import.run(**o),
    "size": lambda o, s, _pg: bench_size.run(**o, stack=s),
    "posts": lambda o, s, pg: bench_posts.run(**o, stack=s, postgres=pg),
    "api": lambda o, s, pg: bench_api.run(**o, stack=s, postgres=pg),
    "stream": lambda o, _s, _pg: bench_stream_memory.run(**o),
}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--smoke", action="store_true", help="tiny sizes: shows the benchmarks run")
    parser.add_argument("--only", nargs="+", choices=list(RUNNERS), default=list(RUNNERS))
    parser.add_argument("--no-postgres", action="store_true", help="HTTP figures on SQLite only")
    parser.add_argument("--rounds", type=int, help="interleaved rounds for every benchmark that has them")
    parser.add_argument("--markdown", action="store_true", help="the final table in Markdown")
    args = parser.parse_args(argv)
    sizes = SMOKE if args.smoke else FULL
    postgres = not (args.no_postgres or args.smoke)
    figures: list[Figure] = []
    began = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="ohmtally-bench-") as folder, \
            Stack(Path(folder), postgres=postgres) as stack:
        for name in args.only:
            options = dict(sizes[name])
            if args.rounds and "rounds" in options:
                options["rounds"] = args.rounds
            print(f"== {name} {options}", flush=True)
            took = time.perf_counter()
            figures += RUNNERS[name](options, stack, postgres)
            print(f"== {name}: {time.perf_counter() - took:.0f} s", flush=True)
    kind = "smoke sizes: not figures to quote" if args.smoke else "full sizes"
    print(f"\n== all figures ({kind}, {time.perf_counter() - began:.0f} s); {machine()}")
    print_table(figures, markdown=args.markdown)
    return 0


if __name__ == "__main__":
    sys.exit(main())
