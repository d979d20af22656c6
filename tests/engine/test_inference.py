"""Inference where the trade's meaning is unambiguous, and every inference said in the verdict.

Sources: ring final circuit readings are end-to-end readings of a ring (IET GN3 / OSG ring test,
BS 7671 Reg. 643.2.1) [secondary]; a curve letter is a circuit-breaker characteristic (BS EN 60898,
BS 7671 Table 41.3) [secondary]; an RCD trip time is the test of an RCD (BS 7671 Reg. 643.8) [secondary].
"""

from __future__ import annotations

from typing import Any

from engine import Outcome, Verdict, build_record, verify


def _verdict(**fields: Any) -> Verdict:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    [verdict] = verify([record])
    return verdict


def test_an_open_ring_without_circuit_form_fails() -> None:
    """ring_r1_ohm OL with no circuit_form defaulted to radial and passed; ring readings mean a ring."""
    verdict = _verdict(ring_r1_ohm="OL", ring_rn_ohm=0.37, ring_r2_ohm=0.6, r1_r2_ohm=0.25, line_mm2=2.5,
                       cpc_mm2=1.5)
    ring = [c for c in verdict.checks if c.check == "ring_continuity"]
    assert ring and ring[0].outcome is Outcome.FAIL and ring[0].method == "end_to_end_open"
    assert verdict.inferred["circuit_form"] == "ring"  # and so socket-outlets, for additional protection
    assert verdict.as_dict()["inferred"] == {"circuit_form": "ring", "socket_outlets": True}
    assert "circuit_form" not in verdict.defaults_applied


def test_a_record_that_says_radial_is_not_second_guessed() -> None:
    """circuit_form given wins over the readings: no inference, no ring check."""
    verdict = _verdict(circuit_form="radial", ring_r1_ohm="OL", r1_r2_ohm=0.25)
    assert verdict.inferred == {}
    assert not [c for c in verdict.checks if c.check == "ring_continuity"]


def test_a_curve_letter_means_a_circuit_breaker() -> None:
    """B32 without device_kind was incomplete; a curve letter means Table 41.3 (1.37 Ω), said in inferred."""
    verdict = _verdict(earthing="TN-C-S", device_curve="B", device_rating_a=32, zs_ohm=0.5)
    loop = next(c for c in verdict.checks if c.check == "loop_impedance")
    assert loop.outcome is Outcome.PASS and loop.inputs["max_zs"] == 1.37
    assert verdict.inferred["device_kind"] == "breaker"


def test_a_61009_device_is_an_rcbo_and_has_an_rcd() -> None:
    """BS EN 61009 names an RCBO: inferred, and its RCD is tested (rcd_time applies)."""
    verdict = _verdict(device_standard="BS EN 61009-1", device_curve="B", device_rating_a=20,
                       rcd_residual_ma=30, rcd_trip_ms=22)
    assert verdict.inferred["device_kind"] == "rcbo"
    assert [c.outcome for c in verdict.checks if c.check == "rcd_time"] == [Outcome.PASS]


def test_trip_time_alone_means_an_rcd() -> None:
    """A breaker with 900 ms and 300 ms recorded but no IΔn got no rcd_time check and passed; now it fails."""
    verdict = _verdict(device_kind="breaker", rcd_trip_ms=900, rcd_trip_5x_ms=300)
    times = [c for c in verdict.checks if c.check == "rcd_time"]
    assert [c.outcome for c in times] == [Outcome.FAIL, Outcome.FAIL]  # > 300 ms and > 40 ms, Table 1


def test_trip_time_within_the_limit_without_idn_is_incomplete() -> None:
    """20 ms is within 300 ms, but without IΔn the test current is not shown: incomplete, naming it."""
    verdict = _verdict(device_kind="breaker", rcd_trip_ms=20)
    [found] = [c for c in verdict.checks if c.check == "rcd_time"]
    assert found.outcome is Outcome.INCOMPLETE and found.inputs["missing"] == ["rcd_residual_ma"]
    assert found.inputs["rcd_inferred_from"] == "rcd_trip_ms"


def test_with_idn_or_as_an_rcbo_the_same_times_fail() -> None:
    """The audit's control cases: the same 900/300 ms with IΔn, or on an RCBO, fail as before."""
    for extra in ({"rcd_residual_ma": 30}, {"device_kind": "rcbo"}):
        verdict = _verdict(**{"device_kind": "breaker", "rcd_trip_ms": 900, "rcd_trip_5x_ms": 300, **extra})
        assert verdict.outcome is Outcome.FAIL


def test_a_ring_has_socket_outlets_and_it_is_said() -> None:
    """A 40 A ring takes Table 41.1's 0.4 s (a ring has socket-outlets), and inferred says so."""
    verdict = _verdict(earthing="TN-S", circuit_form="ring", device_kind="breaker", device_curve="B",
                       device_rating_a=40, zs_ohm=0.5)
    loop = next(c for c in verdict.checks if c.check == "loop_impedance")
    assert loop.inputs["disconnection_s"] == 0.4
    assert verdict.inferred["socket_outlets"] is True


def test_inferred_is_always_in_the_verdict_body() -> None:
    """A stable shape: "inferred" is present (empty) like defaults_applied."""
    body = _verdict(polarity_ok=True).as_dict()
    assert body["inferred"] == {} and "defaults_applied" in body
