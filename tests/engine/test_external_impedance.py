"""Ze against the typical maxima network operators declare (IET On-Site Guide)."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify


def _ze(ruleset: str | None = None, **fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    return [c for c in verify([record], ruleset)[0].checks if c.check == "external_impedance"]


def _one(**fields: Any) -> CheckResult:
    (found,) = _ze(**fields)
    return found


@pytest.mark.parametrize(("earthing", "declared"), [("TN-S", 0.8), ("TN-C-S", 0.35), ("TT", 21)])
def test_declared_maxima_boundaries(earthing: str, declared: float) -> None:
    """OSG typical declared Ze: TN-S 0.8, TN-C-S 0.35, TT 21 Ω [secondary]: below and at pass, above
    investigates."""
    assert _one(earthing=earthing, ze_ohm=declared * 0.99).outcome is Outcome.PASS
    assert _one(earthing=earthing, ze_ohm=declared).outcome is Outcome.PASS
    above = _one(earthing=earthing, ze_ohm=declared * 1.01)
    assert above.outcome is Outcome.INVESTIGATE  # a declared maximum is not a regulation limit
    assert above.limit == declared


def test_tt_takes_off_the_installation_electrode() -> None:
    """TT 21 Ω is the operator's part [secondary]: Ze 80 Ω less RA 65 Ω leaves 15 Ω, pass; no RA:
    investigate."""
    found = _one(earthing="TT", ze_ohm=80, ra_ohm=65)
    assert found.outcome is Outcome.PASS and found.method == "operator_part_ze_minus_ra"
    assert found.value == pytest.approx(15)
    alone = _one(earthing="TT", ze_ohm=80)
    assert alone.outcome is Outcome.INVESTIGATE and alone.inputs["missing"] == ["ra_ohm"]


@pytest.mark.parametrize(("ze", "outcome"), [("< 0.2", Outcome.PASS), ("> 0.35", Outcome.INVESTIGATE),
                                             ("OL", Outcome.INVESTIGATE), ("> 0.1", Outcome.INVESTIGATE)])
def test_bounded_readings(ze: str, outcome: Outcome) -> None:
    """TN-C-S 0.35 Ω [secondary]: < 0.2 passes; > 0.35, OL and the unsettled > 0.1 investigate."""
    assert _one(earthing="TN-C-S", ze_ohm=ze).outcome is outcome


def test_when_it_applies() -> None:
    """No Ze, IT (no declared figure) or the IEC ruleset: left out; earthing unknown: incomplete."""
    assert _ze(earthing="TN-S") == []
    assert _ze(earthing="IT", ze_ohm=5) == []
    (unknown,) = _ze(ze_ohm=0.3)
    assert unknown.outcome is Outcome.INCOMPLETE and unknown.inputs["missing"] == ["earthing"]
    assert _ze("iec-60364", earthing="TN-S", ze_ohm=5) == []
