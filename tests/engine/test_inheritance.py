"""Circuits inherit from their board and the installation: the order, the provenance, and the limits of it.

The installation, boards and readings here are invented (our own test site); what is checked is the
order the engine promises (circuit > board > installation > ruleset default) and the principle (a
check passes only what the readings show), not any figure of a standard, except where a docstring
names its source.
"""

from __future__ import annotations

from typing import Any

from engine import (
    CheckResult,
    Outcome,
    Site,
    Verdict,
    build_board,
    build_installation,
    build_record,
    build_site,
    verify,
)
from engine.stream import verify_stream

INSTALLATION = {"earthing": "TN-C-S", "nominal_voltage_v": 230, "ze_ohm": 0.2, "pfc_ka": 1.5,
                "test_temp_c": 18}


def site(installation: dict[str, Any] | None = INSTALLATION, *boards: dict[str, Any]) -> Site:
    made, errors = build_site({"installation": installation, "boards": list(boards)})
    assert errors == [], errors
    return made


def records(*rows: dict[str, Any]) -> list[Any]:
    out = []
    for row in rows:
        record, errors = build_record(row)
        assert record is not None and errors == [], errors
        out.append(record)
    return out


def by_key(verdicts: list[Verdict]) -> dict[tuple[str, str], Verdict]:
    return {v.key: v for v in verdicts}


def results(verdict: Verdict, check: str, method: str | None = None) -> list[CheckResult]:
    return [c for c in verdict.checks if c.check == check and (method is None or c.method == method)]


def one(verdict: Verdict, check: str, method: str | None = None) -> CheckResult:
    [found] = results(verdict, check, method)
    return found


# A circuit whose PFC check reads U0, Ze and Zs: fault_current's pfc_vs_ze shows the U0 it used.
_READS_U0 = {"zs_ohm": 0.8, "pfc_ka": 1.0, "ze_ohm": 0.3}


def test_circuit_then_board_then_installation_then_default() -> None:
    """U0 comes from the circuit, else its board, else the installation, else the ruleset default (230 V,
    IEC 60038), and the verdict names where (inherited / defaults_applied)."""
    rows = records({"board": "DB1", "circuit": "1", "nominal_voltage_v": 240, **_READS_U0},
                   {"board": "DB1", "circuit": "2", **_READS_U0},
                   {"board": "DB2", "circuit": "1", **_READS_U0})
    the_site = site({**INSTALLATION, "nominal_voltage_v": 220}, {"board": "DB1", "nominal_voltage_v": 225})
    got = by_key(verify(rows, site=the_site))
    u0 = {key: one(v, "fault_current", "pfc_vs_ze").inputs["u0_v"] for key, v in got.items()}
    assert u0 == {("DB1", "1"): 240.0, ("DB1", "2"): 225.0, ("DB2", "1"): 220.0}
    assert "nominal_voltage_v" not in got[("DB1", "1")].inherited
    assert got[("DB1", "2")].inherited["nominal_voltage_v"] == "board DB1"
    assert got[("DB2", "1")].inherited["nominal_voltage_v"] == "installation"
    [plain] = verify(rows[1:2])
    assert one(plain, "fault_current", "pfc_vs_ze").inputs["u0_v"] == 230.0
    assert plain.defaults_applied["nominal_voltage_v"] == 230 and plain.inherited == {}


def test_inherited_lists_only_fields_a_check_read() -> None:
    """A fact no check reads is not listed: with only a polarity reading, the supply type (read by the
    voltage-drop check alone) is not inherited, while the Ze the external impedance check reads is."""
    rows = records({"board": "DB1", "circuit": "1", "polarity_ok": True})
    [verdict] = verify(rows, site=site({"supply": "private"}))
    assert verdict.inherited == {} and verdict.as_dict()["inherited"] == {}
    [verdict] = verify(rows, site=site({"supply": "private", "ze_ohm": 0.3, "earthing": "TN-S"}))
    assert verdict.inherited == {"ze_ohm": "installation", "earthing": "installation"}


