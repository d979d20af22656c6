"""Refused values carried by our own interchange: a neutral CSV's ``rejected`` column or long-layout test.

A record remembers the text of each value refused at intake (``CircuitRecord.rejected``).
The neutral CSV (:mod:`adapters.neutral_csv`) writes them as ``field=text`` pairs in
the line format's spelling, and the ``csv`` adapter reads them back here, so a
refusal survives a round trip and no default takes its place afterwards.

Invariants:
- Pure; never raises. :func:`parse_rejected` returns the pairs it could take
  and one problem per pair it could not (a name that is not a field of the
  circuit record, ``board``/``circuit``, or text that is not ``key=value``).
- Names are the record's own field names, exactly: a carried rejection is
  stored data, not a label a person typed, so no alias is read here.
"""

from __future__ import annotations

from collections.abc import Collection

from engine import FIELDS

from .line_format import parse_pairs

__all__ = ["REJECTED_LABEL", "parse_rejected"]

REJECTED_LABEL = "rejected"  # the column (wide) or test (long) name, matched folded


def parse_rejected(text: str, allowed: Collection[str] = FIELDS
                   ) -> tuple[dict[str, str], list[tuple[str, str]]]:
    """``"test_temp_c=-300 zs_ohm=abc"`` → ``({field: text}, [(the bad part, why)])``; ``allowed``
    are the fields of the record at hand (a circuit's by default)."""
    parsed = parse_pairs(text.strip())
    problems: list[tuple[str, str]] = []
    if parsed.problem:
        problems.append((text[:200], f"rejected: {parsed.problem}; write field=text pairs"))
    taken: dict[str, str] = {}
    for name, refused in parsed.pairs:
        if name not in allowed or name in ("board", "circuit"):
            problems.append((name[:200], f"rejected: {name!r} is not a field of the record"))
            continue
        taken[name] = refused
    return taken, problems
