"""Additional protection by RCD: BS 7671:2018+A2:2022 Reg. 411.3.3, 411.3.4, 522.6.202/203 and 531.3.3.

All these figures are from memory (30 mA, 32 A, the four reasons, type AC for fixed equipment only):
the ruleset marks them so. Before this check existed, every case below that must not pass did.
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify

SOCKETS = {"socket_outlets": True, "device_kind": "breaker", "device_curve": "B", "device_rating_a": 32}
RCBO_30 = {"socket_outlets": True, "device_kind": "rcbo", "device_curve": "B", "device_rating_a": 32,
           "rcd_residual_ma": 30}


def _ap(ruleset: str | None = None, **fields: Any) -> list[CheckResult]:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    return [c for c in verify([record], ruleset)[0].checks if c.check == "additional_protection"]


def _method(method: str, **fields: Any) -> CheckResult:
    found = [c for c in _ap(**fields) if c.method == method]
    assert len(found) == 1, found
    return found[0]


def test_socket_circuit_without_rcd_fails() -> None:
    """Socket-outlets ≤ 32 A with no RCD (Reg. 411.3.3, from memory): fail."""
    assert _method("residual_current", **SOCKETS).outcome is Outcome.FAIL


@pytest.mark.parametrize(("idn", "outcome"), [(10, Outcome.PASS), (30, Outcome.PASS), (31, Outcome.FAIL),
                                              (100, Outcome.FAIL)])
def test_residual_current_at_most_30_ma(idn: float, outcome: Outcome) -> None:
    """IΔn ≤ 30 mA (Reg. 411.3.3, from memory): 30 passes, 31 and a 100 mA RCD fail."""
    assert _method("residual_current", **{**RCBO_30, "rcd_residual_ma": idn}).outcome is outcome


@pytest.mark.parametrize(("rating", "applies"), [(16, True), (32, True), (33, False), (63, False)])
def test_socket_rating_up_to_32_a(rating: float, applies: bool) -> None:
    """Socket-outlets rated up to 32 A need it (Reg. 411.3.3(a), from memory); 63 A socket-outlets do not."""
    found = _ap(**{**SOCKETS, "socket_rating_a": rating, "device_rating_a": rating})
    assert bool(found) is applies


def test_unrecorded_socket_rating_on_a_large_device_is_incomplete() -> None:
    """A 40 A circuit with socket-outlets of unrecorded rating: the rule may apply, so incomplete."""
    [found] = _ap(**{**SOCKETS, "device_rating_a": 40})
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["socket_rating_a"]


def test_non_domestic_sockets_without_rcd_are_investigate() -> None:
    """Outside dwellings a documented risk assessment may omit it (Reg. 411.3.3, from memory): investigate."""
    assert _method("residual_current", premises="other", **SOCKETS).outcome is Outcome.INVESTIGATE
    assert _method("residual_current", premises="domestic", **SOCKETS).outcome is Outcome.FAIL


def test_a_ring_has_socket_outlets() -> None:
    """A ring (here inferred from its readings) needs the RCD too."""
    found = _ap(device_kind="breaker", device_curve="B", device_rating_a=32, ring_r1_ohm=0.4)
    assert [c.outcome for c in found] == [Outcome.FAIL]


def test_trip_time_shows_an_rcd_but_not_its_rating() -> None:
    """A recorded trip time shows an RCD; without IΔn the 30 mA requirement is not shown: incomplete."""
    [found] = _ap(**{**SOCKETS, "rcd_trip_ms": 25})
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["rcd_residual_ma"]


@pytest.mark.parametrize(("fields", "why"), [
    ({"outdoor_equipment": True}, "outdoor"),
    ({"premises": "domestic", "load_type": "lighting"}, "lighting"),
    ({"concealed_in_wall": True}, "concealed")])
def test_the_other_reasons(fields: dict[str, Any], why: str) -> None:
    """Mobile equipment outdoors (411.3.3(b)), luminaires in dwellings (411.3.4), cables concealed in a wall
    < 50 mm (522.6.202/203): each requires the RCD (from memory)."""
    found = _method("residual_current", device_kind="breaker", device_curve="B", device_rating_a=16, **fields)
    assert found.outcome is Outcome.FAIL and found.inputs["required_for"] == [why]


def test_no_reason_recorded_means_no_result() -> None:
    """A circuit whose record shows no reason gets no additional_protection result."""
    assert _ap(device_kind="breaker", device_curve="B", device_rating_a=16, load_type="lighting") == []


def test_iec_ruleset_lacks_the_uk_only_reasons() -> None:
    """411.3.4 and 522.6.202/203 are BS 7671's own (UK numbering): under IEC only 411.3.3 applies."""
    assert _ap("iec-60364", device_kind="breaker", device_curve="B", device_rating_a=16,
               premises="domestic", load_type="lighting", concealed_in_wall=True) == []
    assert _ap("iec-60364", **SOCKETS)[0].outcome is Outcome.FAIL


@pytest.mark.parametrize(("kind", "outcome"), [("AC", Outcome.FAIL), ("A", Outcome.PASS), ("F", Outcome.PASS),
                                               ("B", Outcome.PASS)])
def test_type_ac_on_socket_outlets(kind: str, outcome: Outcome) -> None:
    """Type AC only for fixed equipment known to draw no d.c. (Reg. 531.3.3, A2:2022, from memory)."""
    found = [c for c in _ap(**{**RCBO_30, "rcd_type": kind}) if c.method == "rcd_type"]
    assert [c.outcome for c in found] == ([] if outcome is Outcome.PASS else [outcome])


def test_type_ac_on_fixed_equipment_is_investigate() -> None:
    """Concealed cables to fixed equipment on a type AC RCD: confirm the load has no d.c. component."""
    found = _method("rcd_type", concealed_in_wall=True, device_kind="rcbo", device_curve="B",
                    device_rating_a=16, rcd_residual_ma=30, rcd_type="AC")
    assert found.outcome is Outcome.INVESTIGATE


@pytest.mark.parametrize(("kind", "needed", "outcome"), [("A", "B", Outcome.FAIL), ("B", "B", Outcome.PASS),
                                                         ("F", "A", Outcome.PASS), ("AC", "A", Outcome.FAIL)])
def test_type_against_what_the_load_needs(kind: str, needed: str, outcome: Outcome) -> None:
    """AC < A < F < B (BS EN 61008/61009, BS EN 62423, from memory): a type below the load's need fails."""
    found = _method("rcd_type", **{**RCBO_30, "rcd_type": kind, "rcd_type_required": needed})
    assert found.outcome is outcome
