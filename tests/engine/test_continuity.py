"""Continuity: R1+R2 and R2 against the values expected from IEC 60228 and the handbook examples."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, build_record, verify


def continuity(**fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "B", "circuit": "1", **fields})
    assert record is not None and not errors
    [verdict] = verify([record])
    return [c for c in verdict.checks if c.check == "continuity"]


def one(**fields: Any) -> CheckResult:
    [check] = continuity(**fields)
    return check


# E1: 50 m of twin & earth at 20 °C, Guide to the Wiring Regulations App. 4 Table 4.3 [secondary]
E1 = {(1.5, 1.0): 1.51, (2.5, 1.5): 0.98, (4, 1.5): 0.84, (6, 2.5): 0.52, (10, 4): 0.32, (16, 6): 0.211}


@pytest.mark.parametrize(("pair", "r1r2"), sorted(E1.items()))
def test_e1_handbook_readings_pass_with_their_expected_value(pair: tuple[float, float], r1r2: float) -> None:
    """E1: 50 m of T&E reads the handbook's R1+R2; expected from IEC 60228 agrees to 1 % and it passes."""
    line, cpc = pair
    check = one(r1_r2_ohm=r1r2, line_mm2=line, cpc_mm2=cpc, length_m=50)
    assert check.method == "expected_iec60228"
    assert check.inputs["expected_ohm"] == pytest.approx(r1r2, rel=0.01)
    assert check.inputs["ratio"] == pytest.approx(1.0, abs=0.01)
    assert check.outcome == "pass"


def test_threshold_is_1_25_times_expected_plus_0_05() -> None:
    """Investigate above 1.25 × expected + 0.05 Ω ('Choices' [practice]); E1 2.5/1.5: 1.269 Ω."""
    expected = (7.41 + 12.1) * 50 / 1000  # IEC 60228 [standard/secondary], 20 °C
    threshold = 1.25 * expected + 0.05
    below = one(r1_r2_ohm=round(threshold - 0.001, 4), line_mm2=2.5, cpc_mm2=1.5, length_m=50)
    above = one(r1_r2_ohm=round(threshold + 0.001, 4), line_mm2=2.5, cpc_mm2=1.5, length_m=50)
    assert below.limit == pytest.approx(threshold)
    assert (below.outcome, above.outcome) == ("pass", "investigate")
    assert "expected" in above.detail


def test_far_below_expected_is_investigate() -> None:
    """Half the expected value, less 0.05 Ω, points to a wrong length or a parallel path [practice, our
    choice]."""
    check = one(r1_r2_ohm=0.3, line_mm2=2.5, cpc_mm2=1.5, length_m=50)
    assert check.outcome == "investigate"
    assert "parallel" in check.detail


def test_test_temperature_raises_the_expected_value() -> None:
    """At 30 °C the IEC 60228 maxima rise by 1 + 0.00393 × 10 (IEC 60228 Annex B, copper [secondary])."""
    check = one(r1_r2_ohm=1.0, line_mm2=2.5, cpc_mm2=1.5, length_m=50, test_temp_c=30)
    assert check.inputs["expected_ohm"] == pytest.approx(0.9755 * (254.5 + 10) / 254.5, rel=1e-4)


def test_aluminium_expected_value() -> None:
    """Aluminium 16/16 over 30 m: (1.91 + 1.91) Ω/km × 30 m (IEC 60228 Table 2, aluminium [secondary])."""
    check = one(r1_r2_ohm=0.12, line_mm2=16, cpc_mm2=16, length_m=30, conductor_material="aluminium")
    assert check.inputs["expected_ohm"] == pytest.approx(2 * 1.91 * 30 / 1000)
    assert check.outcome == "pass"


def test_e2_measured_r2_against_r_cpc_times_length() -> None:
    """E2: 22 m of 2.5/1.5 reads R2 = 0.266 Ω (OSG [secondary]); expected 12.1 mΩ/m × 22 m, a pass."""
    r1r2, r2 = continuity(r1_r2_ohm=0.429, r2_ohm=0.266, line_mm2=2.5, cpc_mm2=1.5, length_m=22)
    assert r1r2.outcome == r2.outcome == "pass"
    assert r2.method == "r2_expected_iec60228"
    assert r2.inputs["expected_ohm"] == pytest.approx(0.266, rel=0.001)


def test_r2_above_r1r2_is_investigate() -> None:
    """R2 is part of R1+R2, so a larger R2 is a mis-recording (physics [derived])."""
    _, r2 = continuity(r1_r2_ohm=0.4, r2_ohm=0.5)
    assert r2.outcome == "investigate"
    assert r2.method == "r2_within_r1r2"


@pytest.mark.parametrize("field", ["r1_r2_ohm", "r2_ohm"])
def test_over_range_is_a_fail(field: str) -> None:
    """An OL continuity reading means an open line or protective conductor: fail."""
    results = continuity(**{"r1_r2_ohm": 0.5, field: "OL"})
    assert "fail" in [c.outcome for c in results]


def test_missing_r1r2_is_incomplete_and_says_why() -> None:
    """Continuity applies to every circuit: no R1+R2 → incomplete naming the field."""
    check = one(device_rating_a=20)
    assert check.outcome == "incomplete"
    assert check.inputs["missing"] == ["r1_r2_ohm"]
    assert "every circuit" in check.detail


def test_missing_r1r2_on_a_ring_gives_the_end_to_end_estimate() -> None:
    """E11 [derived]: ring r1 = 0.3705, r2 = 0.605 Ω → R1+R2 should read (r1 + r2)/4 = 0.244 Ω."""
    check = one(circuit_form="ring", ring_r1_ohm=0.3705, ring_rn_ohm=0.3705, ring_r2_ohm=0.605)
    assert check.outcome == "incomplete"
    assert check.inputs["ring_estimate_ohm"] == pytest.approx(0.244, abs=5e-4)


def test_ring_expected_is_a_quarter_of_the_loop() -> None:
    """E11 [derived]: a 50 m ring of 2.5/1.5 expects R1+R2 = (7.41 + 12.1) × 50/4 mΩ = 0.244 Ω."""
    check = one(circuit_form="ring", r1_r2_ohm=0.25, line_mm2=2.5, cpc_mm2=1.5, length_m=50)
    assert check.inputs["expected_ohm"] == pytest.approx(0.244, abs=5e-4)
    assert check.outcome == "pass"


def test_without_cable_data_the_reading_is_recorded() -> None:
    """With no length or sizes the reading passes as recorded and says what would let it be compared."""
    check = one(r1_r2_ohm=0.5)
    assert (check.outcome, check.method, check.limit) == ("pass", "recorded", None)
    assert "length, line size and cpc size" in check.detail  # the trade's words, not field names
