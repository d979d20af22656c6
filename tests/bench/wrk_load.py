"""The API benchmark's load from wrk (Debian's ``wrk`` package) when it is installed.

``run(...)`` answers the same report as ``tests.bench.loadgen`` (requests, ok,
statuses, wall time, throughput, p50/p99 in ms, readings accepted), so the
benchmark reads either. Why wrk first: the load shares this machine's two cores
with the server, and wrk costs a few microseconds of CPU per request where the
Python generator costs about half a millisecond (measured, README Performance),
which the server would otherwise not get. The Lua script (``wrk_load.lua``)
keeps the closed loop of the Python generator; the run is bounded in time.

Invariants:
- One wrk thread per client, one connection per thread: ``clients`` requests in
  flight at most, each client waits for its answer.
- ``round_no`` (the interleaved round) shifts the readings bodies, so no
  round re-sends a body of an earlier one.
- A run lasts ``seconds``. A request still in flight at the end is not counted;
  the readings it carried are reported (``in_flight_fields``) because the server
  may still have merged them, so the benchmark's loss check can allow for them.
- wrk's percentiles count every answer, not only the 200s; the report's ``ok``
  says whether that difference exists.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path
from typing import Any

__all__ = ["SCRIPT", "available", "run"]

SCRIPT = Path(__file__).with_name("wrk_load.lua")
_MARK = "OHMTALLY-REPORT "


def available() -> bool:
    return shutil.which("wrk") is not None


def run(url: str, mode: str, clients: int, seconds: float, *, path: str, body: Path | None = None,
        jobs: list[int] | None = None, round_no: int = 0) -> dict[str, Any]:
    argv = ["wrk", "-t", str(clients), "-c", str(clients), "-d", f"{max(1, round(seconds))}s",
            "--timeout", "30s", "-s", str(SCRIPT), url, "--", mode, path, str(body or ""),
            ",".join(map(str, jobs or [])), str(round_no)]
    done = subprocess.run(argv, capture_output=True, text=True, check=False, timeout=seconds + 120)
    line = next((ln for ln in done.stdout.splitlines() if ln.startswith(_MARK)), None)
    if line is None:
        raise RuntimeError(f"wrk gave no report (exit {done.returncode}): {done.stdout[-1500:]} "
                           f"{done.stderr[-1500:]}")
    raw = json.loads(line[len(_MARK):])
    wall = raw["duration_us"] / 1e6
    statuses = dict(raw["statuses"])
    if raw["socket_errors"]:
        statuses["0"] = statuses.get("0", 0) + raw["socket_errors"]
    return {
        "mode": mode, "clients": clients, "requests": sum(statuses.values()), "ok": raw["ok"],
        "statuses": statuses, "wall_s": wall, "throughput_per_s": raw["ok"] / wall if wall else 0.0,
        "p50_ms": raw["p50_us"] / 1000, "p99_ms": raw["p99_us"] / 1000,
        "fields_sent": raw["fields_sent"], "in_flight_fields": raw["in_flight_fields"], "generator": "wrk",
    }
