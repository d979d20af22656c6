"""Merging an adapter's fragments into circuit records.

Invariants:
- Fragments for the same ``(board, circuit)`` merge field by field, later
  fragments winning, in input order; records come out in first-seen order.
- A refused cell is merged like a value: the record's ``rejected`` holds the
  text refused for each field whose latest cell was refused (a later valid
  value clears it; a later refusal drops an earlier value and marks it
  again), so no check takes a default in a refused value's place.
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


def _merge(values: dict[str, Any], rejected: dict[str, str], fragment: Fragment) -> None:
    """``fragment`` over what came before: its values and its refusals each win, field by field."""
    for name, value in fragment.fields.items():
        values[name] = value
        rejected.pop(name, None)
    for name, text in fragment.rejected.items():
        rejected[name] = text
        values.pop(name, None)


def _record(key: tuple[str, str], values: dict[str, Any], rejected: dict[str, str]) -> CircuitRecord:
    return CircuitRecord(board=key[0], circuit=key[1], **values, rejected=dict(rejected))


def collect(results: Iterable[Result]) -> Collected:
    """All fragments merged per circuit; errors and skips counted."""
    merged: dict[tuple[str, str], tuple[dict[str, Any], dict[str, str]]] = {}
    out = Collected()
    for result in results:
        if isinstance(result, Fragment):
            values, rejected = merged.setdefault(result.key, ({}, {}))
            _merge(values, rejected, result)
            out.fragments += 1
            out._fragment_lines.add(result.line)
        elif isinstance(result, LineError):
            out.errors.append(result)
        elif isinstance(result, Skipped):
            out.skipped += 1
        elif isinstance(result, InputWarning):
            out.warnings.append(result)
    out.records = [_record(key, values, rejected) for key, (values, rejected) in merged.items()]
    return out


def iter_records(results: Iterable[Result], errors: list[LineError] | None = None,
                 warnings: list[InputWarning] | None = None) -> Iterator[CircuitRecord]:
    """Constant-memory merge: consecutive fragments of one circuit become one record.

    For inputs too large to hold (a year's export): a circuit split across
    non-adjacent rows comes out as two records, the later winning downstream.
    """
    key: tuple[str, str] | None = None
    values: dict[str, Any] = {}
    rejected: dict[str, str] = {}
    for result in results:
        if isinstance(result, Fragment):
            if result.key != key:
                if key is not None:
                    yield _record(key, values, rejected)
                key, values, rejected = result.key, {}, {}
            _merge(values, rejected, result)
        elif isinstance(result, LineError) and errors is not None:
            errors.append(result)
        elif isinstance(result, InputWarning) and warnings is not None:
            warnings.append(result)
    if key is not None:
        yield _record(key, values, rejected)
