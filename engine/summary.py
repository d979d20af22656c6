"""Counting verdicts by outcome, and the safety notice every verdict response carries."""

from __future__ import annotations

from collections.abc import Iterable

from .compact import CompactVerdict
from .results import OUTCOME_TEXT, Outcome, Verdict

__all__ = ["NOTICE", "summarise"]

NOTICE = (
    "Decision aid only: these verdicts are computed from the readings as recorded and "
    "cannot see the installation. Testing must be done by competent persons using safe "
    "isolation procedures; the person who signs the report decides, and local codes and "
    "licensed practice prevail."
)


def summarise(verdicts: Iterable[Verdict] | Iterable[CompactVerdict]) -> dict[str, int]:
    """Circuits by outcome, of full or compact verdicts alike."""
    counts = {o.value: 0 for o in (Outcome.PASS, Outcome.FAIL, Outcome.INVESTIGATE,
                                   Outcome.INCOMPLETE)}
    total = 0
    for verdict in verdicts:
        counts[verdict["outcome"] if isinstance(verdict, dict) else OUTCOME_TEXT[verdict.outcome]] += 1
        total += 1
    return {"circuits": total, **counts}
