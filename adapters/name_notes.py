"""Warnings about names read as no field: one wording and one rule for every adapter.

Invariants:
- A name (CSV header cell, line key, JSON member) that maps to no field is an
  :class:`adapters.base.InputWarning`, never an error and never silence: the
  rest of its line is read. Unknown → ``unknown_field`` (with the nearest
  known label, if one is close); ambiguous → ``ambiguous_label`` listing the
  fields it could mean; a field of another record (a board's Zdb on a
  circuit's line) → ``other_scope``, saying where it is read.
- :class:`NameNotes` reports each name once per input (the first line that
  carries it), so the account is the same whether the name heads a CSV column
  or recurs on every line of a log. It remembers at most ``limit`` names
  (constant memory); past that, one ``too_many_names`` warning says so and
  later names are not reported one by one.
"""

from __future__ import annotations

from .aliases import Label, suggestion
from .base import InputWarning
from .scopes import Scope, other_scope_reason

__all__ = ["NameNotes", "name_warning"]


def name_warning(name: str, label: Label, *, line: int, pointer: str | None = None,
                 scope: Scope = "circuit") -> InputWarning:
    """The warning for a name that maps to no field of a ``scope`` record (unknown, ambiguous, or a
    field of another scope: ``other_scope``)."""
    if label.field is not None:
        return InputWarning(line=line, code="other_scope", column=name, field=label.field, pointer=pointer,
                            reason=other_scope_reason(name, label, scope))
    if label.ambiguous:
        return InputWarning(
            line=line, code="ambiguous_label", column=name, fields=label.fields, pointer=pointer,
            reason=f"{name!r} {label.why}: its values are not read; name the field instead "
                   f"({', '.join(label.fields)}) or map it in a profile")
    near = suggestion(name)
    hint = f" (did you mean {near!r}?)" if near else ""
    return InputWarning(line=line, code="unknown_field", column=name, pointer=pointer,
                        reason=f"{name!r} is not a field or an alias of one{hint}: its values are not read")


class NameNotes:
    """Remembers which names were already reported in this input."""

    __slots__ = ("_full", "_limit", "_seen")

    def __init__(self, limit: int = 256) -> None:
        self._seen: set[tuple[str, str]] = set()
        self._limit = limit
        self._full = False

    def first(self, warning: InputWarning) -> InputWarning | None:
        """``warning`` if its (code, name) is new in this input, else None."""
        key = (warning.code, warning.column or "")
        if key in self._seen:
            return None
        if len(self._seen) >= self._limit:
            if self._full:
                return None
            self._full = True
            return InputWarning(line=warning.line, code="too_many_names",
                                reason=f"more than {self._limit} different names were read as no "
                                       "field; the later ones are not listed one by one")
        self._seen.add(key)
        return warning
