"""A board's Ze consensus: every circuit's Zs − (R1+R2) estimates the same Ze.

Zs = Ze_board + (R1+R2) for each circuit of a board, where Ze_board is the
loop impedance at the board (the origin's Ze plus the feeders' R1+R2 for a
sub-board). So the estimates Zs − (R1+R2) of all circuits on one board should
agree; the median is their consensus, robust against the one circuit whose
reading is wrong, which is the one we want to find.

Invariants:
- Only exact Zs and R1+R2 readings enter an estimate (a bound is not a value),
  and only plausible ones (:func:`engine.plausibility.usable`): an impossible
  reading never moves the board's consensus.
- The consensus exists only with at least ``consensus_min_circuits`` estimates
  (ruleset ``loop_consistency``); otherwise it is ``None``.
- Computed once per board per verify call and cached in ``ctx.cache``.
- ``measured_ze_ohm`` is the median of the exact ``ze_ohm`` readings recorded on
  the board's records (usually all the same figure copied onto each circuit).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from statistics import median

from .context import Context
from .plausibility import usable

__all__ = ["BoardZe", "board_ze"]


@dataclass(frozen=True, slots=True, kw_only=True)
class BoardZe:
    board: str
    estimates: dict[str, float] = field(default_factory=dict)  # circuit → Zs − (R1+R2)
    consensus_ohm: float | None = None
    measured_ze_ohm: float | None = None
    min_circuits: int = 3


def board_ze(board: str, ctx: Context) -> BoardZe:
    """The board's estimates and their median (cached per board)."""
    key = ("board_consistency.ze", board)
    if key in ctx.cache:
        cached: BoardZe = ctx.cache[key]
        return cached
    estimates: dict[str, float] = {}
    measured: list[float] = []
    rules = ctx.ruleset
    for record in ctx.by_board.get(board, ()):
        zs, r1r2, ze = record.zs_ohm, record.r1_r2_ohm, record.ze_ohm
        if (zs is not None and r1r2 is not None and zs.exact and r1r2.exact
                and usable(record, rules, "zs_ohm") and usable(record, rules, "r1_r2_ohm")):
            assert zs.value is not None and r1r2.value is not None
            estimates[record.circuit] = zs.value - r1r2.value
        if ze is not None and ze.exact and usable(record, rules, "ze_ohm"):
            assert ze.value is not None
            measured.append(ze.value)
    least = int(ctx.ruleset.value("loop_consistency", "consensus_min_circuits"))
    result = BoardZe(
        board=board,
        estimates=estimates,
        consensus_ohm=median(estimates.values()) if len(estimates) >= least else None,
        measured_ze_ohm=median(measured) if measured else None,
        min_circuits=least,
    )
    ctx.cache[key] = result
    return result
