"""A sub-board's Zdb against its feeder: Ze upstream + the sub-main's R1+R2 ≈ Zdb (``external_impedance``).

The loop impedance measured at a distribution board (Zdb, its board record's
``zdb_ohm``) is the loop up to the board that feeds it plus the sub-main
between them: Zdb = Ze upstream + (R1+R2) of the feeding distribution circuit,
as Zs = Ze + (R1+R2) for any circuit (IEC 60364-6 6.4.3.7.3). Ze upstream is
what the feeding circuit sees: its board's Zdb, or the installation's Ze where
that board is at the origin, or the feeder's own Ze reading.

Invariants:
- Applies to the circuits of a board whose board record gives ``zdb_ohm`` and
  a feeder (``board_fed_from``); judged once per board (cached) and reported on
  each of its circuits as ``external_impedance`` method ``zdb_vs_feeder``.
- Tolerance is the loop check's (ruleset ``loop_consistency``: ±(0.05 Ω + 10 %
  of the expected Zdb), ohmtally's choice, common practice). Within → ``pass``;
  beyond either way → ``investigate`` (a reading or a connection is wrong),
  never ``fail``: the circuits' own checks judge safety.
- A Zdb below the Ze upstream (by more than the tolerance at that Ze) cannot
  be — the sub-main only adds impedance — so it is ``investigate``, said so.
- Every value is read through a view, so a refused, marked or impossible Zdb,
  Ze or R1+R2 makes this result ``incomplete`` or ``investigate`` naming it and
  where it was written, never a pass. A bound settles nothing (``incomplete``).
- Not applicable where the board keeps its own earth apart from the feeder's
  (a TT outbuilding fed from a TN board): its fault loop runs through its own
  electrode, not the sub-main's cpc.
"""

from __future__ import annotations

from typing import Any

from ..compiled import derived
from ..context import CircuitView, Context
from ..feeders import FeederProblem, feeder_chain
from ..findings import Basis, Finding, found
from ..inheritance import board_plan, board_source, inherit
from ..plausibility import Withheld
from ..records import CircuitRecord
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import incomplete

__all__ = ["METHOD", "zdb_vs_feeder"]

CHECK = "external_impedance"
METHOD = "zdb_vs_feeder"
_TOLERANCE = "loop_consistency"


def zdb_vs_feeder(view: CircuitView, ctx: Context) -> Finding | None:
    """The board's Zdb against its feeder, for a circuit of that board (``None``: does not apply)."""
    board = view.record.board
    if ctx.site is None or board not in ctx.site.boards:
        return None
    key = ("zdb_feeder", board)
    if key not in ctx.cache:
        try:
            found = _judge(board, ctx)
        except Withheld as exc:
            found = exc.result(CHECK, ("", ""))
        ctx.cache[key] = found
    result: Finding | None = ctx.cache[key]
    return result


def _board_view(board: str, ctx: Context) -> CircuitView:
    """What a circuit of ``board`` with nothing of its own would see: the board's own facts, judged."""
    assert ctx.site is not None
    plan = board_plan(board, ctx.by_board.get(board, ()), ctx.site)
    blank, sources = inherit(CircuitRecord(board=board, circuit=""), plan)
    return CircuitView(blank, ctx.ruleset, sources, tracking=ctx.tracking)


def _basis(rules: Ruleset) -> Basis:
    return Basis(id=f"{_TOLERANCE}.basis", text=f"{rules.value(_TOLERANCE, 'basis')}, at a board: Zdb = Ze "
                                                 "upstream + R1+R2 of the circuit feeding it")


