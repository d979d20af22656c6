"""Overload: Ib ≤ In ≤ Iz (BS 7671 Reg. 433.1.1; from memory) with Iz from Appendix 4.

Every Iz value used here is from memory (BS 7671 Table 4D5 for flat twin-and-earth: 1.5 mm² method C
20 A, 2.5 mm² method C 27 A, method 103 13.5 A, method A 20 A; Tables 4D1A/4D2A/4E2A as IEC 60364-5-52
Annex B); the ruleset marks them so, and these tests are evidence of the arithmetic, not of the
printed values. The ring rule (Reg. 433.1.204) and 0.725 for BS 3036 (Reg. 433.1.202) are from memory.
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify

TE = {"cable_type": "twin_and_earth", "device_kind": "breaker", "device_curve": "B"}


def _ol(ruleset: str | None = None, **fields: Any) -> dict[str, CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    found = [c for c in verify([record], ruleset)[0].checks if c.check == "overload"]
    return {c.method or "incomplete": c for c in found}


@pytest.mark.parametrize(("ib", "outcome"), [(19.9, Outcome.PASS), (20, Outcome.PASS), (20.1, Outcome.FAIL)])
def test_design_current_within_the_rating(ib: float, outcome: Outcome) -> None:
    """Ib ≤ In (Reg. 433.1.1): Ib above In fails."""
    assert _ol(device_rating_a=20, design_current_a=ib)["ib_le_in"].outcome is outcome


def test_b40_on_1_5_mm2_fails_whatever_the_method() -> None:
    """B40 on 1.5 mm² copper: above the most any table gives for 1.5 mm² at 70 °C (22 A), so a fail."""
    found = _ol(device_kind="breaker", device_curve="B", device_rating_a=40, line_mm2=1.5)["in_le_iz"]
    assert found.outcome is Outcome.FAIL and found.limit == 22


@pytest.mark.parametrize(("method", "rating", "outcome"), [("C", 27, Outcome.PASS), ("C", 27.5, Outcome.FAIL),
                                                           ("103", 13.5, Outcome.PASS),
                                                           ("103", 16, Outcome.FAIL)])
def test_in_within_iz_at_the_boundary(method: str, rating: float, outcome: Outcome) -> None:
    """2.5 mm² T&E: method C 27 A, method 103 13.5 A (Table 4D5, from memory): at Iz passes, above fails."""
    found = _ol(line_mm2=2.5, reference_method=method, device_rating_a=rating, **TE)["in_le_iz"]
    assert found.outcome is outcome


def test_unknown_method_is_incomplete_between_the_tables() -> None:
    """B20 on 2.5 mm² T&E without a method: 13.5–27 A, so incomplete naming reference_method."""
    found = _ol(line_mm2=2.5, device_rating_a=20, **TE)["incomplete"]
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["reference_method"]
    small = _ol(line_mm2=2.5, device_rating_a=6, **TE)["in_le_iz"]  # within every method's Iz
    assert small.outcome is Outcome.PASS and small.limit == 13.5


@pytest.mark.parametrize(("grouping", "outcome"), [(0.75, Outcome.PASS), (0.74, Outcome.FAIL)])
def test_correction_factors(grouping: float, outcome: Outcome) -> None:
    """Iz = It × Ca × Cg × Ci: 27 A × 0.75 = 20.25 A holds a B20; × 0.74 = 19.98 A does not."""
    found = _ol(line_mm2=2.5, reference_method="C", device_rating_a=20, grouping_factor=grouping, **TE)
    assert found["in_le_iz"].outcome is outcome


def test_unrecorded_factors_are_reported_as_defaults() -> None:
    """Factors the record leaves out count as 1, and the verdict says so."""
    record, _ = build_record({"board": "B", "circuit": "1", "line_mm2": 2.5, "reference_method": "C",
                              "device_rating_a": 20, **TE})
    assert record is not None
    assert {"ambient_factor", "grouping_factor", "thermal_insulation_factor"} <= set(
        verify([record])[0].defaults_applied)


@pytest.mark.parametrize(("rating", "outcome"), [(19, Outcome.PASS), (20, Outcome.FAIL)])
def test_rewirable_fuse_needs_0_725_iz(rating: float, outcome: Outcome) -> None:
    """BS 3036: In ≤ 0.725 Iz (Reg. 433.1.202): 0.725 × 27 = 19.575 A."""
    found = _ol(line_mm2=2.5, reference_method="C", cable_type="twin_and_earth", device_kind="fuse",
                device_standard="BS 3036", device_rating_a=rating)["in_le_iz"]
    assert found.outcome is outcome


@pytest.mark.parametrize(("method", "outcome"), [("C", Outcome.PASS), ("A", Outcome.PASS),
                                                 ("103", Outcome.FAIL)])
def test_ring_on_32_a_needs_iz_of_20_a(method: str, outcome: Outcome) -> None:
    """Reg. 433.1.204: a 2.5 mm² ring on 32 A needs Iz ≥ 20 A: C 27, A 20 (at the limit), 103 13.5 A."""
    found = _ol(circuit_form="ring", line_mm2=2.5, reference_method=method, device_rating_a=32, **TE)
    assert found["ring_433_1_204"].outcome is outcome


def test_ring_on_40_a_fails() -> None:
    """A 2.5 mm² ring on 40 A is outside 433.1.204: the general rule, and 40 A is above any 2.5 mm² Iz."""
    found = _ol(circuit_form="ring", line_mm2=2.5, device_rating_a=40, **TE)["in_le_iz"]
    assert found.outcome is Outcome.FAIL


def test_designers_iz_above_the_table_is_investigate() -> None:
    """cable_iz_a 30 A, Table 4D5 27 A: a B28 that passes on the designer's figure alone is investigate."""
    found = _ol(line_mm2=2.5, reference_method="C", device_rating_a=28, cable_iz_a=30, **TE)["in_le_iz"]
    assert found.outcome is Outcome.INVESTIGATE and found.inputs["table_iz_a"] == 27
    within = _ol(line_mm2=2.5, reference_method="C", device_rating_a=25, cable_iz_a=30, **TE)["in_le_iz"]
    assert within.outcome is Outcome.PASS
    assert _ol(device_rating_a=40, cable_iz_a=32)["in_le_iz"].outcome is Outcome.FAIL


def test_iec_ruleset_has_no_twin_and_earth_table_nor_ring_rule() -> None:
    """IEC 60364-5-52 has no flat twin-and-earth table; a ring is judged by the general rule there."""
    found = _ol("iec-60364", line_mm2=2.5, reference_method="C", device_rating_a=20, **TE)["incomplete"]
    assert "cable_iz_a" in found.inputs["missing"]
    multicore = _ol("iec-60364", line_mm2=2.5, reference_method="C", cable_type="multicore",
                    device_rating_a=20)["in_le_iz"]
    assert multicore.outcome is Outcome.PASS and multicore.limit == 27  # IEC B.52.2, method C, from memory


def test_impossible_factor_is_investigate() -> None:
    """A grouping factor above 1 raises a rating, which no grouping does (derived): withheld."""
    found = _ol(line_mm2=2.5, reference_method="C", device_rating_a=20, grouping_factor=1.2, **TE)
    assert found["implausible_value"].outcome is Outcome.INVESTIGATE
