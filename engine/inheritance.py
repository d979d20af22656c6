"""What each circuit inherits from its board and the installation: resolved once per board, then per circuit.

A circuit's value comes from the circuit, else its board, else the installation,
else the ruleset default (the default is :class:`engine.context.CircuitView`'s).
This module writes the inherited values onto a copy of each record, so every
check, the plausibility judgement and every board-level computation see one
*effective* record, and says where each came from (field → ``"board DB2"`` /
``"installation"``).

Invariants:
- Pure, and cheap: a board's plan is computed once per board, applying it is
  one ``dataclasses.replace`` per circuit that inherits anything; a call
  without a site returns the records untouched.
- Precedence per field: the circuit's own value or refused text; else the
  board's (mapped by :data:`engine.site.BOARD_TO_CIRCUIT`: a board's ``zdb_ohm``
  is its circuits' ``ze_ohm``); else the installation's
  (:data:`engine.site.INSTALLATION_TO_CIRCUIT`), whose Ze and PFC reach only the
  circuits of boards at the origin and whose RA only boards earthed as the
  installation is.
- **Rejected is never replaced**: a refused board or installation value is
  inherited as refused (the checks needing it are ``incomplete``, naming the
  text and where it was refused); nothing below it, and no default, fills in.
- A mark (``N/A``, ``LIM``) is an absence, not a value: it does not stop a value
  from below (a circuit's ``N/A`` Ze takes its board's Zdb); where nothing
  gives a value, the first mark found is inherited, with where it was written.
- A board is **at the origin** when neither its board record nor any of its
  circuits names a feeder (``board_fed_from``). A feeder that was refused or
  marked ``LIM`` is unknown, so such a board is not taken to be at the origin.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from .marks import LIMITATION
from .records import CircuitRecord
from .site import (
    BOARD_TO_CIRCUIT,
    INSTALLATION_TO_CIRCUIT,
    ORIGIN_ONLY,
    SAME_EARTHING_ONLY,
    BoardRecord,
    InstallationRecord,
    Site,
)

__all__ = ["INSTALLATION", "BoardPlan", "board_plan", "board_source", "inherit", "site_field"]

INSTALLATION = "installation"
_CIRCUIT_FROM_BOARD = {circuit: board for board, circuit in BOARD_TO_CIRCUIT.items()}
_CIRCUIT_FROM_INSTALLATION = {circuit: inst for inst, circuit in INSTALLATION_TO_CIRCUIT.items()}
_INHERITABLE = tuple(dict.fromkeys((*BOARD_TO_CIRCUIT.values(), *INSTALLATION_TO_CIRCUIT.values())))
_NOTHING: Mapping[str, str] = {}


def board_source(board: str) -> str:
    """How a verdict names a value that came from a board's record."""
    return f"board {board}"


def site_field(circuit_field: str, source: str) -> str:
    """The board or installation field a circuit field was inherited from (``ze_ohm`` ← ``zdb_ohm``)."""
    table = _CIRCUIT_FROM_INSTALLATION if source == INSTALLATION else _CIRCUIT_FROM_BOARD
    return table.get(circuit_field, circuit_field)


@dataclass(frozen=True, slots=True, kw_only=True)
class BoardPlan:
    """What every circuit of one board inherits: circuit field → (value, source), refused text, mark."""

    values: Mapping[str, tuple[Any, str]] = field(default_factory=dict)
    rejected: Mapping[str, tuple[str, str]] = field(default_factory=dict)
    marks: Mapping[str, tuple[str, str]] = field(default_factory=dict)

    def __bool__(self) -> bool:
        return bool(self.values or self.rejected or self.marks)


def _at_origin(board: BoardRecord | None, records: Iterable[CircuitRecord]) -> bool:
    if board is not None:
        if board.board_fed_from or "board_fed_from" in board.rejected:
            return False
        if board.marks.get("board_fed_from") == LIMITATION:
            return False
    return not any(r.board_fed_from or "board_fed_from" in r.rejected for r in records)


def _level(record: BoardRecord | InstallationRecord, name: str) -> tuple[str, Any] | None:
    """What one record says of one of its fields: a value, a refused text, a mark, or nothing."""
    value = getattr(record, name)
    if value is not None:
        return "value", value
    if name in record.rejected:
        return "rejected", record.rejected[name]
    if name in record.marks:
        return "mark", record.marks[name]
    return None


def board_plan(board: str, records: Iterable[CircuitRecord], site: Site) -> BoardPlan:
    """What the circuits of ``board`` inherit, given the board's circuit records (for its feeder)."""
    own = site.boards.get(board)
    installation = site.installation
    origin = _at_origin(own, records)
    values: dict[str, tuple[Any, str]] = {}
    rejected: dict[str, tuple[str, str]] = {}
    marks: dict[str, tuple[str, str]] = {}
    for name in _INHERITABLE:
        levels: list[tuple[BoardRecord | InstallationRecord, str, str]] = []
        if own is not None and name in _CIRCUIT_FROM_BOARD:
            levels.append((own, _CIRCUIT_FROM_BOARD[name], board_source(board)))
        if installation is not None and name in _CIRCUIT_FROM_INSTALLATION:
            inst_name = _CIRCUIT_FROM_INSTALLATION[name]
            if _installation_reaches(inst_name, origin, own, installation):
                levels.append((installation, inst_name, INSTALLATION))
        for record, site_name, source in levels:
            found = _level(record, site_name)
            if found is None:
                continue
            kind, value = found
            if kind == "value":
                values[name] = (value, source)
                break
            if kind == "rejected":
                rejected[name] = (value, source)
                break
            marks.setdefault(name, (value, source))
        else:
            continue
        marks.pop(name, None)  # a value or a refusal below a mark settles the field
    return BoardPlan(values=values, rejected=rejected, marks=marks)


def _installation_reaches(name: str, origin: bool, board: BoardRecord | None,
                          installation: InstallationRecord) -> bool:
    if name in ORIGIN_ONLY and not origin:
        return False
    if name in SAME_EARTHING_ONLY and board is not None:
        own = board.earthing
        return own is None or own == installation.earthing
    return True


def inherit(record: CircuitRecord, plan: BoardPlan) -> tuple[CircuitRecord, Mapping[str, str]]:
    """The circuit with what it inherits written in, and where each inherited field came from."""
    if not plan:
        return record, _NOTHING
    changes: dict[str, Any] = {}
    sources: dict[str, str] = {}
    rejected: dict[str, str] | None = None
    marks: dict[str, str] | None = None
    own_rejected, own_marks = record.rejected, record.marks
    for name, (value, source) in plan.values.items():
        if getattr(record, name) is None and name not in own_rejected:
            changes[name] = value
            sources[name] = source
            if name in own_marks:
                marks = marks if marks is not None else dict(own_marks)
                del marks[name]
    for name, (text, source) in plan.rejected.items():
        if getattr(record, name) is None and name not in own_rejected:
            rejected = rejected if rejected is not None else dict(own_rejected)
            rejected[name] = text
            sources[name] = source
            if name in own_marks:
                marks = marks if marks is not None else dict(own_marks)
                del marks[name]
    for name, (mark, source) in plan.marks.items():
        if getattr(record, name) is None and name not in own_rejected and name not in own_marks:
            marks = marks if marks is not None else dict(own_marks)
            marks[name] = mark
            sources[name] = source
    if not sources:
        return record, _NOTHING
    if rejected is not None:
        changes["rejected"] = rejected
    if marks is not None:
        changes["marks"] = marks
    return record.replace(**changes), sources
