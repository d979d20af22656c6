"""Feeder chains: which distribution circuits stand between a board and the origin.

A board's record (:class:`engine.site.BoardRecord`, preferred) or its circuit
records carry ``board_fed_from = "BOARD/CIRCUIT"``: the distribution circuit on
the upstream board that feeds it. Walking those links gives the chain up to
the origin (a board with no feeder).

Invariants:
- Every record of the call is in ``ctx.records``; a chain is resolved from
  them only. The result is cached per board in ``ctx.cache``.
- A broken chain is a value (:class:`FeederProblem`), never an exception and
  never silently ignored: a missing feeder record, two records of one board
  naming different feeders, or boards feeding each other in a cycle. The
  problem belongs to the boards whose chain passes through the break; boards
  whose chains do not are unaffected. A board record and a circuit of that
  board naming different feeders is a ``feeder_conflict`` like two circuits.
- ``"A/B/3"`` is resolved against the records: the split at a ``/`` that names
  an existing record wins, so board or circuit references may contain ``/``.
"""

from __future__ import annotations

from dataclasses import dataclass

from .context import Context
from .records import CircuitRecord
from .vdrop import Drop, NoDrop, own_drop

__all__ = ["FeederProblem", "Upstream", "UpstreamPart", "feeder_chain", "upstream_drop"]


@dataclass(frozen=True, slots=True, kw_only=True)
class FeederProblem:
    """Why a board's chain to the origin cannot be followed."""

    code: str  # feeder_missing | feeder_conflict | feeder_cycle | feeder_incomplete
    message: str
    boards: tuple[str, ...] = ()

    def as_dict(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message}


@dataclass(frozen=True, slots=True, kw_only=True)
class UpstreamPart:
    feeder: str  # "BOARD/CIRCUIT"
    volts: float
    method: str
    length_m: float | None


@dataclass(frozen=True, slots=True, kw_only=True)
class Upstream:
    """The drop of the feeder circuits between a board and the origin, nearest first."""

    parts: tuple[UpstreamPart, ...] = ()

    @property
    def volts(self) -> float:
        return sum(part.volts for part in self.parts)

    @property
    def length_m(self) -> float:
        """Known route length upstream (feeders without a length count 0)."""
        return sum(part.length_m or 0.0 for part in self.parts)


def _feeder_text(board: str, ctx: Context) -> str | FeederProblem | None:
    named = {r.board_fed_from.strip() for r in ctx.by_board.get(board, ())
             if r.board_fed_from and r.board_fed_from.strip()}
    own = ctx.site.boards.get(board) if ctx.site is not None else None
    said = own.board_fed_from.strip() if own is not None and own.board_fed_from else ""
    if said:
        named.add(said)
    if len(named) > 1:
        where = f" (its board record names {said})" if said else ""
        return FeederProblem(code="feeder_conflict", boards=(board,),
                             message=f"records of board {board} name different feeders: "
                                     f"{', '.join(sorted(named))}{where}")
    return next(iter(named), None)


def _resolve(text: str, ctx: Context) -> CircuitRecord | None:
    for at in range(len(text)):
        if text[at] == "/":
            found = ctx.records.get((text[:at].strip(), text[at + 1:].strip()))
            if found is not None:
                return found
    return None


def feeder_chain(board: str, ctx: Context) -> tuple[CircuitRecord, ...] | FeederProblem:
    """The feeder records from ``board`` up to the origin, nearest first (cached)."""
    key = ("feeders.chain", board)
    if key in ctx.cache:
        cached: tuple[CircuitRecord, ...] | FeederProblem = ctx.cache[key]
        return cached
    chain: list[CircuitRecord] = []
    path = [board]
    result: tuple[CircuitRecord, ...] | FeederProblem
    current = board
    while True:
        text = _feeder_text(current, ctx)
        if isinstance(text, FeederProblem):
            result = _downstream(text, board, current)
            break
        if text is None:
            result = tuple(chain)
            break
        record = _resolve(text, ctx)
        if record is None:
            result = _downstream(FeederProblem(
                code="feeder_missing", boards=(current,),
                message=f"board {current} is fed from {text!r}, but no record of that circuit "
                        f"was given"), board, current)
            break
        if record.board in path:
            loop = [*path[path.index(record.board):], record.board]
            cycle = FeederProblem(code="feeder_cycle", boards=tuple(loop[:-1]),
                                  message=f"boards feed each other in a cycle: {' → '.join(loop)}")
            result = cycle if board in cycle.boards else _downstream(cycle, board, record.board)
            break
        chain.append(record)
        path.append(record.board)
        current = record.board
    ctx.cache[key] = result
    return result


def _downstream(problem: FeederProblem, board: str, broken_at: str) -> FeederProblem:
    if broken_at == board:
        return problem
    return FeederProblem(code=problem.code, boards=problem.boards,
                         message=f"the feed of board {board} passes board {broken_at}: {problem.message}")


def upstream_drop(board: str, ctx: Context) -> Upstream | FeederProblem:
    """The summed own drops of the feeder circuits above ``board`` (cached)."""
    key = ("feeders.upstream", board)
    if key in ctx.cache:
        cached: Upstream | FeederProblem = ctx.cache[key]
        return cached
    chain = feeder_chain(board, ctx)
    result: Upstream | FeederProblem
    if isinstance(chain, FeederProblem):
        result = chain
    else:
        parts: list[UpstreamPart] = []
        result = Upstream(parts=())
        for record in chain:
            feeder = ctx.view(record)  # a feeder's values are judged as its own circuit's are
            drop: Drop | NoDrop = own_drop(feeder)
            ref = f"{record.board}/{record.circuit}"
            if isinstance(drop, NoDrop):
                result = FeederProblem(
                    code="feeder_incomplete", boards=(board,),
                    message=f"the drop of feeder {ref} cannot be computed: {drop.detail}")
                break
            length = feeder.raw("length_m")
            parts.append(UpstreamPart(feeder=ref, volts=drop.volts, method=drop.method,
                                      length_m=None if length is None else float(length)))
        else:
            result = Upstream(parts=tuple(parts))
    ctx.cache[key] = result
    return result
