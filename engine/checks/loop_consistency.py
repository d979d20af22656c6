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
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

from ..board_consistency import board_ze
from ..compiled import derived
from ..context import CircuitView, Context
from ..feeders import FeederProblem, feeder_chain
from ..findings import Basis, Detail, Finding, found, render
from ..inheritance import INSTALLATION
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import incomplete

__all__ = ["run", "tolerance_ohm"]

CHECK = "loop_consistency"


@dataclass(frozen=True, slots=True)
class _Tolerance:
    ohm: float
    fraction: float


def _tolerance(rules: Ruleset) -> _Tolerance:
    return _Tolerance(ohm=float(rules.value(CHECK, "tolerance_ohm")),
                      fraction=float(rules.value(CHECK, "tolerance_fraction")))


def _basis(rules: Ruleset) -> Basis:
    return Basis(id=f"{CHECK}.basis", text=rules.value(CHECK, "basis"))


def tolerance_ohm(view: CircuitView, expected_ohm: float) -> float:
    tolerance = derived(view.ruleset, _tolerance)
    return tolerance.ohm + tolerance.fraction * expected_ohm


def _origin_ze(view: CircuitView, ctx: Context) -> tuple[Reading, str] | FeederProblem | None:
    own = view.read.ze_ohm
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
        found_ze = board_ze(top, ctx).measured_ze_ohm
        if found_ze is not None:
            return Reading(value=found_ze), f"origin board {top}"
    return None


def _verdict(method: str, zs: Reading, expected: float, tol: float, basis: Basis, what: Detail,
             hint: Detail, inputs: dict[str, Any]) -> Finding:
    lo, hi = zs.lower, zs.upper
    least = max(0.0, lo - expected, expected - hi)
    most = max(abs(hi - expected), abs(expected - lo))
    exact = math.isfinite(most) and zs.exact
    deviation = (zs.value - expected) if exact and zs.value is not None else None
    if most <= tol:
        outcome = Outcome.PASS
        detail = lambda: (f"Zs {zs.display('Ω')} agrees with {render(what)} = {expected:.3g} Ω "  # noqa: E731
                          f"(within ±{tol:.3g} Ω)")
    elif least > tol:
        side = "above" if lo > expected else "below"
        outcome = Outcome.INVESTIGATE
        detail = lambda: (f"Zs {zs.display('Ω')} is {least:.3g} Ω {side} {render(what)} = "  # noqa: E731
                          f"{expected:.3g} Ω, beyond ±{tol:.3g} Ω; {render(hint)}")
    else:
        outcome = Outcome.INVESTIGATE
        detail = lambda: (f"Zs {zs.display('Ω')} is bounded and does not show "  # noqa: E731
                          f"agreement with {render(what)} = {expected:.3g} Ω")
    return found(CHECK, outcome, value=None if deviation is None else abs(deviation),
                 relation="=" if exact else ">", limit=tol, limit_kind="max", unit="Ω", method=method,
                 basis=basis, detail=detail,
                 inputs=lambda: {**inputs, "expected_zs_ohm": expected, "tolerance_ohm": tol,
                                 "deviation_ohm": deviation})


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    read = view.read
    zs = read.zs_ohm
    if zs is None:
        return
    basis = derived(ctx.ruleset, _basis)
    r1r2 = read.r1_r2_ohm
    if r1r2 is None or not r1r2.exact or r1r2.value is None:
        yield incomplete(CHECK, ["r1_r2_ohm"], basis=basis,
                         detail="needs an exact R1+R2 reading to compare Zs with Ze + R1+R2")
        return
    board = board_ze(view.record.board, ctx)
    consensus = board.consensus_ohm
    circuits = len(board.estimates)

    def said() -> str:
        if consensus is None:
            return ""
        return f"; the board's circuits put Ze at {consensus:.3g} Ω (median of {circuits})"

    r1r2_ohm = r1r2.value
    yield from _against_ze(view, ctx, zs, r1r2_ohm, basis, said, consensus)
    estimate = board.estimates.get(view.record.circuit)
    if consensus is None or estimate is None:
        return
    expected = consensus + r1r2_ohm
    yield _verdict("board_consensus", zs, expected, tolerance_ohm(view, expected), basis,
                   lambda: f"the board's consensus Ze {consensus:.3g} Ω + R1+R2 {r1r2_ohm:.3g} Ω",
                   "this circuit's Zs or R1+R2 reading disagrees with the other circuits on the board",
                   {"consensus_ze_ohm": consensus, "circuits": circuits, "estimate_ze_ohm": estimate,
                    "r1_r2_ohm": r1r2_ohm})


def _against_ze(view: CircuitView, ctx: Context, zs: Reading, r1r2: float, basis: Basis,
                said: Callable[[], str], consensus: float | None) -> Iterator[Finding]:
    origin = _origin_ze(view, ctx)
    if view.read.earthing == "TT" and not (
        isinstance(origin, tuple) and origin[1] in ("record", INSTALLATION, f"board {view.record.board}")
    ):
        # On TT the fault loop returns through this installation's own electrode (RA),
        # not through the supply's earth: a Ze inherited from an upstream TN board says
        # nothing about it. Only a Ze measured on this TT board compares; else the check
        # does not apply (loop_impedance and earth_electrode judge the TT circuit).
        return
    if isinstance(origin, FeederProblem):
        problem = origin
        yield incomplete(CHECK, ["ze_ohm"], basis=basis, inputs={"error": problem.as_dict()},
                         detail=lambda: f"Ze at the origin cannot be found: {problem.message}")
        return
    if origin is None:
        yield incomplete(CHECK, ["ze_ohm"], basis=basis,
                         detail=lambda: f"needs Ze to compare Zs with Ze + R1+R2{said()}")
        return
    ze, ze_source = origin
    at_board = ze_source == f"board {view.record.board}" and view.source("ze_ohm") == ze_source
    label = "Zdb" if at_board else "Ze"
    if not ze.exact or ze.value is None:
        yield incomplete(CHECK, ["ze_ohm"], basis=basis,
                         detail=lambda: f"{label} {ze.display('Ω')} is not an exact reading{said()}")
        return
    chain = () if at_board else feeder_chain(view.record.board, ctx)
    feeders: list[str] = []
    upstream = 0.0
    if not isinstance(chain, FeederProblem):
        for record in chain:
            ref = f"{record.board}/{record.circuit}"
            reading = ctx.other_view(record).read.r1_r2_ohm  # judged like this circuit's own
            if reading is None or not reading.exact or reading.value is None:
                yield incomplete(CHECK, [f"{ref} r1_r2_ohm"], basis=basis,
                                 detail=f"needs the exact R1+R2 of feeder {ref}, part of this loop")
                return
            upstream += reading.value
            feeders.append(ref)
    ze_ohm = ze.value
    expected = ze_ohm + upstream + r1r2

    def what() -> str:
        return f"{label} {ze_ohm:.3g} Ω" + (f" + feeders {upstream:.3g} Ω" if feeders else "") \
            + f" + R1+R2 {r1r2:.3g} Ω"

    inputs: dict[str, Any] = {"ze_ohm": ze_ohm, "ze_source": ze_source, "r1_r2_ohm": r1r2,
                              "feeders": feeders, "feeders_r1_r2_ohm": upstream}
    if consensus is not None:
        inputs["consensus_ze_ohm"] = consensus
    yield _verdict("ze_plus_r1r2", zs, expected, tolerance_ohm(view, expected), basis, what,
                   lambda: "check the readings, connections at the board and for parallel earth "
                           f"paths{said()}",
                   inputs)
