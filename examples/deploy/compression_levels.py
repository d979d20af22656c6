"""Measure response compression on real verdicts answers: bytes and CPU time per algorithm and level.

Run from a checkout (``.venv/bin/python examples/deploy/compression_levels.py``): it builds
the ``POST /v1/verify`` answer for 48 and 500 invented circuits (``tests.bench.synthetic``,
load, not evidence) through the app itself and compresses each with gzip, brotli and zstd
at every level. Give answer files instead (``… answer.json``) to measure your own jobs.
The figures behind ``api/http/compression.py``'s choice came from this script.
"""

from __future__ import annotations

import gzip
import itertools
import json
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import brotli
from backports import zstd

LEVELS: dict[str, tuple[Callable[[bytes, int], bytes], range]] = {
    "gzip": (lambda data, level: gzip.compress(data, compresslevel=level, mtime=0), range(1, 10)),
    "br": (lambda data, level: brotli.compress(data, quality=level), range(0, 12)),
    "zstd": (lambda data, level: zstd.compress(data, level=level), range(1, 20)),
}


def cpu_ms(compress: Callable[[bytes, int], bytes], data: bytes, level: int) -> tuple[int, float]:
    """(compressed bytes, median process CPU time in ms over enough runs to last ~0.2 s)."""
    size = len(compress(data, level))
    times: list[float] = []
    deadline = time.perf_counter() + 0.2
    while len(times) < 3 or (time.perf_counter() < deadline and len(times) < 50):
        start = time.process_time()
        compress(data, level)
        times.append((time.process_time() - start) * 1000)
    times.sort()
    return size, times[len(times) // 2]


def synthetic_answers() -> Iterator[tuple[str, bytes]]:
    root = Path(__file__).resolve().parents[2]
    sys.path.insert(0, str(root))
    from api.app import create_app  # a checkout's app: imported here, the script runs without it too
    from tests.bench.synthetic import rows

    app = create_app(_scratch_settings())
    client = app.test_client()
    for count in (48, 500):
        circuits = list(itertools.islice(rows(count), count))
        answer = client.post("/v1/verify", json={"circuits": circuits})
        assert answer.status_code == 200, answer.get_data()[:300]
        yield f"{count} circuits", answer.get_data()


def _scratch_settings() -> dict[str, str]:
    from api.db.schema import upgrade  # from the checkout put on sys.path above

    folder = tempfile.mkdtemp(prefix="ohmtally-compression-")
    url = f"sqlite:///{folder}/ohmtally.sqlite3"
    upgrade(url)
    return {"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "ERROR",
            "OHMTALLY_INSTANCE_PATH": folder}


def main(argv: list[str]) -> int:
    answers = ([(name, Path(name).read_bytes()) for name in argv] if argv else list(synthetic_answers()))
    for name, data in answers:
        json.loads(data)  # a JSON answer, not an error page
        print(f"\n{name}: {len(data):,} bytes uncompressed")
        print(f"{'algorithm':>9} {'level':>5} {'bytes':>9} {'ratio':>6} {'cpu ms':>8}")
        for algorithm, (compress, levels) in LEVELS.items():
            for level in levels:
                size, ms = cpu_ms(compress, data, level)
                print(f"{algorithm:>9} {level:>5} {size:>9,} {len(data) / size:>6.1f} {ms:>8.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