def test_every_verdict_carries_inherited_and_description() -> None:
    """inherited (like defaults_applied and inferred) and description are always in the verdict's dict."""
    rows = records({"board": "DB1", "circuit": "1", "description": "Office sockets", "polarity_ok": True},
                   {"board": "DB1", "circuit": "2", "polarity_ok": True})
    for with_site in (None, site()):
        first, second = (v.as_dict() for v in verify(rows, site=with_site))
        assert first["description"] == "Office sockets" and second["description"] is None
        assert {"defaults_applied", "inferred", "inherited"} <= set(first) & set(second)


def test_installation_ze_and_pfc_reach_only_boards_at_the_origin() -> None:
    """Ze and PFC measured at the origin are not a sub-board's: DB2 (fed from DB1/5, by its board record or
    by one of its circuits) gets neither, while the origin board's circuits do."""
    rows = records({"board": "DB1", "circuit": "1", "zs_ohm": 0.5},
                   {"board": "DB1", "circuit": "5", "circuit_role": "distribution", "r1_r2_ohm": 0.1},
                   {"board": "DB2", "circuit": "1", "zs_ohm": 0.9},
                   {"board": "DB3", "circuit": "1", "board_fed_from": "DB1/5", "zs_ohm": 0.9},
                   {"board": "DB3", "circuit": "2", "zs_ohm": 0.9})
    got = by_key(verify(rows, site=site(INSTALLATION, {"board": "DB2", "board_fed_from": "DB1/5"})))
    origin = one(got[("DB1", "1")], "external_impedance")
    assert origin.inputs["ze"] == 0.2 and got[("DB1", "1")].inherited["ze_ohm"] == "installation"
    for key in (("DB2", "1"), ("DB3", "1"), ("DB3", "2")):
        assert "ze_ohm" not in got[key].inherited and "pfc_ka" not in got[key].inherited, key
        assert results(got[key], "external_impedance") == [] and results(got[key], "fault_current") == []


