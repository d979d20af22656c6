"""Merging an adapter's results into circuit records, board records and the installation record.

Invariants:
- Fragments for the same ``(board, circuit)`` merge field by field, later
  fragments winning, in input order; records come out in first-seen order.
  Board facts merge per board and installation facts into one record the same
  way (:class:`adapters.merge.Merged`: refusals and marks are merged like
  values, so a refused cell is remembered in the record's ``rejected`` and no
  check takes a default in its place).
- Records are built by the engine's own builders (:func:`engine.build_record`,
  :func:`engine.build_board`, :func:`engine.build_installation`), so trade
  notation, marks and refusals mean what they mean in a JSON body; what those
  builders refuse (a notation that contradicts a split field) is a
  :class:`LineError` on the line that gave it.
- Errors and skipped lines are counted and kept with their line numbers, so a
  caller can report every line it was given; warnings (names read as no
  field) are kept beside them, in input order.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field

from engine import BoardRecord, CircuitRecord, InstallationRecord, Site, build_board, build_installation

from .base import BoardFacts, Fragment, InputWarning, InstallationFacts, LineError, Result, Skipped
from .merge import Merged, build_circuit, build_merged

__all__ = ["Collected", "SiteFacts", "collect", "iter_records"]


class SiteFacts:
    """Board and installation facts merged as they stream (memory: one entry per board)."""

    __slots__ = ("_boards", "_installation")

    def __init__(self) -> None:
        self._installation: Merged | None = None
        self._boards: dict[str, Merged] = {}

    def add(self, facts: BoardFacts | InstallationFacts) -> None:
        if isinstance(facts, BoardFacts):
            merged = self._boards.setdefault(facts.board, Merged())
        else:
            merged = self._installation = self._installation or Merged()
        merged.add(facts.fields, facts.rejected, facts.marks, facts.line)

    def build(self, errors: list[LineError] | None = None
              ) -> tuple[InstallationRecord | None, list[BoardRecord]]:
        """The installation record (``None`` if no line stated it) and the board records, first-seen order."""
        installation = None if self._installation is None else build_merged(
            self._installation, {}, build_installation, errors)
        boards = [b for name, merged in self._boards.items()
                  if (b := build_merged(merged, {"board": name}, build_board, errors)) is not None]
        return installation, boards


@dataclass(slots=True)
class Collected:
    records: list[CircuitRecord] = field(default_factory=list)
    errors: list[LineError] = field(default_factory=list)
    warnings: list[InputWarning] = field(default_factory=list)
    installation: InstallationRecord | None = None
    boards: list[BoardRecord] = field(default_factory=list)
    fragments: int = 0
    facts: int = 0  # lines that stated a board's or the installation's facts
    skipped: int = 0

    @property
    def lines(self) -> int:
        """Lines accounted for (a line with good cells and a bad one counts once, as its result)."""
        error_only = len({e.line for e in self.errors} - self._result_lines)
        return self.fragments + self.facts + self.skipped + error_only

    @property
    def site(self) -> Site:
        """The installation and boards, as :func:`engine.verify` takes them (``site=``)."""
        return Site.of(self.installation, self.boards)

    _result_lines: set[int] = field(default_factory=set, repr=False)


def collect(results: Iterable[Result]) -> Collected:
    """Fragments merged per circuit, facts per board and for the installation; errors and skips counted."""
    merged: dict[tuple[str, str], Merged] = {}
    site = SiteFacts()
    out = Collected()
    for result in results:
        if isinstance(result, Fragment):
            merged.setdefault(result.key, Merged()).add(result.fields, result.rejected, result.marks,
                                                        result.line)
            out.fragments += 1
            out._result_lines.add(result.line)
        elif isinstance(result, BoardFacts | InstallationFacts):
            site.add(result)
            out.facts += 1
            out._result_lines.add(result.line)
        elif isinstance(result, LineError):
            out.errors.append(result)
        elif isinstance(result, Skipped):
            out.skipped += 1
        elif isinstance(result, InputWarning):
            out.warnings.append(result)
    built: list[LineError] = []
    out.records = [r for (board, circuit), m in merged.items()
                   if (r := build_circuit(m, board, circuit, built)) is not None]
    out.installation, out.boards = site.build(built)
    out.errors.extend(built)
    return out


def iter_records(results: Iterable[Result], errors: list[LineError] | None = None,
                 warnings: list[InputWarning] | None = None,
                 site: SiteFacts | None = None) -> Iterator[CircuitRecord]:
    """Constant-memory merge: consecutive fragments of one circuit become one record.

    For inputs too large to hold (a year's export): a circuit split across
    non-adjacent rows comes out as two records, the later winning downstream.
    Board and installation facts go to ``site`` when given (one entry per
    board, so memory stays bounded); ``site.build(errors)`` makes their records.
    """
    key: tuple[str, str] | None = None
    merged = Merged()
    for result in results:
        if isinstance(result, Fragment):
            if result.key != key:
                if key is not None and (record := build_circuit(merged, *key, errors)) is not None:
                    yield record
                key, merged = result.key, Merged()
            merged.add(result.fields, result.rejected, result.marks, result.line)
        elif isinstance(result, BoardFacts | InstallationFacts):
            if site is not None:
                site.add(result)
        elif isinstance(result, LineError) and errors is not None:
            errors.append(result)
        elif isinstance(result, InputWarning) and warnings is not None:
            warnings.append(result)
    if key is not None and (record := build_circuit(merged, *key, errors)) is not None:
        yield record
