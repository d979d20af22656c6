"""Ring final circuit: end-to-end and cross-connected readings against GN3/OSG tolerances and E11."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, build_record, verify

# E11 [derived]: a 50 m ring of 2.5/1.5 T&E: r1 = rn = 0.3705 Ω, r2 = 0.605 Ω (IEC 60228 ratio 1.633),
# R1+R2 = (r1 + r2)/4 = 0.244 Ω.
E11 = {"circuit_form": "ring", "line_mm2": 2.5, "cpc_mm2": 1.5, "ring_r1_ohm": 0.3705,
       "ring_rn_ohm": 0.3705, "ring_r2_ohm": 0.605, "r1_r2_ohm": 0.244}


def ring(**fields: Any) -> dict[str, CheckResult]:
    record, errors = build_record({"board": "B", "circuit": "1", **fields})
    assert record is not None and not errors
    [verdict] = verify([record])
    results = [c for c in verdict.checks if c.check == "ring_continuity"]
    by_method: dict[str, CheckResult] = {}
    for check in results:
        by_method[check.method or f"incomplete:{','.join(check.inputs.get('missing', []))}"] = check
    return by_method


def test_e11_ring_passes_all_three_comparisons() -> None:
    """E11's readings pass r1 vs rn, r2 vs r1 × 1.633 and R1+R2 vs (r1 + r2)/4 [derived]."""
    results = ring(**E11)
    assert set(results) == {"r1_vs_rn", "r2_vs_r1", "cross_connected"}
    assert all(c.outcome == "pass" for c in results.values())
    assert results["r2_vs_r1"].inputs["ratio"] == pytest.approx(12.1 / 7.41)
    assert results["r2_vs_r1"].inputs["ratio_basis"] == "iec60228_resistance"


def test_r1_vs_rn_tolerance_is_0_05_ohm() -> None:
    """r1 and rn within 0.05 Ω of each other (GN3/OSG guidance [secondary]); 0.06 Ω apart → investigate."""
    assert ring(**{**E11, "ring_rn_ohm": 0.41})["r1_vs_rn"].outcome == "pass"
    off = ring(**{**E11, "ring_rn_ohm": 0.4305})["r1_vs_rn"]
    assert off.outcome == "investigate"
    assert off.value == pytest.approx(0.06)


def test_r2_uses_the_larger_of_5_percent_and_0_05_ohm() -> None:
    """r2 vs r1 × ratio: ±5 % (common practice) or 0.05 Ω, whichever is larger; 1.67 area ratio (E11's 0.619
    [secondary]) sits inside, a 1.0 mm² cpc's ratio does not."""
    assert ring(**{**E11, "ring_r2_ohm": 0.619})["r2_vs_r1"].outcome == "pass"
    long_ring = {**E11, "ring_r1_ohm": 1.5, "ring_rn_ohm": 1.5, "r1_r2_ohm": (1.5 + 2.45) / 4}
    assert ring(**{**long_ring, "ring_r2_ohm": 2.45})["r2_vs_r1"].outcome == "pass"
    check = ring(**{**long_ring, "ring_r2_ohm": 2.70})["r2_vs_r1"]
    assert check.outcome == "investigate"
    assert check.limit == pytest.approx(0.05 * 1.5 * 12.1 / 7.41)


def test_area_ratio_when_a_size_is_not_tabulated() -> None:
    """An untabulated cpc size falls back to the area ratio A_line/A_cpc, and says so."""
    check = ring(**{**E11, "cpc_mm2": 1.25, "ring_r2_ohm": 0.3705 * 2})["r2_vs_r1"]
    assert check.inputs["ratio_basis"] == "area"
    assert check.inputs["ratio"] == pytest.approx(2.0)


@pytest.mark.parametrize(("r1r2", "outcome"), [(0.244, "pass"), (0.29, "pass"), (0.30, "investigate"),
                                               (0.18, "investigate")])
def test_cross_connected_within_0_05_ohm(r1r2: float, outcome: str) -> None:
    """R1+R2 within 0.05 Ω of (r1 + r2)/4 = 0.244 Ω (GN3/OSG [secondary]); higher (spur) or lower flagged."""
    assert ring(**{**E11, "r1_r2_ohm": r1r2})["cross_connected"].outcome == outcome


def test_open_ring_is_a_fail() -> None:
    """An end-to-end reading over range means the ring is open: fail."""
    results = ring(**{**E11, "ring_rn_ohm": "OL"})
    assert results["end_to_end_open"].outcome == "fail"
    assert results["end_to_end_open"].inputs["open"] == ["rn"]
    assert "r1_vs_rn" not in results


def test_missing_readings_are_incomplete_per_comparison() -> None:
    """Each comparison lacking a reading is incomplete and names it."""
    results = ring(circuit_form="ring", ring_r1_ohm=0.37, line_mm2=2.5, cpc_mm2=1.5)
    assert results["incomplete:ring_rn_ohm"].outcome == "incomplete"
    assert results["incomplete:ring_r2_ohm"].outcome == "incomplete"
    no_r1r2 = ring(**{k: v for k, v in E11.items() if k != "r1_r2_ohm"})
    assert no_r1r2["incomplete:r1_r2_ohm"].outcome == "incomplete"


def test_bounded_readings_that_do_not_settle_are_investigate() -> None:
    """'<0.5' against 0.37 Ω cannot show the 0.05 Ω agreement: investigate, not pass."""
    assert ring(**{**E11, "ring_rn_ohm": "<0.5"})["r1_vs_rn"].outcome == "investigate"


def test_radial_circuit_has_no_ring_check() -> None:
    """The check applies only to rings: a record that says radial gets none, even with an end-to-end
    reading."""
    assert ring(circuit_form="radial", ring_r1_ohm=0.37, r1_r2_ohm=0.5) == {}
    assert ring(r1_r2_ohm=0.5) == {}  # nothing says ring: the default radial
