"""Loose data → typed fields of one record, by a field table: shared by circuit, board and installation.

Invariants:
- Never raises for a bad value: each bad field is one :class:`FieldError`, and
  the good fields beside it are kept, so one bad cell never loses the rest.
- A refused value is remembered, never replaced: ``rejected`` maps the field to
  the text refused. A cell word is remembered as a mark: ``marks`` maps the
  field to ``"N/A"`` or ``"LIM"`` (:mod:`engine.marks`). A stored record's
  ``rejected`` and ``marks`` members are read back, so records round-trip.
- Precedence within one record: a valid value clears a rejection and a mark of
  the same field; a rejection clears a mark.
- A name that is not in the table is an ``unknown_field`` error (the caller may
  pass names it reads itself, such as notation, in ``extra``).
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from dataclasses import dataclass, field
from typing import Any

from .coerce import coerce_spec
from .errors import ReadingError
from .fields import FieldSpec
from .marks import MARKS, MarkedCell, cell_mark

__all__ = ["MARKS_KEY", "REJECTED_KEY", "FieldError", "Intake", "take_fields"]

REJECTED_KEY = "rejected"
MARKS_KEY = "marks"


@dataclass(frozen=True, slots=True, kw_only=True)
class FieldError:
    """One field that could not be taken: which, what it said, and why."""

    field: str
    reason: str
    text: str | None = None
    code: str = "bad_value"

    def as_dict(self) -> dict[str, str]:
        out = {"field": self.field, "code": self.code, "reason": self.reason}
        if self.text is not None:
            out["text"] = self.text
        return out


@dataclass(slots=True)
class Intake:
    """What one record's data gave: typed values, refused texts, marks, and the errors."""

    values: dict[str, Any] = field(default_factory=dict)
    rejected: dict[str, str] = field(default_factory=dict)
    marks: dict[str, str] = field(default_factory=dict)
    errors: list[FieldError] = field(default_factory=list)

    def settle(self) -> None:
        """A value clears a rejection and a mark of its field; a rejection clears a mark."""
        for name in [n for n in self.rejected if n in self.values]:
            del self.rejected[name]
        for name in [n for n in self.marks if n in self.values or n in self.rejected]:
            del self.marks[name]


def take_fields(data: Mapping[str, Any], specs: Mapping[str, FieldSpec], *, keys: Collection[str],
                decimal_comma: bool = False, source: str | None = None,
                extra: Collection[str] = ()) -> Intake:
    """Coerce every member of ``data`` named in ``specs``; ``keys`` are never remembered as refused."""
    out = Intake()
    stored_marks: dict[str, str] = {}
    for name, raw in data.items():
        if name == REJECTED_KEY:
            out.rejected.update(_stored_map(raw, specs, keys, out.errors, name, None))
            continue
        if name == MARKS_KEY:
            stored_marks.update(_stored_map(raw, specs, keys, out.errors, name, MARKS))
            continue
        if name in extra:
            continue
        spec = specs.get(name)
        if spec is None:
            out.errors.append(FieldError(field=name, code="unknown_field", reason=f"unknown field {name!r}"))
            continue
        mark = cell_mark(raw) if name not in keys else None
        if mark is not None:
            out.marks[name] = mark
            continue
        try:
            value = coerce_spec(spec, raw, decimal_comma=decimal_comma, source=source)
        except MarkedCell:  # pragma: no cover - cell_mark saw it first; kept for a new cell word
            out.marks[name] = "LIM"
            continue
        except ReadingError as exc:
            out.errors.append(FieldError(field=name, reason=exc.message, text=exc.text))
            if name not in keys:
                out.rejected[name] = exc.text if exc.text is not None else repr(raw)
            continue
        if value is not None:
            out.values[name] = value
    for name, stored in stored_marks.items():
        out.marks.setdefault(name, stored)
    out.settle()
    return out


def _stored_map(raw: Any, specs: Mapping[str, FieldSpec], keys: Collection[str], errors: list[FieldError],
                member: str, allowed: Collection[str] | None) -> dict[str, str]:
    """A stored record's ``rejected`` or ``marks`` member, checked: known fields mapped to text."""
    what = "the text refused" if allowed is None else "N/A or LIM"
    if not isinstance(raw, Mapping):
        errors.append(FieldError(field=member, reason=f"{member} must map fields to {what}"))
        return {}
    out: dict[str, str] = {}
    for name, text in raw.items():
        if (name not in specs or name in keys or not isinstance(text, str)
                or (allowed is not None and text not in allowed)):
            errors.append(FieldError(field=member, text=str(name),
                                     reason=f"{member}: {name!r} is not a field with {what}"))
            continue
        out[name] = text
    return out
