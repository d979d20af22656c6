"""``ohmtally capture --show``: what a spool holds, for the person deciding whether to replay.

Invariants: read-only (the spool is opened ``mode=ro``); shows every rejected
and unsent line in full, with the server's code and reason, and only a count of
the sent ones.
"""

from __future__ import annotations

import json
import sys
from datetime import UTC, datetime
from typing import IO

from .spool import LINE_REJECTED, REJECTED, UNSENT, Spool

__all__ = ["show_spool"]


def _when(ts: float) -> str:
    return datetime.fromtimestamp(ts, UTC).strftime("%Y-%m-%d %H:%M:%S UTC")


def show_spool(spool: Spool, *, as_json: bool = False, stream: IO[str] | None = None) -> None:
    out = stream or sys.stdout
    meta = spool.meta()
    counts = spool.counts()
    waiting = spool.rows(states=[REJECTED, LINE_REJECTED, UNSENT])
    if as_json:
        doc = {"spool": str(spool.path), "job": meta.get("job"), "api": meta.get("api"),
               "spool_id": meta.get("spool_id"), "counts": counts.as_dict(),
               "lines": [{"id": r.id, "state": r.state, "text": r.text, "read_at": _when(r.read_at),
                          "batch": r.batch, "code": r.code, "reason": r.reason, "context": r.ctx_before}
                         for r in waiting],
               "events": spool.events()}
        out.write(json.dumps(doc, indent=2) + "\n")
        return
    print(f"spool {spool.path}\n  job {meta.get('job')} on {meta.get('api')} "
          f"(spool id {meta.get('spool_id')})", file=out)
    print(f"  {counts.total} line(s): {counts.sent} sent, {counts.unsent} unsent, "
          f"{counts.rejected} rejected with their batch, {counts.line_rejected} rejected by line; "
          f"{counts.discarded_partials} partial line(s) discarded at a disconnect", file=out)
    for row in waiting:
        why = f"  [{row.code}: {row.reason}]" if row.code else ""
        print(f"  #{row.id} {row.state:13} {_when(row.read_at)}  {row.text}{why}", file=out)
    for ev in spool.events(limit=10):
        print(f"  event {_when(ev['at'])} {ev['kind']} {ev['detail']}", file=out)
    if counts.rejected or counts.line_rejected or counts.unsent:
        print("  to re-send the rejected and unsent lines: ohmtally capture --spool "
              f"{spool.path} --replay [--profile NAME]", file=out)
