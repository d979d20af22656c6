"""External earth fault loop impedance Ze against the typical declared maxima (OSG).

Invariants:
- Applies where ``ze_ohm`` is recorded and the ruleset has declared maxima
  (``external_impedance.applies``); the iec-60364 ruleset has none — declared
  values are national — so there the check is left out.
- A declared maximum is the network operator's statement of what its network
  gives, not a limit of BS 7671: above it → ``investigate`` (confirm with the
  operator; a high Ze may mean a deteriorated supply earth, and the design
  figures of every circuit rest on it), never ``fail``. The circuits' own
  ``loop_impedance`` checks carry the regulation limit.
- TT: the 21 Ω figure is the operator's own part; a measured Ze runs through the
  installation's electrode too. Where ``ra_ohm`` is recorded (exact readings),
  Ze − RA is compared; otherwise Ze above 21 Ω → investigate, asking for RA.
- Earthing unknown → incomplete; IT (no declared figure) → left out.
- The declared maxima are the supply's, at the origin: a Ze a circuit inherits
  from a sub-board's record is that board's Zdb (the sub-main is in it), so it
  is not compared with them; ``zdb_vs_feeder`` judges it instead.
- On the circuits of a sub-board with a board record, a second result judges
  the board's Zdb against its feeder (method ``zdb_vs_feeder``,
  :mod:`engine.checks.zdb_feeder`), in every ruleset: it needs no declared figure.
"""

from __future__ import annotations

from collections.abc import Iterator

from ..compiled import basis
from ..context import CircuitView, Context
from ..feeders import feeder_chain
from ..findings import Finding, found
from ..inheritance import board_source
from ..plausibility import Withheld
from ..readings import Reading
from ..results import Outcome
from ._compare import Side, compare_max, incomplete
from .zdb_feeder import zdb_vs_feeder

__all__ = ["run"]

CHECK = "external_impedance"
SECTION = "external_impedance"


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    try:
        yield from _declared(view, ctx)
    except Withheld as exc:  # the board's Zdb is judged apart from this circuit's Ze
        yield exc.result(CHECK, view.record.key)
    board = zdb_vs_feeder(view, ctx)
    if board is not None:
        yield board


def _declared(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    board = view.record.board
    if view.source("ze_ohm") == board_source(board) and feeder_chain(board, ctx) != ():
        return  # a sub-board's Zdb, not the supply's Ze (judged against its feeder instead)
    read = view.read
    ze = read.ze_ohm
    if ze is None or not rules.get(SECTION, "applies", False):
        return
    declared = basis(rules, SECTION, "typical_max_ohm")
    earthing = read.earthing
    if earthing is None:
        yield incomplete(CHECK, ["earthing"], basis=declared,
                         detail="the typical declared Ze depends on the earthing arrangement")
        return
    maxima: dict[str, float] = rules.value(SECTION, "typical_max_ohm")
    if earthing not in maxima:
        return
    limit = float(maxima[earthing])
    side = compare_max(ze, limit)
    method = "declared_maximum"
    value, relation = ze.value, ze.relation
    ra = read.ra_ohm
    note = ""
    if earthing == "TT" and side is not Side.WITHIN and ra is not None and ze.exact and ra.exact:
        assert ze.value is not None and ra.value is not None
        value = ze.value - ra.value
        side = compare_max(Reading(value=max(value, 0.0)), limit)
        method, note = "operator_part_ze_minus_ra", f" (Ze − RA = {value:.4g} Ω)"
    inputs = {"earthing": earthing, "typical_max_ohm": limit, "ze": ze.to_json()}
    if side is Side.WITHIN:
        outcome = Outcome.PASS
        tail = ""
    else:
        outcome = Outcome.INVESTIGATE
        tail = (": not a regulation limit, but confirm the supply with the network operator and check that "
                "the design used this Ze")
        if earthing == "TT" and method == "declared_maximum":
            tail += "; for TT the figure excludes the installation's electrode (record RA)"
            inputs["missing"] = ["ra_ohm"] if ra is None else []
    word = "within" if outcome is Outcome.PASS else "above"
    yield found(CHECK, outcome, value=value, relation=relation, limit=limit, limit_kind="max", unit="Ω",
                method=method, basis=declared, inputs=inputs,
                detail=lambda: f"Ze {ze.display('Ω')}{note} is {word} the {limit:g} Ω typically declared for "
                               f"{earthing}{tail}")
