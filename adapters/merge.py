"""Merging what several lines say about one record: later wins, field by field, refusals and marks too.

One circuit, board or the installation may be given on many lines (a logger
writes a reading per line; a retest repeats a row). :class:`Merged` keeps, per
field, what the latest line said — a value, a refusal or a mark — and the line
that said it, and builds the record with the engine's own builder.

Invariants:
- A field is in at most one of ``values``, ``rejected`` and ``marks``: the
  later line's word wins (a valid value clears a refusal and a mark; a later
  refusal drops an earlier value and marks it again; a later ``N/A`` or
  ``LIM`` drops both).
- A notation (``device``, ``cable``, ``rcd``) restates what it gives: a later
  notation drops what earlier lines said of the split fields it sets (all
  those it stands for, :data:`engine.record_notation.NOTATION_SPLIT`, when it
  is ``N/A`` or ``LIM``). Split fields
  given beside it on the same line, or later, are handed to the engine with
  it, which accepts them where they agree and refuses both where they do not
  (``notation_conflict``): never a guess which was meant.
- Building never raises: each ``FieldError`` the engine returns becomes a
  :class:`LineError` on the line that last gave that field.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, TypeVar

from engine import CircuitRecord, FieldError, build_record, cell_mark
from engine.intake import MARKS_KEY, REJECTED_KEY
from engine.record_notation import NOTATION_INPUTS, NOTATION_SPLIT, notation_values

from .base import LineError

__all__ = ["Merged", "build_circuit", "build_merged"]

R = TypeVar("R")


@dataclass(slots=True)
class Merged:
    values: dict[str, Any] = field(default_factory=dict)
    rejected: dict[str, str] = field(default_factory=dict)
    marks: dict[str, str] = field(default_factory=dict)
    lines: dict[str, int] = field(default_factory=dict)  # field -> the line that last spoke of it
    first_line: int = 0

    def add(self, fields: Mapping[str, Any], rejected: Mapping[str, str], marks: Mapping[str, str],
            line: int) -> None:
        """One line's word on the record, over what earlier lines said."""
        if not self.first_line:
            self.first_line = line
        for name in fields.keys() & NOTATION_INPUTS:  # a notation restates what it gives
            for split in _restated(name, fields[name]):
                self.values.pop(split, None)
                self.rejected.pop(split, None)
                self.marks.pop(split, None)
        for name, value in fields.items():
            self.values[name] = value
            self.rejected.pop(name, None)
            self.marks.pop(name, None)
            self.lines[name] = line
        for name, text in rejected.items():
            self.rejected[name] = text
            self.values.pop(name, None)
            self.marks.pop(name, None)
            self.lines[name] = line
        for name, mark in marks.items():
            self.marks[name] = mark
            self.values.pop(name, None)
            self.rejected.pop(name, None)
            self.lines[name] = line

    def data(self) -> dict[str, Any]:
        """What the lines gave, as data for the engine's builders (its ``rejected`` and ``marks`` too)."""
        out: dict[str, Any] = dict(self.values)
        if self.rejected:
            out[REJECTED_KEY] = dict(self.rejected)
        if self.marks:
            out[MARKS_KEY] = dict(self.marks)
        return out

    def line_of(self, name: str) -> int:
        return self.lines.get(name, self.first_line)


def _restated(name: str, text: Any) -> tuple[str, ...]:
    """The split fields a notation's text gives: those it sets, or all it stands for if it is N/A or LIM."""
    if cell_mark(text) is not None:
        return NOTATION_SPLIT[name]
    return tuple(notation_values({name: str(text)})[0])


def build_merged(merged: Merged, keys: Mapping[str, str],
                 builder: Callable[[Mapping[str, Any]], tuple[R | None, list[FieldError]]],
                 errors: list[LineError] | None) -> R | None:
    """The record ``builder`` makes of ``keys`` and the merged data; its errors go to ``errors``."""
    record, problems = builder({**keys, **merged.data()})
    if errors is not None:
        errors.extend(LineError(line=merged.line_of(p.field), code=p.code, field=p.field, text=p.text,
                                reason=p.reason) for p in problems)
    return record


def build_circuit(merged: Merged, board: str, circuit: str, errors: list[LineError] | None
                  ) -> CircuitRecord | None:
    """A circuit record: by :func:`engine.build_record` when it holds notation to read; else made
    directly, since its values are already what the engine's rule gives (the cells were coerced by it)
    and its refusals and marks are settled — the same record, without coercing every value twice."""
    if NOTATION_INPUTS.isdisjoint(merged.values):
        return CircuitRecord(board=board, circuit=circuit, **merged.values, rejected=dict(merged.rejected),
                             marks=dict(merged.marks))
    return build_merged(merged, {"board": board, "circuit": circuit}, build_record, errors)
