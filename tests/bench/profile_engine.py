"""Where the engine's time goes: cProfile over ``verify`` + ``as_dict`` of the synthetic set.

Run: ``python -m tests.bench.profile_engine [--circuits 2000] [--top 20]``.

Prints, as shares of the profiled total (profiling slows every call, so read
shares, not times): each check family's cumulative time (its ``run`` in
``engine/checks/<family>.py``), ``Verdict.as_dict``'s, the own time of each
engine module, and the functions with the most own time. The collector is
paused, as ``ohmtally verify`` runs. For a call tree instead, pyinstrument (a
dev dependency) runs the same work: ``pyinstrument -m tests.bench.profile_engine``.
"""

from __future__ import annotations

import argparse
import cProfile
import gc
import pstats
import sys
from collections import defaultdict
from pathlib import Path
from typing import Any

from engine import verify

from . import synthetic

__all__ = ["main", "profile"]

ROOT = Path(__file__).resolve().parents[2]
Key = tuple[str, int, str]


def _where(key: Key) -> str:
    filename, line, name = key
    path = Path(filename)
    try:
        shown = str(path.resolve().relative_to(ROOT))
    except ValueError:
        shown = path.name if filename.startswith("<") else f"…/{path.parent.name}/{path.name}"
    return f"{shown}:{line} {name}"


def profile(circuits: int) -> tuple[float, dict[Key, Any]]:
    """(profiled total seconds, pstats' raw table) of verify + as_dict over ``circuits`` records."""
    records = synthetic.records(circuits)
    verify(records[:50])  # ruleset and tables loaded outside the profile
    profiler = cProfile.Profile()
    gc.collect()
    gc.disable()
    try:
        profiler.enable()
        [v.as_dict() for v in verify(records)]
        profiler.disable()
    finally:
        gc.enable()
    stats = pstats.Stats(profiler)
    table: dict[Key, Any] = stats.stats  # type: ignore[attr-defined]
    return stats.total_tt, table  # type: ignore[attr-defined]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=2_000)
    parser.add_argument("--top", type=int, default=20)
    args = parser.parse_args(argv)
    total, table = profile(args.circuits)
    print(f"profiled verify + as_dict of {args.circuits:,} circuits: {total:.2f} s under cProfile")

    def share(seconds: float) -> str:
        return f"{100 * seconds / total:5.1f} %"

    print("\ncheck families, cumulative (engine/checks/<family>.py run):")
    families = sorted(((ct, Path(k[0]).stem) for k, (_, _, _, ct, _) in table.items()
                       if k[2] == "run" and Path(k[0]).parent.name == "checks"), reverse=True)
    for ct, family in families:
        print(f"  {share(ct)}  {family}")
    # the outermost as_dict (the verdict's) holds the nested ones (each check's): the largest cumulative
    as_dict = max((ct for k, (_, _, _, ct, _) in table.items() if k[2] == "as_dict"), default=0.0)
    verify_ct = sum(ct for k, (_, _, _, ct, _) in table.items()
                    if k[2] == "verify" and k[0].endswith("engine/verify.py"))
    print(f"\n  {share(verify_ct)}  engine.verify (cumulative)")
    print(f"  {share(as_dict)}  Verdict.as_dict (cumulative)")
    modules: dict[str, float] = defaultdict(float)
    for key, (_, _, tt, _, _) in table.items():
        modules[_where(key).split(":", 1)[0]] += tt
    print("\nown time by module:")
    for module, tt in sorted(modules.items(), key=lambda m: -m[1])[:args.top]:
        print(f"  {share(tt)}  {module}")
    print("\nfunctions by own time (calls):")
    for key, (_, calls, tt, _, _) in sorted(table.items(), key=lambda kv: -kv[1][2])[:args.top]:
        print(f"  {share(tt)}  {calls:>9,}  {_where(key)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
