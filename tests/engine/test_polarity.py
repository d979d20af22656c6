"""Polarity: the recorded result (BS 7671 643.6; IEC 60364-6 6.4.3.6)."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify


def _polarity(ruleset: str | None = None, **fields: Any) -> CheckResult:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    (found,) = [c for c in verify([record], ruleset)[0].checks if c.check == "polarity"]
    return found


@pytest.mark.parametrize(("recorded", "outcome"), [(True, Outcome.PASS), ("yes", Outcome.PASS),
                                                   (False, Outcome.FAIL), ("✗", Outcome.FAIL)])
def test_recorded_polarity(recorded: Any, outcome: Outcome) -> None:
    """643.6 requires polarity verified [secondary]: a recorded correct result passes, incorrect fails."""
    assert _polarity(polarity_ok=recorded).outcome is outcome


def test_missing_polarity_is_incomplete() -> None:
    """Polarity applies to every circuit: unrecorded → incomplete naming polarity_ok."""
    found = _polarity()
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["polarity_ok"]


@pytest.mark.parametrize(("rid", "clause"), [("bs7671-2018-a2", "643.6"), ("iec-60364", "6.4.3.6")])
def test_basis_names_the_clause(rid: str, clause: str) -> None:
    """The result cites the ruleset's clause (BS 7671 643.6 [secondary]; IEC 60364-6 6.4.3.6, from memory)."""
    assert clause in (_polarity(rid, polarity_ok=True).basis or "")
