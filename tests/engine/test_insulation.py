"""Insulation resistance against BS 7671:2018 Table 64 / IEC 60364-6 Table 6.1."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, load_builtin, verify
from engine.checks.insulation import band_for


def _ir(ruleset: str | None = None, **fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    return [c for c in verify([record], ruleset)[0].checks if c.check == "insulation"]


def _le(value: Any, ruleset: str | None = None, **fields: Any) -> CheckResult:
    fields.setdefault("ir_test_v", 500)
    found = [c for c in _ir(ruleset, ir_le_mohm=value, ir_ll_mohm=">999", **fields)
             if c.inputs.get("field") == "ir_le_mohm"]
    assert len(found) == 1
    return found[0]


@pytest.mark.parametrize("rid", ["bs7671-2018-a2", "iec-60364"])
@pytest.mark.parametrize(("circuit_v", "test_v", "minimum"), [(24, 250, 0.5), (50, 250, 0.5), (51, 500, 1.0),
                                                              (230, 500, 1.0), (500, 500, 1.0),
                                                              (501, 1000, 1.0), (690, 1000, 1.0)])
def test_minimum_by_band(rid: str, circuit_v: float, test_v: float, minimum: float) -> None:
    """SELV/PELV 250 V 0.5 MΩ; ≤ 500 V 500 V 1.0 MΩ; > 500 V 1000 V 1.0 MΩ (Table 64 / Table 6.1)
    [secondary]."""
    band = band_for(load_builtin(rid), circuit_v)
    assert (band.test_v, band.min_mohm) == (test_v, minimum)


def test_three_phase_band_uses_line_to_line_voltage() -> None:
    """U0 = 400 V three-phase is a 693 V circuit: 1000 V test (Table 64, by circuit voltage) [secondary]."""
    found = _le(50, ir_test_v=500, nominal_voltage_v=400, phases=3)
    assert found.inputs["required_test_v"] == 1000
    assert found.outcome is Outcome.INVESTIGATE


@pytest.mark.parametrize(("reading", "outcome"), [(0.99, Outcome.FAIL), (1.0, Outcome.INVESTIGATE),
                                                  (1.01, Outcome.INVESTIGATE), (1.99, Outcome.INVESTIGATE),
                                                  (2.0, Outcome.PASS), (2.01, Outcome.PASS)])
def test_boundaries_at_the_minimum_and_the_attention_level(reading: float, outcome: Outcome) -> None:
    """230 V circuit: 1.0 MΩ minimum (Table 64) [secondary]; below 2 MΩ → investigate (GN3; common
    practice)."""
    assert _le(reading).outcome is outcome


@pytest.mark.parametrize(("reading", "outcome"), [(0.49, Outcome.FAIL), (0.5, Outcome.INVESTIGATE),
                                                  (2.0, Outcome.PASS)])
def test_selv_boundaries(reading: float, outcome: Outcome) -> None:
    """SELV/PELV (24 V) at 250 V: 0.5 MΩ minimum (Table 64) [secondary]; the 2 MΩ flag is common practice."""
    assert _le(reading, nominal_voltage_v=24, ir_test_v=250).outcome is outcome


@pytest.mark.parametrize(("reading", "outcome"), [(">999", Outcome.PASS), ("> 299 MΩ", Outcome.PASS),
                                                  ("OL", Outcome.PASS), ("< 0.5", Outcome.FAIL),
                                                  ("< 5", Outcome.INVESTIGATE),
                                                  ("> 0.5", Outcome.INVESTIGATE),
                                                  ("> 1.5", Outcome.INVESTIGATE)])
def test_bounded_readings_on_both_sides(reading: str, outcome: Outcome) -> None:
    """Against 1.0 MΩ (Table 64) [secondary]: > 999 and OL pass, < 0.5 fails, an unsettling bound
    investigates."""
    assert _le(reading).outcome is outcome


def test_both_readings_judged_separately() -> None:
    """L–L and L–E each get a result, so the low one is named: 0.5 MΩ L–L fails beside a sound L–E."""
    results = _ir(ir_test_v=500, ir_ll_mohm=0.5, ir_le_mohm=">999")
    by_field = {c.inputs["field"]: c.outcome for c in results}
    assert by_field == {"ir_ll_mohm": Outcome.FAIL, "ir_le_mohm": Outcome.PASS}


def test_low_test_voltage_between_live_conductors_is_investigate() -> None:
    """250 V on a 230 V circuit: Table 64 requires 500 V; the 643.3.3 allowance covers L–E only
    [secondary]."""
    results = {c.inputs["field"]: c for c in _ir(ir_test_v=250, ir_ll_mohm=">999", ir_le_mohm=">999")}
    assert results["ir_ll_mohm"].outcome is Outcome.INVESTIGATE
    assert results["ir_le_mohm"].outcome is Outcome.PASS
    assert "643.3.3" in results["ir_le_mohm"].detail


def test_below_the_reduced_voltage_is_investigate_and_low_reading_still_fails() -> None:
    """100 V L–E is below the 250 V allowance (643.3.3) [secondary]: investigate; 0.8 MΩ fails at any
    voltage."""
    assert _le(">999", ir_test_v=100).outcome is Outcome.INVESTIGATE
    assert _le(0.8, ir_test_v=100).outcome is Outcome.FAIL


def test_higher_test_voltage_is_accepted() -> None:
    """1000 V on a 230 V circuit exceeds the 500 V Table 64 asks for [secondary]: judged normally."""
    assert _le(">999", ir_test_v=1000).outcome is Outcome.PASS


def test_missing_data_is_incomplete() -> None:
    """No readings: one incomplete naming both; one missing: incomplete for it; no test voltage too."""
    (none,) = _ir(ir_test_v=500)
    assert none.outcome is Outcome.INCOMPLETE
    assert none.inputs["missing"] == ["ir_ll_mohm", "ir_le_mohm"]
    one = {c.inputs.get("conductors"): c.outcome for c in _ir(ir_test_v=500, ir_le_mohm=">999")}
    assert one == {"between live conductors": Outcome.INCOMPLETE, "live conductors to earth": Outcome.PASS}
    no_voltage = _le(">999", ir_test_v=None)
    assert no_voltage.outcome is Outcome.INCOMPLETE and no_voltage.inputs["missing"] == ["ir_test_v"]


def test_iec_ruleset_same_minima() -> None:
    """IEC 60364-6 Table 6.1 gives the same 1.0 MΩ at 500 V [secondary]."""
    assert _le(0.99, "iec-60364").outcome is Outcome.FAIL
    assert _le(2.0, "iec-60364").outcome is Outcome.PASS