def _judge(board: str, ctx: Context) -> Finding | None:
    here = _board_view(board, ctx)
    if here.source("ze_ohm") != board_source(board):
        return None  # the board record gives no Zdb
    basis = derived(ctx.ruleset, _basis)
    chain = feeder_chain(board, ctx)
    if not chain:
        return None  # at the origin: Zdb there is the supply's Ze
    if isinstance(chain, FeederProblem):
        return incomplete(CHECK, ["board_fed_from"], basis=basis, inputs={"error": chain.as_dict()},
                          detail=f"Zdb of board {board} cannot be compared with its feeder: {chain.message}")
    zdb = here.reading("ze_ohm")
    if zdb is None:
        return None  # recorded as N/A: no Zdb to compare
    feeder = chain[0]
    ref = f"{feeder.board}/{feeder.circuit}"
    up = ctx.other_view(feeder)
    if here.raw("earthing") == "TT" and up.raw("earthing") != "TT":
        return None  # its own electrode: the loop does not run through the sub-main's cpc
    ze = up.reading("ze_ohm")
    ze_source = up.source("ze_ohm") or f"circuit {ref}"
    r1r2 = up.reading("r1_r2_ohm")
    if ze is None or not ze.exact or ze.value is None:
        shown = "none is recorded" if ze is None else f"{ze.display('Ω')} is not an exact reading"
        return incomplete(CHECK, [f"{feeder.board} zdb_ohm"], basis=basis,
                          detail=f"needs the Ze upstream (Zdb of board {feeder.board}, or the "
                                 f"installation's Ze at the origin) to compare with Zdb of board {board}: "
                                 f"{shown}")
    if r1r2 is None or not r1r2.exact or r1r2.value is None:
        return incomplete(CHECK, [f"{ref} r1_r2_ohm"], basis=basis,
                          detail=f"needs the exact R1+R2 of {ref}, the circuit feeding board {board}, "
                                 "to compare with its Zdb")
    if not zdb.exact or zdb.value is None:
        return incomplete(CHECK, ["zdb_ohm"], basis=basis,
                          detail=f"Zdb {zdb.display('Ω')} of board {board} is not an exact reading")
    return _verdict(board, zdb.value, ze.value, ze_source, ref, r1r2.value, basis, ctx)


def _tolerance(ctx: Context, expected: float) -> float:
    rules = ctx.ruleset
    return float(rules.value(_TOLERANCE, "tolerance_ohm")) \
        + float(rules.value(_TOLERANCE, "tolerance_fraction")) * expected


def _verdict(board: str, zdb: float, ze: float, ze_source: str, ref: str, r1r2: float, basis: Basis,
             ctx: Context) -> Finding:
    expected = ze + r1r2
    tol = _tolerance(ctx, expected)
    deviation = zdb - expected
    inputs: dict[str, Any] = {"board": board, "zdb_ohm": zdb, "ze_upstream_ohm": ze,
                              "ze_upstream_source": ze_source, "feeder": ref, "feeder_r1_r2_ohm": r1r2,
                              "expected_zdb_ohm": expected, "tolerance_ohm": tol, "deviation_ohm": deviation}
    what = f"Ze upstream {ze:.3g} Ω ({ze_source}) + R1+R2 of {ref} {r1r2:.3g} Ω = {expected:.3g} Ω"
    floor = ze - _tolerance(ctx, ze)
    if zdb < floor:
        outcome = Outcome.INVESTIGATE
        detail = (f"Zdb {zdb:.3g} Ω of board {board} is below the Ze upstream {ze:.3g} Ω ({ze_source}), "
                  f"which cannot be: the sub-main {ref} only adds impedance; check both readings")
    elif abs(deviation) <= tol:
        outcome = Outcome.PASS
        detail = f"Zdb {zdb:.3g} Ω of board {board} agrees with {what} (within ±{tol:.3g} Ω)"
    else:
        side = "above" if deviation > 0 else "below"
        outcome = Outcome.INVESTIGATE
        detail = (f"Zdb {zdb:.3g} Ω of board {board} is {abs(deviation):.3g} Ω {side} {what}, beyond "
                  f"±{tol:.3g} Ω; check the readings and the sub-main's connections")
    return found(CHECK, outcome, value=abs(deviation), limit=tol, limit_kind="max", unit="Ω", method=METHOD,
                 basis=basis, inputs=inputs, detail=detail)
