"""verify(records, site=…) against an independent reference: the same circuits with the site's values
written onto each by hand, verified without a site.

The site and readings are invented. The reference is written out literally below (not computed by the
engine's inheritance), from the rules engine/README.md states; the two must give the same outcome, value
and limit for every check. Where the two cannot agree by design it is said and checked apart: a
sub-board's Zdb is the Ze its circuits see, which a circuit record alone cannot express.
"""

from __future__ import annotations

from typing import Any

from engine import Verdict, build_record, build_site, verify

SITE = {
    "installation": {"earthing": "TN-C-S (PME)", "nominal_voltage_v": 230, "supply": "public",
                     "ze_ohm": 0.21, "pfc_ka": 1.6, "test_temp_c": 17, "premises": "other"},
    "boards": [
        {"board": "DB1", "description": "main board"},
        {"board": "DB2", "board_fed_from": "DB1/5", "earthing": "TT", "ra_ohm": 48, "pfc_ka": 0.9},
        {"board": "DB3", "board_fed_from": "DB1/6", "zdb_ohm": 0.34, "pfc_ka": 1.1},
    ],
}

CIRCUITS: list[dict[str, Any]] = [
    {"board": "DB1", "circuit": "1", "device": "B6", "cable": "1.5/1.0", "length_m": 18, "r1_r2_ohm": 0.45,
     "zs_ohm": 0.68, "device_breaking_ka": 6, "load_type": "lighting", "ir_test_v": 500,
     "ir_le_mohm": ">299"},
    {"board": "DB1", "circuit": "2", "device": "RCBO B32 30mA A", "cable": "2.5/1.5", "length_m": 40,
     "ring_r1_ohm": 0.5, "ring_rn_ohm": 0.5, "ring_r2_ohm": 0.83, "r1_r2_ohm": 0.34, "zs_ohm": 0.56,
     "rcd_trip_ms": 24, "device_breaking_ka": 6, "socket_rating_a": 13},
    {"board": "DB1", "circuit": "5", "circuit_role": "distribution", "device": "C32", "cable": "10/4",
     "length_m": 30, "r1_r2_ohm": 0.14, "zs_ohm": 0.36, "design_current_a": 25, "device_breaking_ka": 10},
    {"board": "DB1", "circuit": "6", "circuit_role": "distribution", "device": "C40", "cable": "16/6",
     "length_m": 25, "r1_r2_ohm": 0.12, "zs_ohm": 0.33, "design_current_a": 30, "device_breaking_ka": 10},
    {"board": "DB2", "circuit": "1", "device": "RCBO B16 30mA A", "cable": "2.5/1.5", "length_m": 12,
     "r1_r2_ohm": 0.2, "zs_ohm": 49.5, "rcd_trip_ms": 21, "socket_outlets": True, "socket_rating_a": 13},
    {"board": "DB3", "circuit": "1", "device": "B20", "cable": "2.5/1.5", "length_m": 20, "r1_r2_ohm": 0.3,
     "zs_ohm": 0.65, "device_breaking_ka": 6},
]

# What each circuit inherits, written by hand: the installation's facts everywhere; its Ze and PFC only
# on DB1 (the origin); DB2 (TT cabin) its own earthing, RA and PFC; DB3 its Zdb as Ze, and its PFC.
_EVERYWHERE = {"nominal_voltage_v": 230, "supply": "public", "test_temp_c": 17, "premises": "other"}
BY_HAND: dict[str, dict[str, Any]] = {
    "DB1": {**_EVERYWHERE, "earthing": "TN-C-S", "ze_ohm": 0.21, "pfc_ka": 1.6},
    "DB2": {**_EVERYWHERE, "earthing": "TT", "ra_ohm": 48, "pfc_ka": 0.9, "board_fed_from": "DB1/5"},
    "DB3": {**_EVERYWHERE, "earthing": "TN-C-S", "ze_ohm": 0.34, "pfc_ka": 1.1, "board_fed_from": "DB1/6"},
}


def _records(rows: list[dict[str, Any]]) -> list[Any]:
    out = []
    for row in rows:
        record, errors = build_record(row)
        assert record is not None and errors == [], errors
        out.append(record)
    return out


def _judged(verdict: Verdict) -> list[tuple[Any, ...]]:
    return [(c.check, c.method, c.outcome, c.value, c.relation, c.limit) for c in verdict.checks]


def _both() -> tuple[dict[tuple[str, str], Verdict], dict[tuple[str, str], Verdict]]:
    site, errors = build_site(SITE)
    assert errors == []
    with_site = {v.key: v for v in verify(_records(CIRCUITS), site=site)}
    flat = [{**BY_HAND[row["board"]], **row} for row in CIRCUITS]
    by_hand = {v.key: v for v in verify(_records(flat))}
    return with_site, by_hand


def test_origin_and_tt_boards_equal_the_hand_written_reference() -> None:
    """On the origin board and on a TT board fed from it, every check's outcome, value and limit are the
    reference's; only where the values came from differs (inherited instead of recorded)."""
    with_site, by_hand = _both()
    for key in [k for k in with_site if k[0] in ("DB1", "DB2")]:
        assert _judged(with_site[key]) == _judged(by_hand[key]), key
        assert with_site[key].outcome == by_hand[key].outcome
        assert by_hand[key].inherited == {}
    assert with_site[("DB1", "1")].inherited["ze_ohm"] == "installation"
    assert with_site[("DB2", "1")].inherited == {
        "earthing": "board DB2", "ra_ohm": "board DB2", "nominal_voltage_v": "installation",
        "test_temp_c": "installation", "supply": "installation", "premises": "installation",
        "board_fed_from": "board DB2", "pfc_ka": "board DB2"}


def test_a_sub_board_with_zdb_equals_the_reference_but_where_zdb_is_the_boards() -> None:
    """DB3's circuits see its Zdb as Ze: every check equals the reference except the two that treat a
    circuit's own Ze as the origin's (loop_consistency adds the feeders to it, external_impedance compares
    it with the supply's declared maximum); with the site, Zs = Zdb + R1+R2 = 0.34 + 0.3 = 0.64 Ω agrees
    with 0.65 Ω, and Zdb is compared with its feeder instead: 0.21 + 0.12 = 0.33 Ω against 0.34 Ω."""
    with_site, by_hand = _both()
    key = ("DB3", "1")
    apart = {"loop_consistency", "external_impedance"}
    assert [j for j in _judged(with_site[key]) if j[0] not in apart] == \
        [j for j in _judged(by_hand[key]) if j[0] not in apart]
    consistency = next(c for c in with_site[key].checks if c.method == "ze_plus_r1r2")
    assert consistency.outcome.value == "pass" and abs(consistency.inputs["expected_zs_ohm"] - 0.64) < 1e-9
    zdb = next(c for c in with_site[key].checks if c.method == "zdb_vs_feeder")
    assert zdb.outcome.value == "pass" and abs(zdb.inputs["expected_zdb_ohm"] - 0.33) < 1e-9
    assert not [c for c in by_hand[key].checks if c.method == "zdb_vs_feeder"]
