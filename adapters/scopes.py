"""Which record a name belongs to: a circuit, a board, or the installation.

Circuits inherit what is recorded once for their board or for the installation
(:mod:`engine.site`). An input states such facts on its own lines, rows or
objects (adapters/README.md, "Installation and boards"); this module says
whether a name is read in the record at hand.

Invariants:
- A name is read in a scope only if its field is in that scope's table
  (:data:`engine.FIELDS` and the notation inputs for a circuit,
  :data:`engine.BOARD_FIELDS` for a board, :data:`engine.INSTALLATION_FIELDS`
  for the installation) and its label is not tied to another scope
  (``PFC at board`` is a board's PFC, never a circuit's).
- A name that belongs to another scope is never moved there: it is read as no
  field of this record, a warning (``other_scope``) saying where it is read,
  exactly as an unknown name is (:mod:`adapters.name_notes`).
"""

from __future__ import annotations

from typing import Final, Literal

from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS
from engine.record_notation import NOTATION_INPUTS

from .aliases import Label

__all__ = ["SCOPE_NAMES", "Scope", "in_scope", "other_scope_reason"]

Scope = Literal["circuit", "board", "installation"]

SCOPE_NAMES: Final[dict[str, frozenset[str]]] = {
    "circuit": frozenset(FIELDS) | NOTATION_INPUTS,
    "board": frozenset(BOARD_FIELDS),
    "installation": frozenset(INSTALLATION_FIELDS),
}
_WHAT = {"circuit": "a circuit's field", "board": "a board fact", "installation": "an installation fact"}
_HERE = {"circuit": "a circuit's line, row or record", "board": "a board's line, row or object",
         "installation": "the installation's line, row or object"}
_WHERE = {
    "circuit": "give the circuit, circuit=…, to record it for a circuit",
    "board": "state it on a line naming the board and no circuit, in a board sheet or in 'boards'",
    "installation": "state it on an 'installation' line, in an installation sheet or in 'installation'",
}
_HINTS = {
    ("ze_ohm", "board"): "; a board's own loop impedance is Zdb (zdb)",
    ("zdb_ohm", "circuit"): "; a circuit sees its board's Zdb as Ze",
}


def in_scope(label: Label, scope: Scope) -> bool:
    """Whether ``label`` names a field read in a ``scope`` record."""
    return (label.field is not None and label.field in SCOPE_NAMES[scope]
            and (label.scope is None or label.scope == scope))


def _owner(label: Label, scope: Scope) -> Scope:
    if label.scope is not None:
        return label.scope  # type: ignore[return-value]  # one of the scope names, by construction
    for other in ("board", "installation", "circuit"):
        if other != scope and label.field in SCOPE_NAMES[other]:
            return other
    return scope


def other_scope_reason(name: str, label: Label, scope: Scope) -> str:
    """Why ``name`` is not read in a ``scope`` record, and where it would be."""
    owner = _owner(label, scope)
    hint = _HINTS.get((label.field or "", scope), "")
    return (f"{name!r} names {label.field}, {_WHAT[owner]}, which is not read on {_HERE[scope]}: "
            f"{_WHERE[owner]}{hint}")
