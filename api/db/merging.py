"""The merge rule for stored records: later wins, per field, whatever the later statement says.

A stored record (a circuit's, a board's or the installation's ``fields`` JSON) holds
values by field name, and two memories the engine writes and reads back: ``rejected``
(field → the text that was refused) and ``marks`` (field → ``N/A`` or ``LIM``).

Invariants (:func:`merge_fields`):
- The latest statement about a field wins, and a field is in exactly one of three
  states afterwards: a value, a refusal, or a mark. A valid value clears an earlier
  refusal or mark; a refusal clears an earlier value (the newest input about the
  field could not be read, so no check may keep judging the older value as if it
  still stood: the check says ``incomplete`` and names the refused text); a mark
  likewise replaces a value or a refusal. Earlier statements stay in the history.
- Fields the later statement does not mention are kept as they were.
- The inputs are not changed; the result is a new dict with ``rejected`` and
  ``marks`` present only when non-empty.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from engine.intake import MARKS_KEY, REJECTED_KEY

__all__ = ["MARKS_KEY", "REJECTED_KEY", "history_entries", "merge_fields"]

_MEMORIES = (REJECTED_KEY, MARKS_KEY)


def merge_fields(current: Mapping[str, Any], incoming: Mapping[str, Any]) -> dict[str, Any]:
    """``current`` with ``incoming`` applied on top (see the module's invariants)."""
    values = {k: v for k, v in current.items() if k not in _MEMORIES}
    memories: dict[str, dict[str, str]] = {key: dict(current.get(key) or {}) for key in _MEMORIES}
    for name, value in incoming.items():
        if name in _MEMORIES:
            continue
        values[name] = value
        for memory in memories.values():
            memory.pop(name, None)
    for key in _MEMORIES:
        for name, text in (incoming.get(key) or {}).items():
            values.pop(name, None)
            for other, memory in memories.items():
                if other != key:
                    memory.pop(name, None)
            memories[key][name] = text
    out = values
    for key, memory in memories.items():
        if memory:
            out[key] = memory
    return out


def history_entries(incoming: Mapping[str, Any]) -> Iterator[tuple[str, Any]]:
    """(field, value as history keeps it) for every statement in ``incoming``: a value as it is,
    a refusal as ``{"rejected": text}``, a mark as ``{"mark": "N/A"}``."""
    for name, value in incoming.items():
        if name not in _MEMORIES:
            yield name, value
    for name, text in (incoming.get(REJECTED_KEY) or {}).items():
        yield name, {"rejected": text}
    for name, mark in (incoming.get(MARKS_KEY) or {}).items():
        yield name, {"mark": mark}
