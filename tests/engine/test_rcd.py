"""RCD times against BS EN 61008-1 / 61009-1 Table 1 and BS 7671:2018+A2:2022 643.8 (REFERENCE §8)."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify


def _rcd(ruleset: str | None = None, **fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", "rcd_residual_ma": 30, **fields})
    assert record is not None and not errors, errors
    return [c for c in verify([record], ruleset)[0].checks if c.check == "rcd_time"]


def _at(method: str, **fields: Any) -> CheckResult:
    found = [c for c in _rcd(**fields) if c.method == method]
    assert len(found) == 1, found
    return found[0]


@pytest.mark.parametrize(("ms", "outcome"), [(299, Outcome.PASS), (300, Outcome.PASS), (301, Outcome.FAIL)])
def test_general_at_idn(ms: float, outcome: Outcome) -> None:
    """General type at IΔn: ≤ 300 ms (BS EN 61008-1 / 61009-1 Table 1; BS 7671 643.8) [secondary]."""
    assert _at("trip_time_at_idn", rcd_trip_ms=ms).outcome is outcome


@pytest.mark.parametrize(("ms", "outcome"), [(129, Outcome.FAIL), (130, Outcome.PASS), (131, Outcome.PASS),
                                             (499, Outcome.PASS), (500, Outcome.PASS), (501, Outcome.FAIL)])
def test_delayed_at_idn(ms: float, outcome: Outcome) -> None:
    """Type S at IΔn: 130–500 ms (BS EN 61008-1 Table 1 type S column, from memory)."""
    assert _at("trip_time_at_idn", rcd_trip_ms=ms, rcd_delayed=True).outcome is outcome


@pytest.mark.parametrize(("ms", "outcome"), [(39, Outcome.PASS), (40, Outcome.PASS), (41, Outcome.FAIL)])
def test_general_at_5idn(ms: float, outcome: Outcome) -> None:
    """General type at 5 IΔn: ≤ 40 ms (BS EN 61008-1 / 61009-1 Table 1) [secondary]."""
    assert _at("trip_time_at_5idn", rcd_trip_ms=20, rcd_trip_5x_ms=ms).outcome is outcome


@pytest.mark.parametrize(("ms", "outcome"), [(49, Outcome.FAIL), (50, Outcome.PASS), (150, Outcome.PASS),
                                             (151, Outcome.FAIL)])
def test_delayed_at_5idn(ms: float, outcome: Outcome) -> None:
    """Type S at 5 IΔn: 50–150 ms (BS EN 61008-1 Table 1 type S column, from memory)."""
    found = _at("trip_time_at_5idn", rcd_trip_ms=200, rcd_trip_5x_ms=ms, rcd_delayed=True)
    assert found.outcome is outcome


@pytest.mark.parametrize(("reading", "outcome"), [("> 300", Outcome.FAIL), ("OL", Outcome.FAIL),
                                                  ("< 25", Outcome.PASS), ("< 400", Outcome.INVESTIGATE),
                                                  ("> 100", Outcome.INVESTIGATE)])
def test_bounded_times(reading: str, outcome: Outcome) -> None:
    """Against 300 ms (Table 1) [secondary]: > 300 and OL (no trip) fail, < 25 passes, other bounds
    investigate."""
    assert _at("trip_time_at_idn", rcd_trip_ms=reading).outcome is outcome


def test_missing_idn_time_is_incomplete_missing_5x_is_not() -> None:
    """A2:2022 643.8 requires the IΔn test only [secondary]: no IΔn time → incomplete; no 5× time → no
    result."""
    (only,) = _rcd()
    assert only.outcome is Outcome.INCOMPLETE and only.inputs["missing"] == ["rcd_trip_ms"]
    assert [c.method for c in _rcd(rcd_trip_ms=20)] == ["trip_time_at_idn"]
    assert [c.method for c in _rcd("iec-60364", rcd_trip_ms=20)] == ["trip_time_at_idn"]


def test_half_idn_trip_fails() -> None:
    """Tripping at ½ IΔn fails: the device must not operate at half its rating (Table 1) [secondary]."""
    assert _at("half_idn_no_trip", rcd_trip_ms=20, rcd_half_no_trip=False).outcome is Outcome.FAIL
    assert _at("half_idn_no_trip", rcd_trip_ms=20, rcd_half_no_trip=True).outcome is Outcome.PASS


def test_applies_to_rcbo_without_residual_rating_and_not_without_rcd() -> None:
    """An RCBO is an RCD even with IΔn unrecorded; a circuit with no sign of an RCD has no RCD result.
    A recorded trip time is such a sign: see test_trip_time_alone_means_an_rcd."""
    record, _ = build_record({"board": "B", "circuit": "1", "device_kind": "rcbo", "rcd_trip_ms": 350})
    assert record is not None
    checks = [c for c in verify([record])[0].checks if c.check == "rcd_time"]
    assert [c.outcome for c in checks] == [Outcome.FAIL]  # 350 ms > 300 ms (Table 1) [secondary]
    record, _ = build_record({"board": "B", "circuit": "1", "zs_ohm": 0.5, "device_kind": "breaker"})
    assert record is not None
    assert not [c for c in verify([record])[0].checks if c.check == "rcd_time"]


def test_unrecorded_delay_is_judged_general_and_reported() -> None:
    """rcd_delayed unrecorded: judged general (300 ms, the stricter maximum), listed in defaults_applied."""
    record, _ = build_record({"board": "B", "circuit": "1", "rcd_residual_ma": 100, "rcd_trip_ms": 400})
    assert record is not None
    verdict = verify([record])[0]
    assert verdict.defaults_applied["rcd_delayed"] is False
    assert [c.outcome for c in verdict.checks if c.check == "rcd_time"] == [Outcome.FAIL]
