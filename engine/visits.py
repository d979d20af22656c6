"""The previous visit of an installation, and which of its circuits is which circuit now.

Periodic inspection compares each reading with the same circuit's reading at the
previous visit. :class:`PreviousVisit` is that visit as the caller found it (the
engine looks nothing up): its job, the date its readings were taken, its circuit
records and site facts, and an explicit map of what was renamed since.

Invariants:
- Circuits are matched by ``(board, circuit)``. A renamed board or circuit is
  matched only through the explicit map (``boards``: old board → new board,
  ``circuits``: old key → new key); nothing is guessed from descriptions or
  readings.
- An explicit circuit entry wins over a board entry, and a board entry over
  the old name. Two previous circuits that would land on one key at the same
  level are *ambiguous*: neither is matched (never a guess presented as a
  fact), both are listed in :attr:`PreparedVisit.ambiguous`.
- :func:`prepare` writes what each previous circuit inherited from its own
  visit's board and installation facts into it, as :class:`engine.Context`
  does for the current visit, so a circuit's Ze is compared with the Ze it saw
  then (its board's Zdb, or the origin's Ze).
- Pure: frozen values in, frozen values out; nothing is read or kept between calls.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from datetime import date
from types import MappingProxyType
from typing import Any

from .inheritance import board_plan, inherit
from .records import CircuitRecord
from .site import Site

__all__ = ["Key", "PreparedVisit", "PreviousVisit", "prepare"]

Key = tuple[str, str]
_EXPLICIT, _BOARD_RENAMED, _SAME_NAME = 0, 1, 2


def _frozen(mapping: Mapping[Any, Any]) -> Mapping[Any, Any]:
    return MappingProxyType(dict(mapping))


@dataclass(frozen=True, slots=True, kw_only=True)
class PreviousVisit:
    """The previous visit: job, date the readings were taken, records, site facts, renames."""

    job: int | str | None
    tested_on: date | None
    records: tuple[CircuitRecord, ...] = ()
    site: Site | None = None
    boards: Mapping[str, str] = field(default_factory=dict)
    """Old board reference → the board's reference now."""
    circuits: Mapping[Key, Key] = field(default_factory=dict)
    """Old ``(board, circuit)`` → the circuit's key now (wins over ``boards``)."""

    def __post_init__(self) -> None:
        object.__setattr__(self, "records", tuple(self.records))
        object.__setattr__(self, "boards", _frozen(self.boards))
        object.__setattr__(self, "circuits", _frozen(self.circuits))

    def where(self) -> dict[str, Any]:
        """``{"date", "job"}`` of this visit, as the check's inputs and the changes listing give them."""
        return {"date": None if self.tested_on is None else self.tested_on.isoformat(), "job": self.job}


@dataclass(frozen=True, slots=True, kw_only=True)
class PreparedVisit:
    """A previous visit made ready for one call: effective records and the match of old keys to new."""

    visit: PreviousVisit
    effective: Mapping[Key, CircuitRecord]
    """Old key → the previous record with what it inherited from its visit's facts written in."""
    sources: Mapping[Key, Mapping[str, str]]
    """Old key → where each inherited field came from (``"board DB2"``, ``"installation"``)."""
    by_new: Mapping[Key, Key]
    """Key now → the old key it was at the previous visit."""
    ambiguous: tuple[Key, ...]
    """Old keys that two map entries (or names) would put on one key now: matched to nothing."""

    def old_key(self, key: Key) -> Key | None:
        return self.by_new.get(key)


def _target(key: Key, visit: PreviousVisit) -> tuple[Key, int]:
    explicit = visit.circuits.get(key)
    if explicit is not None:
        return explicit, _EXPLICIT
    board = visit.boards.get(key[0])
    if board is not None:
        return (board, key[1]), _BOARD_RENAMED
    return key, _SAME_NAME


def _effective(records: Iterable[CircuitRecord], site: Site | None
               ) -> tuple[dict[Key, CircuitRecord], dict[Key, Mapping[str, str]]]:
    index: dict[Key, CircuitRecord] = {}
    boards: dict[str, list[CircuitRecord]] = defaultdict(list)
    for record in records:  # a later record with the same key replaces the earlier one, as verify() does
        if record.key in index:
            boards[record.board].remove(index[record.key])
        index[record.key] = record
        boards[record.board].append(record)
    sources: dict[Key, Mapping[str, str]] = {}
    if site is not None and (site.installation is not None or site.boards):
        for board, own in boards.items():
            plan = board_plan(board, own, site)
            for record in own:
                effective, where = inherit(record, plan)
                if where:
                    index[record.key] = effective
                    sources[record.key] = where
    return index, sources


def prepare(visit: PreviousVisit) -> PreparedVisit:
    """Effective previous records and the old → new match (see the module's invariants)."""
    effective, sources = _effective(visit.records, visit.site)
    claims: dict[Key, list[tuple[int, Key]]] = defaultdict(list)
    for old in effective:
        new, level = _target(old, visit)
        claims[new].append((level, old))
    by_new: dict[Key, Key] = {}
    ambiguous: list[Key] = []
    for new, found in claims.items():
        best = min(level for level, _old in found)
        winners = [old for level, old in found if level == best]
        if len(winners) == 1:
            by_new[new] = winners[0]
        else:
            ambiguous += winners
    return PreparedVisit(visit=visit, effective=_frozen(effective), sources=_frozen(sources),
                         by_new=_frozen(by_new), ambiguous=tuple(sorted(ambiguous)))
