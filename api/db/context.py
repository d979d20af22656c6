"""The stored circuits a set of verdicts depends on: their boards and the boards feeding them.

A circuit's verdict needs more than its own record: the checks compare it with the other
circuits of its board (the board's consensus Ze) and follow its board's feeder chain to the
origin (the voltage drop of each sub-main, a sub-board's Zdb against the circuit feeding it).
Nothing else in the job changes it. So a post that touches a few circuits, or a page of
verdicts, loads those boards and their feeder chain: its cost follows what it touches, not
the size of the job.

Invariants:
- :func:`context_rows` returns every circuit of every board in ``boards`` and of every board
  on their feeder chains (board facts' ``board_fed_from``, or their circuits' where the facts
  do not say), in circuit order; for the circuits of ``boards`` the engine then gives the
  verdict a verification of the whole job gives (tested: ``tests/api/test_context.py``).
- A feeder reference ``"A/B/3"`` may split at any ``/``: every board it could name is loaded
  (a board that does not exist loads nothing), as the engine resolves it against what it has.
- The chain is followed until no new board appears, so a cycle of boards ends.
"""

from __future__ import annotations

import json
from collections.abc import Iterable

from sqlalchemy import Text, cast, select
from sqlalchemy.orm import Session

from api.db.models import Circuit
from api.db.repository import Row
from engine import Site

__all__ = ["context_rows", "feeder_boards"]

_FED_FROM = '"board_fed_from"'


def feeder_boards(text: str) -> set[str]:
    """The boards a feeder reference (``"DB1/5"``) could name: its text before each ``/``."""
    return {text[:at].strip() for at in range(len(text)) if text[at] == "/" and text[:at].strip()}


def _stated_feeders(rows: Iterable[Row]) -> set[str]:
    found: set[str] = set()
    for row in rows:
        if row.text and _FED_FROM in row.text:  # most circuits say nothing of a feeder: no parse
            feeder = json.loads(row.text).get("board_fed_from")
            if isinstance(feeder, str):
                found |= feeder_boards(feeder)
    return found


def context_rows(session: Session, job_id: int, boards: Iterable[str], *sites: Site) -> list[Row]:
    """Every stored circuit of ``boards`` and of the boards on their feeder chains, in circuit order;
    ``sites`` are the board facts to follow (the stored ones, and a body's not merged yet)."""
    loaded: set[str] = set()
    rows: list[Row] = []
    frontier = set(boards)
    while frontier:
        query = (select(Circuit.id, Circuit.board, Circuit.circuit, cast(Circuit.fields, Text))
                 .where(Circuit.job_id == job_id, Circuit.board.in_(sorted(frontier))))
        found = [Row(id, board, circuit, text) for id, board, circuit, text in session.execute(query)]
        loaded |= frontier
        rows += found
        upstream = _stated_feeders(found)
        for board in frontier:
            for site in sites:
                fact = site.boards.get(board)
                if fact is not None and fact.board_fed_from:
                    upstream |= feeder_boards(fact.board_fed_from)
        frontier = upstream - loaded
    return sorted(rows, key=lambda row: row.id)
