"""A check passes only what the readings show: impossible and rejected values are never judged.

Each case is a finding of the audit of issue 14 (the case that used to pass must not); sources are
physics (a conductor, loop or electrode has a resistance above zero, a device takes time to trip),
BS 7671 Reg. 411.5.3 for TT loops, and the ruleset's plausibility section for ranges.
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, CircuitRecord, Outcome, Reading, build_record, verify

B32 = {"earthing": "TN-C-S", "device_kind": "breaker", "device_curve": "B", "device_rating_a": 32}


def _checks(ruleset: str | None = None, **fields: Any) -> dict[str, list[CheckResult]]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    out: dict[str, list[CheckResult]] = {}
    for check in verify([record], ruleset)[0].checks:
        out.setdefault(check.check, []).append(check)
    return out


def _one(check: str, **fields: Any) -> CheckResult:
    found = _checks(**fields)[check]
    assert len(found) == 1, found
    return found[0]


@pytest.mark.parametrize("zs", [-0.1, 0.0, "-0.02 Ω", "−0.02 Ω", "0.000"])
def test_zero_or_negative_zs_is_investigate_never_pass(zs: object) -> None:
    """Zs ≤ 0 (it passed the 0.8 rule before) is not physically possible: investigate, with the reason."""
    found = _one("loop_impedance", zs_ohm=zs, **B32)
    assert found.outcome is Outcome.INVESTIGATE and found.method == "implausible_value"
    assert found.inputs["field"] == "zs_ohm" and "above zero" in found.detail


@pytest.mark.parametrize(("zs", "outcome"), [(1e-9, Outcome.PASS), (0.01, Outcome.PASS),
                                             (0.0, Outcome.INVESTIGATE)])
def test_just_above_zero_is_judged(zs: float, outcome: Outcome) -> None:
    """The boundary: the smallest plausible Zs is judged as usual (B32, 0.8 × 1.37 Ω, Table 41.3)."""
    assert _one("loop_impedance", zs_ohm=zs, **B32).outcome is outcome


def test_negative_ring_readings_do_not_pass() -> None:
    """A negative end-to-end reading (it passed r1 vs rn before) is investigate, never a ring pass."""
    found = _checks(circuit_form="ring", line_mm2=2.5, cpc_mm2=1.5, ring_r1_ohm=-0.37, ring_rn_ohm=-0.37,
                    ring_r2_ohm=0.605, r1_r2_ohm=0.244)["ring_continuity"]
    assert [c.outcome for c in found] == [Outcome.INVESTIGATE]
    assert found[0].inputs["field"] == "ring_r1_ohm"


@pytest.mark.parametrize(("field", "value", "check"), [
    ("rcd_trip_ms", -10, "rcd_time"), ("rcd_trip_ms", 0, "rcd_time"), ("rcd_trip_5x_ms", 0, "rcd_time"),
    ("pfc_ka", -1, "fault_current"), ("ra_ohm", -50, "earth_electrode"), ("r1_r2_ohm", -0.05, "continuity"),
    ("ze_ohm", 0, "external_impedance"),
])
def test_impossible_readings_make_their_check_investigate(field: str, value: float, check: str) -> None:
    """RCD −10 ms and 0 ms, PFC −1 kA, RA −50 Ω, R1+R2 below zero, Ze 0 Ω: investigate, never pass."""
    base = {"earthing": "TT" if field == "ra_ohm" else "TN-C-S", "rcd_residual_ma": 30,
            "device_breaking_ka": 6}
    found = _checks(**base, **{field: value})[check]
    assert all(c.outcome is not Outcome.PASS for c in found)
    assert any(c.method == "implausible_value" and c.inputs["field"] == field for c in found)


def test_insulation_zero_is_a_fail_not_implausible() -> None:
    """0 MΩ is a dead short (a real reading) and fails Table 64 [secondary]; −1 MΩ cannot be: investigate."""
    found = _checks(ir_test_v=500, ir_ll_mohm=0, ir_le_mohm=-1)["insulation"]
    results = {c.inputs["field"]: c for c in found}
    assert results["ir_ll_mohm"].outcome is Outcome.FAIL
    assert results["ir_le_mohm"].outcome is Outcome.INVESTIGATE


@pytest.mark.parametrize(("field", "value"), [("rcd_residual_ma", 0), ("line_mm2", 0), ("cpc_mm2", -1.5),
                                              ("cable_mv_per_a_m", -18), ("device_rating_a", 0)])
def test_design_values_at_or_below_zero_are_refused_at_intake(field: str, value: float) -> None:
    """IΔn 0 mA, 0 mm² conductors, a negative mV/A/m, a 0 A rating: refused with a reason, and remembered."""
    record, errors = build_record({"board": "B", "circuit": "1", field: value})
    assert record is not None and [e.field for e in errors] == [field]
    assert "above zero" in errors[0].reason
    assert getattr(record, field) is None and record.rejected == {field: str(value)}


def test_a_record_built_directly_is_judged_too() -> None:
    """The same rule where no intake ran (a caller building CircuitRecord): 0 mm² is withheld, not used."""
    record = CircuitRecord(board="B", circuit="1", r1_r2_ohm=Reading(value=0.5), line_mm2=0.0,
                           cpc_mm2=1.5, device_rating_a=10.0)
    drop = next(c for c in verify([record])[0].checks if c.check == "voltage_drop")
    assert drop.outcome is Outcome.INVESTIGATE and drop.inputs["field"] == "line_mm2"


def test_negative_mv_per_a_m_on_a_built_record_never_passes() -> None:
    """A negative drop from a negative mV/A/m passed the limit before; now the value is withheld."""
    record = CircuitRecord(board="B", circuit="1", cable_mv_per_a_m=-18.0, length_m=20.0,
                           design_current_a=16.0)
    drop = next(c for c in verify([record])[0].checks if c.check == "voltage_drop")
    assert drop.outcome is Outcome.INVESTIGATE


@pytest.mark.parametrize(("test_temp", "insulation", "outcome"), [
    (59, 60, Outcome.PASS), (60, 60, Outcome.INVESTIGATE), (40, 60, Outcome.PASS),
    (75, 70, Outcome.INVESTIGATE)])
def test_maximum_conductor_temperature_must_exceed_the_test_temperature(test_temp: float, insulation: float,
                                                                        outcome: Outcome) -> None:
    """θmax at or below θtest makes F ≤ 1 (derived): investigate (75 °C is also above the 60 °C range)."""
    fields = {"r1_r2_ohm": 0.1, "design_current_a": 10, "insulation_temp_c": insulation,
              "test_temp_c": test_temp}
    assert _one("voltage_drop", **fields).outcome is outcome


@pytest.mark.parametrize(("test_temp", "outcome"), [(-20.5, Outcome.INVESTIGATE), (-20, Outcome.PASS),
                                                    (60, Outcome.PASS), (60.1, Outcome.INVESTIGATE)])
def test_test_temperature_range(test_temp: float, outcome: Outcome) -> None:
    """Plausible test temperatures −20…60 °C inclusive [practice]; 90 °C cable keeps θmax above."""
    fields = {"r1_r2_ohm": 0.1, "design_current_a": 10, "insulation_temp_c": 90, "test_temp_c": test_temp}
    assert _one("voltage_drop", **fields).outcome is outcome


@pytest.mark.parametrize(("u0", "outcome"), [(1000, Outcome.PASS), (1000.1, Outcome.INVESTIGATE),
                                             (2300, Outcome.INVESTIGATE)])
def test_u0_outside_what_the_ruleset_covers(u0: float, outcome: Outcome) -> None:
    """U0 above 1000 V (scope of BS 7671 Reg. 110.1.1, from memory; 2300 is a typo for 230): investigate."""
    found = _one("voltage_drop", r1_r2_ohm=0.1, design_current_a=10, nominal_voltage_v=u0)
    assert found.outcome is outcome


@pytest.mark.parametrize(("zs", "outcome"), [(89.9, Outcome.INVESTIGATE), (89.95, Outcome.PASS),
                                             (120, Outcome.PASS)])
def test_tt_zs_below_ra_is_impossible(zs: float, outcome: Outcome) -> None:
    """TT: the loop runs through the electrode, so Zs ≥ RA (Reg. 411.5.3); RA 100 Ω, tolerance 0.05 Ω + 10 %
    [practice]. Zs 20 Ω under RA 100 Ω passed before."""
    found = _one("loop_impedance", earthing="TT", ra_ohm=100, zs_ohm=zs, rcd_residual_ma=30)
    assert found.outcome is outcome
    assert _one("loop_impedance", earthing="TT", ra_ohm=100, zs_ohm=20, rcd_residual_ma=30).outcome \
        is Outcome.INVESTIGATE


def test_tt_ze_below_ra_is_impossible_for_every_check_that_reads_them() -> None:
    """Ze 10 Ω under RA 100 Ω on TT (Ze − RA < 0 passed the declared-Ze check before): investigate."""
    checks = _checks(earthing="TT", ra_ohm=100, ze_ohm=10, rcd_residual_ma=30)
    assert checks["external_impedance"][0].outcome is Outcome.INVESTIGATE
    assert all(c.outcome is not Outcome.PASS for c in checks["earth_electrode"])


def test_rejected_test_temperature_is_never_replaced_by_the_default() -> None:
    """−300 °C is rejected; before, 20 °C was used and the circuit passed. Now: incomplete, naming it."""
    record, errors = build_record({"board": "B", "circuit": "1", "test_temp_c": -300, "r1_r2_ohm": 0.1,
                                   "design_current_a": 10})
    assert record is not None and [e.field for e in errors] == ["test_temp_c"]
    [verdict] = verify([record])
    drop = next(c for c in verdict.checks if c.check == "voltage_drop")
    assert drop.outcome is Outcome.INCOMPLETE and drop.method == "rejected_value"
    assert drop.inputs["rejected"] == {"test_temp_c": "-300"} and drop.inputs["missing"] == ["test_temp_c"]
    assert "test_temp_c" not in verdict.defaults_applied


def test_rejected_insulation_temperature_does_not_turn_a_fail_into_a_pass() -> None:
    """A rejected 90 °C (written '90 °F') fell back to 70 °C; the 90 °C drop fails where 70 °C passes."""
    # 32 A × 0.3 Ω: quick drop × 1.28 = 12.3 V > 11.5 V (90 °C); × 1.20 = 11.5 V (70 °C, at the limit)
    fields = {"r1_r2_ohm": 0.3, "design_current_a": 32, "line_mm2": 2.5, "cpc_mm2": 2.5}
    assert _one("voltage_drop", insulation_temp_c=90, **fields).outcome is Outcome.FAIL
    record, errors = build_record({"board": "B", "circuit": "1", "insulation_temp_c": "90 °F", **fields})
    assert record is not None and [e.field for e in errors] == ["insulation_temp_c"]
    drop = next(c for c in verify([record])[0].checks if c.check == "voltage_drop")
    assert drop.outcome is Outcome.INCOMPLETE and drop.inputs["rejected"] == {"insulation_temp_c": "90 °F"}


def test_feeder_values_are_judged_too() -> None:
    """A sub-board's drop includes its feeder's: a feeder with a negative R1+R2 is named, never summed."""
    rows = [{"board": "M", "circuit": "1", "circuit_role": "distribution", "r1_r2_ohm": -0.2,
             "design_current_a": 40},
            {"board": "S", "circuit": "1", "board_fed_from": "M/1", "r1_r2_ohm": 0.2, "design_current_a": 10}]
    records = [build_record(r)[0] for r in rows]
    verdicts = {v.board: v for v in verify([r for r in records if r is not None])}
    drop = next(c for c in verdicts["S"].checks if c.check == "voltage_drop")
    assert drop.outcome is Outcome.INVESTIGATE and drop.inputs["record"] == "M/1"
    assert "feeder M/1" in drop.detail
