"""PFC against breaking capacity, and the Annex ZB conditional rating (Reg. 434.5.1; Annex ZB)."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify


def _pfc(ruleset: str | None = None, **fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    return [c for c in verify([record], ruleset)[0].checks if c.check == "fault_current"]


def _one(ruleset: str | None = None, **fields: Any) -> CheckResult:
    (found,) = _pfc(ruleset, **fields)
    return found


@pytest.mark.parametrize(("pfc", "outcome"), [(5.99, Outcome.PASS), (6.0, Outcome.PASS),
                                              (6.01, Outcome.INVESTIGATE), (16.0, Outcome.INVESTIGATE),
                                              (16.01, Outcome.FAIL)])
def test_6ka_breaker_and_the_16ka_conditional_rating(pfc: float, outcome: Outcome) -> None:
    """6 kA Icn (BS EN 60898, Table C4.3) [secondary]; above, to 16 kA: Annex ZB conditional [secondary] →
    investigate."""
    assert _one(pfc_ka=pfc, device_breaking_ka=6).outcome is outcome


def test_conditional_rating_does_not_cover_three_phase() -> None:
    """Annex ZB is for single-phase consumer units ≤ 100 A [secondary]: 8 kA on a three-phase 6 kA device
    fails."""
    assert _one(pfc_ka=8, device_breaking_ka=6, phases=3).outcome is Outcome.FAIL


def test_iec_ruleset_has_no_conditional_rating() -> None:
    """Annex ZB is a UK deviation [secondary]: under IEC, 6.01 kA on a 6 kA device fails."""
    assert _one("iec-60364", pfc_ka=6.01, device_breaking_ka=6).outcome is Outcome.FAIL


@pytest.mark.parametrize(("pfc", "outcome"), [("> 20", Outcome.FAIL), ("OL", Outcome.FAIL),
                                              ("< 1.5", Outcome.PASS), ("> 2", Outcome.INVESTIGATE),
                                              ("980 A", Outcome.PASS)])
def test_bounded_readings(pfc: str, outcome: Outcome) -> None:
    """Against 6 kA [secondary]: > 20 kA and OL fail, < 1.5 kA passes, > 2 kA settles nothing; 980 A = 0.98
    kA."""
    assert _one(pfc_ka=pfc, device_breaking_ka=6).outcome is outcome


def test_missing_breaking_capacity_is_incomplete_with_a_hint() -> None:
    """No device_breaking_ka → incomplete; a BS 88-3 fuse gets the typical 16 kA as a hint (from memory)."""
    found = _one(pfc_ka=2.0, device_standard="BS 88-3")
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["device_breaking_ka"]
    assert found.inputs["typical_breaking_ka"] == 16
    assert _one(pfc_ka=2.0).outcome is Outcome.INCOMPLETE


def test_not_applicable_without_pfc() -> None:
    """No PFC reading: the check is left out."""
    assert _pfc(device_breaking_ka=6) == []
