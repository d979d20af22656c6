"""Polarity: the tester's recorded true/false, nothing to compute.

BS 7671 643.6 / IEC 60364-6 6.4.3.6 require polarity to be verified; a recorded
``false`` is a fail, a missing record is ``incomplete`` (polarity applies to
every circuit).
"""

from __future__ import annotations

from collections.abc import Iterator

from ..compiled import basis
from ..context import CircuitView, Context
from ..findings import Finding, found
from ..results import Outcome
from ._compare import incomplete

__all__ = ["run"]

CHECK = "polarity"


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    requirement = basis(ctx.ruleset, "polarity", "requirement")
    ok = view.read.polarity_ok
    if ok is None:
        yield incomplete(CHECK, ["polarity_ok"], basis=requirement)
        return
    yield found(CHECK, Outcome.PASS if ok else Outcome.FAIL, method="recorded", basis=requirement,
                detail="polarity recorded as correct" if ok
                else "polarity recorded as incorrect: single-pole devices must be in the line conductor")
