"""Merging an adapter's fragments into circuit records.

Invariants:
- Fragments for the same ``(board, circuit)`` merge field by field, later
  fragments winning, in input order; records come out in first-seen order.
- Errors and skipped lines are counted and kept with their line numbers, so a
  caller can report every line it was given; warnings (names read as no
  field) are kept beside them, in input order.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import Any

from engine import CircuitRecord

from .base import Fragment, InputWarning, LineError, Result, Skipped

__all__ = ["Collected", "collect", "iter_records"]


@dataclass(slots=True)
class Collected:
    records: list[CircuitRecord] = field(default_factory=list)
    errors: list[LineError] = field(default_factory=list)
    warnings: list[InputWarning] = field(default_factory=list)
    fragments: int = 0
    skipped: int = 0

    @property
    def lines(self) -> int:
        """Lines accounted for (a line with good cells and a bad one counts once, as a fragment)."""
        error_only = len({e.line for e in self.errors} - self._fragment_lines)
        return self.fragments + self.skipped + error_only

    _fragment_lines: set[int] = field(default_factory=set, repr=False)


def _record(key: tuple[str, str], values: dict[str, Any]) -> CircuitRecord:
    return CircuitRecord(board=key[0], circuit=key[1], **values)


def collect(results: Iterable[Result]) -> Collected:
    """All fragments merged per circuit; errors and skips counted."""
    merged: dict[tuple[str, str], dict[str, Any]] = {}
    out = Collected()
    for result in results:
        if isinstance(result, Fragment):
            merged.setdefault(result.key, {}).update(result.fields)
            out.fragments += 1
            out._fragment_lines.add(result.line)
        elif isinstance(result, LineError):
            out.errors.append(result)
        elif isinstance(result, Skipped):
            out.skipped += 1
        elif isinstance(result, InputWarning):
            out.warnings.append(result)
    out.records = [_record(key, values) for key, values in merged.items()]
    return out


def iter_records(results: Iterable[Result], errors: list[LineError] | None = None,
                 warnings: list[InputWarning] | None = None) -> Iterator[CircuitRecord]:
    """Constant-memory merge: consecutive fragments of one circuit become one record.

    For inputs too large to hold (a year's export): a circuit split across
    non-adjacent rows comes out as two records, the later winning downstream.
    """
    key: tuple[str, str] | None = None
    values: dict[str, Any] = {}
    for result in results:
        if isinstance(result, Fragment):
            if result.key != key:
                if key is not None:
                    yield _record(key, values)
                key, values = result.key, {}
            values.update(result.fields)
        elif isinstance(result, LineError) and errors is not None:
            errors.append(result)
        elif isinstance(result, InputWarning) and warnings is not None:
            warnings.append(result)
    if key is not None:
        yield _record(key, values)
