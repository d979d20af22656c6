"""``verify_stream(records, ruleset)``: verdicts for inputs too large to hold, one board at a time.

:func:`engine.verify` needs every record of the call, because some checks look
across a board (the Ze consensus of ``loop_consistency``) or up the feeder
chain (``voltage_drop`` from the origin, ``loop_consistency``'s origin Ze).
A year's export does not fit in memory, but it is nearly always grouped by
board, so this verifies each run of consecutive records of one board as soon
as the run ends, and keeps from it only what later boards can ask for.

What is kept from a finished board (few records whatever the input's size):
- its **distribution circuits** (``circuit_role = distribution``): the only
  records a later board's ``board_fed_from`` is resolved against. A circuit
  that feeds a board is a distribution circuit (``circuit_role``); mark it so;
- for a board that has one, the feeder it names itself (one record per
  distinct ``board_fed_from``, so a chain can be followed through it, and a
  conflict is still seen), and its Ze summary (the median of its recorded Ze,
  what a sub-board below takes as the origin's Ze).

Invariants:
- On input grouped by board, with feeder circuits marked ``distribution``, the
  verdicts equal ``verify()``'s on the same records and site
  (``tests/engine/test_stream.py``). The site (installation and board records)
  is small and held whole; each run's circuits inherit from it as in ``verify``.
- A board whose feeder chain names a record not seen yet (a sub-board listed
  before the board that feeds it) is held back and verified at the end of the
  stream, with everything kept by then: its verdicts come after the others.
  Otherwise verdicts come in input order, board after board.
- A board that comes back after other boards is verified again as a new run:
  its board-level checks see only that run. Memory is one board, the boards
  held back, and the kept records.
"""

from __future__ import annotations

from collections import ChainMap
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal, overload

from .board_consistency import BoardZe, board_ze
from .compact import CompactVerdict
from .context import Context
from .feeders import FeederProblem, feeder_chain
from .records import CircuitRecord
from .results import Verdict
from .ruleset import Ruleset, load_ruleset
from .site import Site
from .verify import View, compact_one, verify_one
from .visits import PreparedVisit, PreviousVisit, prepare

__all__ = ["verify_stream"]

# The cache key engine.board_consistency fills; kept boards are pre-filled under it.
_ZE_KEY = "board_consistency.ze"


@dataclass(slots=True)
class _Kept:
    """What later boards may ask of earlier ones."""

    records: dict[tuple[str, str], CircuitRecord] = field(default_factory=dict)
    by_board: dict[str, list[CircuitRecord]] = field(default_factory=dict)
    cache: dict[Any, Any] = field(default_factory=dict)
    sources: dict[tuple[str, str], Mapping[str, str]] = field(default_factory=dict)

    def context(self, run: list[CircuitRecord], rules: Ruleset, site: Site | None, *,
                tracking: bool = True, previous: PreparedVisit | None = None) -> Context:
        """One board's run layered over the kept records (nothing copied)."""
        own = Context.build(run, rules, site)
        return Context(ruleset=rules, records=ChainMap(dict(own.records), self.records),
                       by_board=ChainMap(dict(own.by_board), self.by_board),
                       cache=ChainMap({}, self.cache), site=site,
                       sources=ChainMap(dict(own.sources), self.sources), tracking=tracking,
                       previous=previous)

    def keep(self, board: str, ctx: Context) -> None:
        """Remember the board's distribution circuits, its own feeder and its Ze summary."""
        own = ctx.by_board.get(board, [])
        feeders = [r for r in own if r.circuit_role == "distribution"]
        if not feeders:
            return
        stub = list(feeders)
        named = {r.board_fed_from.strip() for r in feeders if r.board_fed_from}
        for record in own:
            text = record.board_fed_from.strip() if record.board_fed_from else ""
            if text and text not in named:
                named.add(text)
                stub.append(record)
        for record in feeders:
            self.records[record.key] = record
            if record.key in ctx.sources:
                self.sources[record.key] = ctx.sources[record.key]
        self.by_board[board] = stub
        full = board_ze(board, ctx)  # per-circuit estimates matter only on the board itself
        self.cache[(_ZE_KEY, board)] = BoardZe(board=board, consensus_ohm=full.consensus_ohm,
                                               measured_ze_ohm=full.measured_ze_ohm,
                                               min_circuits=full.min_circuits)


def _runs(records: Iterable[CircuitRecord]) -> Iterator[list[CircuitRecord]]:
    run: list[CircuitRecord] = []
    for record in records:
        if run and record.board != run[0].board:
            yield run
            run = []
        run.append(record)
    if run:
        yield run


def _waits_for_feeder(board: str, ctx: Context) -> bool:
    chain = feeder_chain(board, ctx)
    return isinstance(chain, FeederProblem) and chain.code == "feeder_missing"


def _verdicts(ctx: Context) -> list[Verdict] | list[CompactVerdict]:
    """One board's verdicts, in the view the context is for."""
    own = ctx.records.maps[0] if isinstance(ctx.records, ChainMap) else ctx.records
    if ctx.tracking:
        return [verify_one(record, ctx) for record in own.values()]
    return [compact_one(record, ctx) for record in own.values()]


@overload
def verify_stream(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
                  site: Site | None = None, view: Literal["full"] = "full",
                  previous: PreviousVisit | None = None) -> Iterator[Verdict]: ...


@overload
def verify_stream(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
                  site: Site | None = None, view: Literal["compact"],
                  previous: PreviousVisit | None = None) -> Iterator[CompactVerdict]: ...


def verify_stream(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
                  site: Site | None = None, view: View = "full",
                  previous: PreviousVisit | None = None) -> Iterator[Verdict] | Iterator[CompactVerdict]:
    """Verdicts board by board, for records grouped by board (see the module's notes), in the view asked
    for (``"compact"``: :mod:`engine.compact`); ``previous`` as :func:`engine.verify` takes it."""
    if view not in ("full", "compact"):
        raise ValueError(f"view must be 'full' or 'compact', not {view!r}")
    prepared = None if previous is None else prepare(previous)  # once, for every board's run
    return _stream(records, load_ruleset(ruleset), site, tracking=view == "full",  # type: ignore[return-value]
                   previous=prepared)


def _stream(records: Iterable[CircuitRecord], rules: Ruleset, site: Site | None, *,
            tracking: bool, previous: PreparedVisit | None = None) -> Iterator[Verdict | CompactVerdict]:
    kept = _Kept()
    held: list[list[CircuitRecord]] = []
    for run in _runs(records):
        board = run[0].board
        ctx = kept.context(run, rules, site, tracking=tracking, previous=previous)
        kept.keep(board, ctx)
        if _waits_for_feeder(board, ctx):
            held.append(run)
            continue
        yield from _verdicts(ctx)
    for run in held:
        yield from _verdicts(kept.context(run, rules, site, tracking=tracking, previous=previous))
