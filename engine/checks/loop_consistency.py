"""Loop consistency: Zs against Ze + R1+R2, and against the board's consensus.

Two results per circuit that has a Zs reading (without Zs there is nothing to
cross-check; ``loop_impedance`` reports the missing Zs):

1. ``ze_plus_r1r2``: Zs against Ze + Σ(feeders' R1+R2) + R1+R2. Ze is the
   origin's: the record's own ``ze_ohm`` (or the installation's, inherited),
   else one recorded on its board, else on the board at the top of its feeder
   chain. For a sub-board the feeders' R1+R2 are part of the loop. A Ze the
   circuit inherited from its board's record is that board's Zdb, measured at
   the board: the feeders are already in it, so Zs is compared with
   Zdb + R1+R2. Missing pieces → ``incomplete`` naming them.
2. ``board_consensus``: the circuit's Zs − (R1+R2) against the median of that
   estimate over the board (``engine.board_consistency``), when the board has
   at least ``consensus_min_circuits`` estimates. Catches the one circuit whose
   reading is wrong even where Ze was not recorded.

Tolerance (ruleset ``loop_consistency``, common practice, our choice):
±(0.05 Ω + 10 % of the expected Zs). 0.05 Ω covers the resolution and lead
nulling of two instruments, 10 % their reading accuracy and the parallel earth
paths that lower a live Zs. Beyond it, either way → ``investigate``, never
``fail``: the loop check itself (``loop_impedance``) judges safety.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from typing import Any

from ..board_consistency import board_ze
from ..context import CircuitView, Context
from ..feeders import FeederProblem, feeder_chain
from ..inheritance import INSTALLATION
from ..readings import Reading
from ..results import CheckResult, Outcome
from ._compare import incomplete

__all__ = ["run", "tolerance_ohm"]

CHECK = "loop_consistency"


def tolerance_ohm(view: CircuitView, expected_ohm: float) -> float:
    rules = view.ruleset
    return float(rules.value(CHECK, "tolerance_ohm")) + float(rules.value(CHECK, "tolerance_fraction")) \
        * expected_ohm


def _origin_ze(view: CircuitView, ctx: Context) -> tuple[Reading, str] | FeederProblem | None:
    own = view.reading("ze_ohm")
    if own is not None:
        return own, view.source("ze_ohm") or "record"
    board = view.record.board
    here = board_ze(board, ctx).measured_ze_ohm
    if here is not None:
        return Reading(value=here), f"board {board}"
    chain = feeder_chain(board, ctx)
    if isinstance(chain, FeederProblem):
        return chain
    if chain:
        top = chain[-1].board
        found = board_ze(top, ctx).measured_ze_ohm
        if found is not None:
            return Reading(value=found), f"origin board {top}"
    return None


def _verdict(method: str, zs: Reading, expected: float, tol: float, basis: str, what: str,
             hint: str, inputs: dict[str, Any]) -> CheckResult:
    lo, hi = zs.lower, zs.upper
    least = max(0.0, lo - expected, expected - hi)
    most = max(abs(hi - expected), abs(expected - lo))
    exact = math.isfinite(most) and zs.exact
    deviation = (zs.value - expected) if exact and zs.value is not None else None
    inputs = {**inputs, "expected_zs_ohm": expected, "tolerance_ohm": tol, "deviation_ohm": deviation}
    if most <= tol:
        outcome, detail = Outcome.PASS, f"Zs {zs.display('Ω')} agrees with {what} = {expected:.3g} Ω " \
                                        f"(within ±{tol:.3g} Ω)"
    elif least > tol:
        side = "above" if lo > expected else "below"
        outcome, detail = Outcome.INVESTIGATE, (f"Zs {zs.display('Ω')} is {least:.3g} Ω {side} {what} = "
                                                f"{expected:.3g} Ω, beyond ±{tol:.3g} Ω; {hint}")
    else:
        outcome, detail = Outcome.INVESTIGATE, (f"Zs {zs.display('Ω')} is bounded and does not show "
                                                f"agreement with {what} = {expected:.3g} Ω")
    return CheckResult(check=CHECK, outcome=outcome, value=None if deviation is None else abs(deviation),
                       relation="=" if exact else ">", limit=tol, limit_kind="max", unit="Ω",
                       method=method, basis=basis, detail=detail, inputs=inputs)


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    zs = view.reading("zs_ohm")
    if zs is None:
        return
    basis = ctx.ruleset.value(CHECK, "basis")
    r1r2 = view.reading("r1_r2_ohm")
    if r1r2 is None or not r1r2.exact or r1r2.value is None:
        yield incomplete(CHECK, ["r1_r2_ohm"], basis=basis,
                         detail="needs an exact R1+R2 reading to compare Zs with Ze + R1+R2")
        return
    board = board_ze(view.record.board, ctx)
    consensus = board.consensus_ohm
    said = ("" if consensus is None else
            f"; the board's circuits put Ze at {consensus:.3g} Ω (median of {len(board.estimates)})")
    yield from _against_ze(view, ctx, zs, r1r2.value, basis, said, consensus)
    estimate = board.estimates.get(view.record.circuit)
    if consensus is None or estimate is None:
        return
    expected = consensus + r1r2.value
    yield _verdict("board_consensus", zs, expected, tolerance_ohm(view, expected), basis,
                   f"the board's consensus Ze {consensus:.3g} Ω + R1+R2 {r1r2.value:.3g} Ω",
                   "this circuit's Zs or R1+R2 reading disagrees with the other circuits on the board",
                   {"consensus_ze_ohm": consensus, "circuits": len(board.estimates),
                    "estimate_ze_ohm": estimate, "r1_r2_ohm": r1r2.value})


def _against_ze(view: CircuitView, ctx: Context, zs: Reading, r1r2: float, basis: str, said: str,
                consensus: float | None) -> Iterator[CheckResult]:
    origin = _origin_ze(view, ctx)
    if view.raw("earthing") == "TT" and not (
        isinstance(origin, tuple) and origin[1] in ("record", INSTALLATION, f"board {view.record.board}")
    ):
        # On TT the fault loop returns through this installation's own electrode (RA),
        # not through the supply's earth: a Ze inherited from an upstream TN board says
        # nothing about it. Only a Ze measured on this TT board compares; else the check
        # does not apply (loop_impedance and earth_electrode judge the TT circuit).
        return
    if isinstance(origin, FeederProblem):
        yield incomplete(CHECK, ["ze_ohm"], basis=basis, inputs={"error": origin.as_dict()},
                         detail=f"Ze at the origin cannot be found: {origin.message}")
        return
    if origin is None:
        yield incomplete(CHECK, ["ze_ohm"], basis=basis,
                         detail=f"needs Ze to compare Zs with Ze + R1+R2{said}")
        return
    ze, ze_source = origin
    at_board = ze_source == f"board {view.record.board}" and view.source("ze_ohm") == ze_source
    label = "Zdb" if at_board else "Ze"
    if not ze.exact or ze.value is None:
        yield incomplete(CHECK, ["ze_ohm"], basis=basis,
                         detail=f"{label} {ze.display('Ω')} is not an exact reading{said}")
        return
    chain = () if at_board else feeder_chain(view.record.board, ctx)
    feeders: list[str] = []
    upstream = 0.0
    if not isinstance(chain, FeederProblem):
        for record in chain:
            ref = f"{record.board}/{record.circuit}"
            reading = ctx.other_view(record).reading("r1_r2_ohm")  # judged like this circuit's own
            if reading is None or not reading.exact or reading.value is None:
                yield incomplete(CHECK, [f"{ref} r1_r2_ohm"], basis=basis,
                                 detail=f"needs the exact R1+R2 of feeder {ref}, part of this loop")
                return
            upstream += reading.value
            feeders.append(ref)
    what = f"{label} {ze.value:.3g} Ω" + (f" + feeders {upstream:.3g} Ω" if feeders else "") \
        + f" + R1+R2 {r1r2:.3g} Ω"
    inputs: dict[str, Any] = {"ze_ohm": ze.value, "ze_source": ze_source, "r1_r2_ohm": r1r2,
                              "feeders": feeders, "feeders_r1_r2_ohm": upstream}
    if consensus is not None:
        inputs["consensus_ze_ohm"] = consensus
    expected = ze.value + upstream + r1r2
    yield _verdict("ze_plus_r1r2", zs, expected, tolerance_ohm(view, expected), basis, what,
                   "check the readings, connections at the board and for parallel earth paths" + said,
                   inputs)
