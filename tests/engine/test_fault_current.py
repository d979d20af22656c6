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


@pytest.mark.parametrize(("pfc", "outcome"), [(4.99, Outcome.PASS), (5.0, Outcome.PASS),
                                              (5.01, Outcome.FAIL)])
def test_three_phase_circuit_judged_on_twice_the_line_neutral_figure(pfc: float, outcome: Outcome) -> None:
    """Three-phase PSCC ≈ 2 × line–neutral PSCC (common practice, IET OSG; derived from equal impedances):
    a 10 kA device passes 5 kA L–N (10 kA three-phase) and fails 5.01 kA; 6 kA L–N passed before."""
    found = _pfc(pfc_ka=pfc, device_breaking_ka=10, phases=3)
    capacity = next(c for c in found if c.method == "three_phase_estimate")
    assert capacity.outcome is outcome and capacity.value == pytest.approx(2 * pfc)
    assert _pfc(pfc_ka=6, device_breaking_ka=10)[0].outcome is Outcome.PASS  # single-phase: 6 ≤ 10
    assert _pfc(pfc_ka=6, device_breaking_ka=10, phases=3)[0].outcome is Outcome.FAIL


@pytest.mark.parametrize(("pfc", "outcome"), [(0.52, Outcome.INVESTIGATE), (0.53, Outcome.PASS),
                                              (1.05, Outcome.PASS)])
def test_pfc_below_what_ze_implies_is_investigate(pfc: float, outcome: Outcome) -> None:
    """Ze 0.22 Ω → U0/Ze = 1.045 kA (derived); a PFC below half of it [practice] contradicts the readings."""
    found = next(c for c in _pfc(pfc_ka=pfc, ze_ohm=0.22, device_breaking_ka=6, earthing="TN-S")
                 if c.method == "pfc_vs_ze")
    assert found.outcome is outcome


def test_pfc_far_above_u0_over_ze_on_pme_is_investigate() -> None:
    """TN-C-S: the earth path is the neutral, so PSCC ≈ PEFC; 2.2 kA with Ze 0.22 Ω (1.045 kA) disagrees,
    on TN-S (a separate earth path) it may be so."""
    pme = next(c for c in _pfc(pfc_ka=2.2, ze_ohm=0.22, device_breaking_ka=6, earthing="TN-C-S")
               if c.method == "pfc_vs_ze")
    assert pme.outcome is Outcome.INVESTIGATE
    tns = next(c for c in _pfc(pfc_ka=2.2, ze_ohm=0.22, device_breaking_ka=6, earthing="TN-S")
               if c.method == "pfc_vs_ze")
    assert tns.outcome is Outcome.PASS


def test_pfc_below_u0_over_zs_is_investigate() -> None:
    """The PFC where it was measured is at least the fault current at the circuit's end, U0/Zs (derived)."""
    found = next(c for c in _pfc(pfc_ka=0.1, zs_ohm=0.5, device_breaking_ka=6) if c.method == "pfc_vs_zs")
    assert found.outcome is Outcome.INVESTIGATE  # 0.1 kA < 0.5 × 0.46 kA