def test_a_sub_board_zdb_is_the_ze_its_circuits_see() -> None:
    """A sub-board's Zdb is its circuits' Ze: Zs = Zdb + R1+R2 (IEC 60364-6 6.4.3.7.3), without the
    feeder counted twice, and the supply's declared maximum is not applied to it."""
    rows = records({"board": "DB1", "circuit": "5", "circuit_role": "distribution", "r1_r2_ohm": 0.2},
                   {"board": "DB2", "circuit": "1", "zs_ohm": 0.9, "r1_r2_ohm": 0.5})
    the_site = site(INSTALLATION, {"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.4, "pfc_ka": 0.8})
    got = by_key(verify(rows, site=the_site))[("DB2", "1")]
    consistency = one(got, "loop_consistency", "ze_plus_r1r2")
    assert consistency.outcome is Outcome.PASS
    assert consistency.inputs["expected_zs_ohm"] == 0.9 and consistency.inputs["feeders"] == []
    assert got.inherited["ze_ohm"] == "board DB2" and got.inherited["pfc_ka"] == "board DB2"
    assert results(got, "external_impedance", "declared_maximum") == []


def test_a_tt_board_under_a_tn_installation() -> None:
    """A TT outbuilding's board gives its circuits TT and its own RA; RA × IΔn = 62 Ω × 0.03 A = 1.86 V
    ≤ 50 V (IEC 60364-4-41 411.5.3) passes. The TN board beside it keeps TN-C-S and gets no RA."""
    rows = records(
        {"board": "DB1", "circuit": "4", "circuit_role": "distribution", "r1_r2_ohm": 0.1},
        {"board": "DB1", "circuit": "1", "device": "RCBO B16 30mA A", "zs_ohm": 0.6},
        {"board": "DB3", "circuit": "1", "device": "RCBO B16 30mA A", "zs_ohm": 64, "rcd_trip_ms": 20})
    the_site = site({**INSTALLATION, "ra_ohm": 10},
                    {"board": "DB3", "board_fed_from": "DB1/4", "earthing": "TT", "ra_ohm": 62})
    got = by_key(verify(rows, site=the_site))
    cabin = got[("DB3", "1")]
    assert cabin.inherited["earthing"] == "board DB3" and cabin.inherited["ra_ohm"] == "board DB3"
    electrode = one(cabin, "earth_electrode", "ra_x_idn")
    assert electrode.outcome is Outcome.PASS and abs(electrode.value - 1.86) < 1e-9  # type: ignore[operator]
    assert one(cabin, "loop_impedance").method == "rcd_fault_protection"
    main = got[("DB1", "1")]
    assert main.inherited["earthing"] == "installation" and results(main, "earth_electrode") == []


def test_installation_ra_skips_a_board_earthed_otherwise() -> None:
    """A TT installation's electrode is not a TN-S board's: its circuits do not take the installation's RA."""
    rows = records({"board": "DB5", "circuit": "1", "device": "RCBO B16 30mA A", "zs_ohm": 0.5})
    the_site = site({"earthing": "TT", "ra_ohm": 40}, {"board": "DB5", "earthing": "TN-S"})
    [verdict] = verify(rows, site=the_site)
    assert verdict.inherited["earthing"] == "board DB5" and "ra_ohm" not in verdict.inherited
    assert results(verdict, "earth_electrode") == []


def test_a_refused_board_value_is_never_replaced() -> None:
    """Board DB2's earthing 'TX' was refused: the installation's TN-C-S does not fill in, no check passes
    on the earthing, and the result names the refused text and where it was refused."""
    board, errors = build_board({"board": "DB2", "earthing": "TX"})
    assert board is not None and board.rejected == {"earthing": "TX"} and errors
    installation, _ = build_installation(INSTALLATION)
    rows = records({"board": "DB2", "circuit": "1", "device": "B32", "zs_ohm": 0.8})
    [verdict] = verify(rows, site=Site.of(installation, [board]))
    loop = one(verdict, "loop_impedance")
    assert loop.outcome is Outcome.INCOMPLETE and loop.method == "rejected_value"
    assert loop.inputs["rejected"] == {"earthing": "TX"} and loop.inputs["inherited_from"] == "board DB2"
    assert "rejected at intake in board DB2" in loop.detail and "'TX'" in loop.detail
    assert verdict.inherited["earthing"] == "board DB2"


def test_a_refused_installation_ze_is_never_replaced() -> None:
    """A refused Ze at the origin makes the checks that read it incomplete, naming the installation."""
    installation, errors = build_installation({"earthing": "TN-S", "ze_ohm": "0,3"})
    assert installation.rejected == {"ze_ohm": "0,3"} and errors
    the_site = Site.of(installation)
    rows = records({"board": "DB1", "circuit": "1", "zs_ohm": 0.5, "r1_r2_ohm": 0.2})
    [verdict] = verify(rows, site=the_site)
    ext = one(verdict, "external_impedance")
    assert ext.outcome is Outcome.INCOMPLETE and ext.inputs["inherited_from"] == "installation"
    assert all(c.outcome is not Outcome.PASS for c in results(verdict, "loop_consistency"))


def test_an_impossible_inherited_value_is_judged_like_the_circuits_own() -> None:
    """A board's Zdb of 0 Ω cannot be (no loop has 0 Ω): withheld, investigate, naming the board."""
    rows = records({"board": "DB2", "circuit": "1", "zs_ohm": 0.9})
    [verdict] = verify(rows, site=site(None, {"board": "DB2", "zdb_ohm": 0, "earthing": "TN-S"}))
    ext = one(verdict, "external_impedance")
    assert ext.outcome is Outcome.INVESTIGATE and ext.method == "implausible_value"
    assert ext.inputs["inherited_from"] == "board DB2" and "(as Zdb)" in ext.detail


def test_marks_are_absences_a_value_below_fills() -> None:
    """A circuit's Ze recorded N/A still takes its board's Zdb; a board's LIM Zdb with nothing below it
    makes the checks needing Ze incomplete, saying the limitation and where it was recorded."""
    rows = records({"board": "DB2", "circuit": "1", "zs_ohm": 0.9, "ze_ohm": "N/A", "earthing": "TN-S"},
                   {"board": "DB3", "circuit": "1", "zs_ohm": 0.9, "earthing": "TN-S"})
    the_site = site(None, {"board": "DB2", "zdb_ohm": 0.3}, {"board": "DB3", "zdb_ohm": "LIM"})
    got = by_key(verify(rows, site=the_site))
    assert one(got[("DB2", "1")], "external_impedance").inputs["ze"] == 0.3
    limited = one(got[("DB3", "1")], "external_impedance")
    assert limited.outcome is Outcome.INCOMPLETE and limited.method == "limitation_recorded"
    assert "limitation recorded: not tested in board DB3" in limited.detail
    assert limited.inputs["marked"] == {"ze_ohm": "LIM"}


def test_the_board_record_names_the_feeder_and_a_circuit_disagreeing_is_a_conflict() -> None:
    """The board record's board_fed_from is used for the chain; a circuit naming another feeder is the
    feeder_conflict problem, never a silent choice."""
    rows = records({"board": "DB1", "circuit": "5", "circuit_role": "distribution", "r1_r2_ohm": 0.1,
                    "line_mm2": 16, "cpc_mm2": 6, "design_current_a": 40},
                   {"board": "DB1", "circuit": "6", "circuit_role": "distribution", "r1_r2_ohm": 0.1,
                    "line_mm2": 16, "cpc_mm2": 6, "design_current_a": 40},
                   {"board": "DB2", "circuit": "1", "r1_r2_ohm": 0.3, "design_current_a": 10,
                    "line_mm2": 2.5, "cpc_mm2": 1.5})
    fed = by_key(verify(rows, site=site(INSTALLATION, {"board": "DB2", "board_fed_from": "DB1/5"})))
    assert one(fed[("DB2", "1")], "voltage_drop").inputs["upstream"] == ["DB1/5"]
    clash = rows[:2] + records({"board": "DB2", "circuit": "1", "board_fed_from": "DB1/6", "r1_r2_ohm": 0.3,
                                "design_current_a": 10, "line_mm2": 2.5, "cpc_mm2": 1.5})
    got = by_key(verify(clash, site=site(INSTALLATION, {"board": "DB2", "board_fed_from": "DB1/5"})))
    drop = one(got[("DB2", "1")], "voltage_drop")
    assert drop.outcome is Outcome.INCOMPLETE and drop.inputs["error"]["code"] == "feeder_conflict"


def test_without_a_site_nothing_changes() -> None:
    """verify(records) and verify(records, site=None) or an empty site give the same verdicts."""
    rows = records({"board": "DB1", "circuit": "1", "device": "B32", "zs_ohm": 0.8, "earthing": "TN-S"})
    assert verify(rows) == verify(rows, site=None) == verify(rows, site=Site())


def test_verify_stream_inherits_as_verify_does() -> None:
    """Board by board, each run inherits from the same site: verify_stream equals verify."""
    rows = records({"board": "DB1", "circuit": "5", "circuit_role": "distribution", "r1_r2_ohm": 0.2,
                    "zs_ohm": 0.4},
                   {"board": "DB2", "circuit": "1", "zs_ohm": 0.9, "r1_r2_ohm": 0.5, "device": "B32"},
                   {"board": "DB2", "circuit": "2", "zs_ohm": 1.9, "r1_r2_ohm": 0.5, "device": "B16"})
    the_site = site(INSTALLATION, {"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.4})
    assert list(verify_stream(rows, site=the_site)) == verify(rows, site=the_site)
