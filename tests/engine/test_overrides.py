"""An override may tighten a limit the regulation fixes, never loosen it; the verdict says which was used.

Sources: BS 7671:2018 Reg. 411.3.2.2 and Table 41.1 (0.4 s, TN, 230 V, final circuits ≤ 63 A with
socket-outlets) [secondary]; Table 41.3 (D32: 0.34 Ω at 0.4 s, 0.68 Ω at 5 s; B32: 1.37 Ω) [secondary].
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, build_record, verify

D32_SOCKETS = {"earthing": "TN-C-S", "device_kind": "breaker", "device_curve": "D", "device_rating_a": 32,
               "socket_outlets": True}
B32 = {"earthing": "TN-C-S", "device_kind": "breaker", "device_curve": "B", "device_rating_a": 32}


def _loop(**fields: Any) -> CheckResult:
    record, errors = build_record({"board": "DB1", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    [found] = [c for c in verify([record])[0].checks if c.check == "loop_impedance"]
    return found


def test_five_seconds_on_a_socket_circuit_does_not_loosen_0_4_s() -> None:
    """A 32 A socket circuit given 5 s passed against the 5 s table (D32 0.68 Ω); 411.3.2.2 gives 0.4 s."""
    found = _loop(zs_ohm=0.5, max_disconnection_s=5, **D32_SOCKETS)
    assert found.outcome is Outcome.FAIL and found.limit == 0.34
    assert found.inputs["disconnection_s"] == 0.4 and found.inputs["max_disconnection_s_refused"] == 5
    assert "maximum disconnection time 5 s is longer than the 0.4 s" in found.detail


@pytest.mark.parametrize(("recorded", "used", "refused"), [(0.39, 0.39, False), (0.4, 0.4, False),
                                                           (0.41, 0.4, True)])
def test_disconnection_override_just_below_at_and_above_the_regulation(recorded: float, used: float,
                                                                       refused: bool) -> None:
    """Tighter or equal is the designer's time; 0.01 s longer is refused and the regulation's 0.4 s used."""
    found = _loop(zs_ohm=0.2, max_disconnection_s=recorded, **D32_SOCKETS)
    assert found.inputs["disconnection_s"] == used
    assert ("max_disconnection_s_refused" in found.inputs) is refused


def test_designer_time_stands_where_the_regulation_sets_none() -> None:
    """IT systems (411.6.4) have no table time: the designer's figure is used, as before."""
    found = _loop(zs_ohm=0.2, max_disconnection_s=5, **{**D32_SOCKETS, "earthing": "IT"})
    assert found.inputs["disconnection_s"] == 5 and found.limit is not None


def test_unknown_scope_keeps_a_designer_time_only_if_no_regulation_time_is_shorter() -> None:
    """40 A radial, socket-outlets unrecorded: 0.4 s or 5 s. 0.4 s given stands; 5 s given is incomplete."""
    d40 = {"earthing": "TN-S", "device_kind": "breaker", "device_curve": "D", "device_rating_a": 40}
    assert _loop(zs_ohm=0.1, max_disconnection_s=0.4, **d40).inputs["disconnection_s"] == 0.4
    loose = _loop(zs_ohm=0.1, max_disconnection_s=5, **d40)
    assert loose.outcome is Outcome.INCOMPLETE and "socket_outlets" in loose.inputs["missing"]


def test_b32_given_5_ohm_is_judged_against_the_table() -> None:
    """B32 given 5.0 Ω passed Zs 3.5 Ω; 66 A cannot trip a device that needs 160 A (Table 41.3, 1.37 Ω)."""
    found = _loop(zs_ohm=3.5, device_max_zs_ohm=5.0, **B32)
    assert found.outcome is Outcome.FAIL and found.limit == 1.37
    assert found.inputs["device_max_zs_ohm_refused"] == 5.0
    assert "given maximum Zs 5 Ω is above the 1.37 Ω the table gives" in found.detail


@pytest.mark.parametrize(("recorded", "limit", "refused"), [(1.36, 1.36, False), (1.37, 1.37, False),
                                                            (1.38, 1.37, True)])
def test_max_zs_override_just_below_at_and_above_the_table(recorded: float, limit: float,
                                                           refused: bool) -> None:
    """Tighter or equal is the designer's figure; above Table 41.3's 1.37 Ω it is refused."""
    found = _loop(zs_ohm=1.37, ze_ohm=1.37, device_max_zs_ohm=recorded, **B32)
    assert found.inputs["max_zs"] == limit
    assert ("device_max_zs_ohm_refused" in found.inputs) is refused


def test_designer_max_zs_stands_for_an_unknown_device() -> None:
    """No table covers a BS EN 60947-2 breaker: the designer's figure stands and says whose it is."""
    found = _loop(zs_ohm=0.9, device_max_zs_ohm=2.0, earthing="TN-S", device_kind="breaker",
                  device_standard="BS EN 60947-2", device_curve="C", device_rating_a=100)
    assert found.outcome is Outcome.PASS and found.limit == 1.6
    assert "designer" in found.basis and "no table covers" in found.basis
