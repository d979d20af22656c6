"""What the cells of one line, row or object gave: values, refusals, marks and errors — one rule for all.

Every adapter parses cells with :class:`adapters.cells.CellParser` and hands the
outcomes to a :class:`RowValues`, so a refused cell, an ``N/A``, an unreadable
notation or a field given twice mean the same in CSV, lines and JSON.

Invariants:
- A field is in at most one of ``fields``, ``rejected`` and ``marks``; the
  later cell of the row wins (a field given twice is refused by the caller
  before it gets here, with :meth:`RowValues.refuse_twice`).
- A refused cell is a :class:`LineError` (with the line, field, column or
  pointer and the text) **and** an entry in ``rejected`` (field → the text as
  written), so the record remembers it and no default stands in for it.
- An unreadable notation (``device=B3X``) is a ``bad_notation`` error for the
  notation and, as :func:`engine.build_record` does with the same data, its
  split fields that the row does not give otherwise are remembered as refused.
- ``N/A`` and ``LIM`` are remembered in ``marks``, never as a value or an error.
- A stored record's own ``rejected`` and ``marks`` (carried) stand only where
  the row gives nothing else for the field, as :func:`engine.build_record`
  settles them (a value clears a refusal and a mark; a refusal clears a mark).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .base import LineError
from .cells import CellMark, CellProblem

__all__ = ["RowValues"]


@dataclass(slots=True)
class RowValues:
    line: int
    fields: dict[str, Any] = field(default_factory=dict)
    rejected: dict[str, str] = field(default_factory=dict)
    marks: dict[str, str] = field(default_factory=dict)
    errors: list[LineError] = field(default_factory=list)
    # a stored record's own refusals and marks (its "rejected" and "marks"): they stand where the row
    # gives nothing else for the field
    carried: dict[str, str] = field(default_factory=dict)
    carried_marks: dict[str, str] = field(default_factory=dict)
    _covers: list[tuple[tuple[str, ...], str]] = field(default_factory=list)

    def add(self, name: str, raw: Any, value: Any, *, column: str | None = None,
            pointer: str | None = None) -> None:
        """One cell's outcome (what :meth:`adapters.cells.CellParser.parse` gave for ``raw``)."""
        if value is None:
            return
        self.fields.pop(name, None)
        self.rejected.pop(name, None)
        self.marks.pop(name, None)
        kind = type(value)
        if kind is CellMark:
            self.marks[name] = value.mark
        elif kind is CellProblem:
            text = value.text if value.text is not None else str(raw)
            self.errors.append(LineError(line=self.line, code=value.code, field=name, column=column,
                                         pointer=pointer, text=value.text, reason=value.reason))
            if value.covers:
                self._covers.append((value.covers, text))
            else:
                self.rejected[name] = text
        else:
            self.fields[name] = value

    def refuse(self, name: str, text: str) -> None:
        """Remember ``name`` as refused with ``text`` (the caller reports why)."""
        self.fields.pop(name, None)
        self.marks.pop(name, None)
        self.rejected[name] = text

    def refuse_twice(self, name: str, first: str, again: str, error: LineError) -> None:
        """A field given twice: neither value is taken; both texts are remembered."""
        self.errors.append(error)
        self.refuse(name, f"{self.rejected.get(name, first)} | {again}")

    def finish(self) -> RowValues:
        """Settle what stands where the row gave nothing: the split fields of a refused notation are
        refused too, then carried refusals, then carried marks."""
        for covers, text in self._covers:
            for split in covers:
                if not self._given(split):
                    self.rejected[split] = text
        self._covers.clear()
        for name, text in self.carried.items():
            if not self._given(name):
                self.rejected[name] = text
        for name, mark in self.carried_marks.items():
            if not self._given(name):
                self.marks[name] = mark
        self.carried, self.carried_marks = {}, {}
        return self

    def _given(self, name: str) -> bool:
        return name in self.fields or name in self.rejected or name in self.marks

    @property
    def taken(self) -> bool:
        """Whether the row gave anything for the record: a value, a refusal or a mark."""
        return bool(self.fields or self.rejected or self.marks)
