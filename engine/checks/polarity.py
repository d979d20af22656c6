"""Polarity: the tester's recorded true/false, nothing to compute.

BS 7671 643.6 / IEC 60364-6 6.4.3.6 require polarity to be verified; a recorded
``false`` is a fail, a missing record is ``incomplete`` (polarity applies to
every circuit).
"""

from __future__ import annotations

from collections.abc import Iterator

from ..context import CircuitView, Context
from ..results import CheckResult, Outcome
from ._compare import incomplete

__all__ = ["run"]

CHECK = "polarity"


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    basis = ctx.ruleset.basis("polarity", "requirement")
    ok = view.raw("polarity_ok")
    if ok is None:
        yield incomplete(CHECK, ["polarity_ok"], basis=basis)
        return
    yield CheckResult(
        check=CHECK,
        outcome=Outcome.PASS if ok else Outcome.FAIL,
        method="recorded",
        basis=basis,
        detail="polarity recorded as correct" if ok
        else "polarity recorded as incorrect: single-pole devices must be in the line conductor",
    )
