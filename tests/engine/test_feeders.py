"""Voltage drop from the origin through chained boards; broken chains fail only the boards they touch."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Verdict, build_record, verify
from engine.context import Context
from engine.feeders import FeederProblem, feeder_chain, upstream_drop
from engine.ruleset import load_builtin

F_70C = 1.2  # (1 + 0.004·50)/(1 + 0) for 70 °C cable tested at 20 °C [derived from 1 + α(θ − 20)]

# Our own invented installation: origin DB0 → DB1 → DB2 → DB3, three distribution circuits deep.
CHAIN: list[dict[str, Any]] = [
    {"board": "DB0", "circuit": "4", "circuit_role": "distribution", "line_mm2": 16, "cpc_mm2": 6,
     "r1_r2_ohm": 0.09, "design_current_a": 40, "length_m": 30},
    {"board": "DB1", "circuit": "7", "board_fed_from": "DB0/4", "circuit_role": "distribution",
     "line_mm2": 10, "cpc_mm2": 4, "r1_r2_ohm": 0.12, "design_current_a": 32, "length_m": 25},
    {"board": "DB2", "circuit": "2", "board_fed_from": "DB1/7", "circuit_role": "distribution",
     "line_mm2": 6, "cpc_mm2": 2.5, "r1_r2_ohm": 0.2, "design_current_a": 25, "length_m": 20},
    {"board": "DB3", "circuit": "1", "board_fed_from": "DB2/2", "line_mm2": 2.5, "cpc_mm2": 1.5,
     "r1_r2_ohm": 0.15, "design_current_a": 16, "length_m": 15},
]


def split_drop(r1r2: float, line: float, cpc: float, amps: float) -> float:
    """Split method: R1 = (R1+R2)·A_cpc/(A_line + A_cpc), Rn = R1, VD = (R1 + Rn)·F·I."""
    r1 = r1r2 * cpc / (line + cpc)
    return 2 * r1 * F_70C * amps


def run(rows: list[dict[str, Any]]) -> dict[tuple[str, str], Verdict]:
    records = []
    for row in rows:
        record, errors = build_record(row)
        assert record is not None and not errors
        records.append(record)
    return {v.key: v for v in verify(records)}


def vd_of(verdict: Verdict) -> CheckResult:
    [check] = [c for c in verdict.checks if c.check == "voltage_drop"]
    return check


def test_three_deep_chain_total_is_the_sum_of_its_parts() -> None:
    """Three boards down: total = own drop + each feeder's own drop, each by the split formula."""
    verdicts = run(CHAIN)
    check = vd_of(verdicts[("DB3", "1")])
    parts = {f"{r['board']}/{r['circuit']}": split_drop(r["r1_r2_ohm"], r["line_mm2"], r["cpc_mm2"],
                                                         r["design_current_a"]) for r in CHAIN}
    assert check.inputs["upstream"] == ["DB2/2", "DB1/7", "DB0/4"]
    assert check.inputs["circuit_v"] == pytest.approx(parts.pop("DB3/1"))
    assert [p["volts"] for p in check.inputs["upstream_parts"]] == pytest.approx(
        [parts["DB2/2"], parts["DB1/7"], parts["DB0/4"]])
    assert check.inputs["upstream_v"] == pytest.approx(sum(parts.values()))
    assert check.value == pytest.approx(check.inputs["circuit_v"] + check.inputs["upstream_v"])
    assert check.inputs["route_length_m"] == 90
    assert "upstream" in check.detail and check.outcome == "pass"
    # each distribution circuit is judged from the origin too; the origin's feeder has no upstream part
    assert vd_of(verdicts[("DB0", "4")]).inputs["upstream"] == []
    assert vd_of(verdicts[("DB2", "2")]).inputs["upstream"] == ["DB1/7", "DB0/4"]


def test_upstream_drop_can_turn_a_pass_into_a_fail() -> None:
    """Within 5 % on its own, a circuit exceeds 11.5 V (Table G.52.1 [secondary]) once its feeder's drop is
    added."""
    rows = [{"board": "M", "circuit": "1", "r1_r2_ohm": 0.2, "line_mm2": 16, "cpc_mm2": 16,
             "design_current_a": 40},
            {"board": "S", "circuit": "1", "board_fed_from": "M/1", "r1_r2_ohm": 0.5, "line_mm2": 2.5,
             "cpc_mm2": 2.5, "design_current_a": 16}]
    check = vd_of(run(rows)[("S", "1")])
    assert check.inputs["circuit_v"] == pytest.approx(0.5 * F_70C * 16)  # 9.6 V, within 11.5 V
    assert check.inputs["upstream_v"] == pytest.approx(0.2 * F_70C * 40)  # 9.6 V
    assert check.outcome == "fail"


def test_cycle_is_an_error_for_those_boards_only() -> None:
    """Boards feeding each other, and boards fed through them, are incomplete naming the cycle; others not."""
    rows = [*CHAIN,
            {"board": "DB5", "circuit": "1", "board_fed_from": "DB6/1", "r1_r2_ohm": 0.1,
             "design_current_a": 20},
            {"board": "DB6", "circuit": "1", "board_fed_from": "DB5/1", "r1_r2_ohm": 0.1,
             "design_current_a": 20},
            {"board": "DB7", "circuit": "1", "board_fed_from": "DB6/1", "r1_r2_ohm": 0.1,
             "design_current_a": 20}]
    verdicts = run(rows)
    for key in (("DB5", "1"), ("DB6", "1"), ("DB7", "1")):
        check = vd_of(verdicts[key])
        assert check.outcome == "incomplete"
        assert check.inputs["error"]["code"] == "feeder_cycle"
        assert "cycle" in check.detail
        assert not verdicts[key].errors  # a value, not a crash
    assert "passes board DB6" in vd_of(verdicts[("DB7", "1")]).detail
    assert vd_of(verdicts[("DB3", "1")]).outcome == "pass"


def test_missing_feeder_is_an_error_for_that_board_only() -> None:
    """A board fed from a circuit with no record is incomplete naming it; the chain beside it is not."""
    rows = [*CHAIN, {"board": "DB9", "circuit": "1", "board_fed_from": "DB4/1", "r1_r2_ohm": 0.1,
                     "design_current_a": 20}]
    verdicts = run(rows)
    check = vd_of(verdicts[("DB9", "1")])
    assert check.outcome == "incomplete"
    assert check.inputs["error"]["code"] == "feeder_missing"
    assert "DB4/1" in check.detail
    assert check.inputs["circuit_v"] == pytest.approx(0.1 * F_70C * 20)
    assert vd_of(verdicts[("DB3", "1")]).outcome == "pass"


@pytest.mark.parametrize(("rows", "code"), [
    ([{"board": "A", "circuit": "1", "r1_r2_ohm": 0.1, "design_current_a": 10},
      {"board": "A", "circuit": "2", "r1_r2_ohm": 0.1, "design_current_a": 10},
      {"board": "B", "circuit": "1", "board_fed_from": "A/1", "r1_r2_ohm": 0.1, "design_current_a": 10},
      {"board": "B", "circuit": "2", "board_fed_from": "A/2", "r1_r2_ohm": 0.1, "design_current_a": 10}],
     "feeder_conflict"),
    ([{"board": "A", "circuit": "1", "r1_r2_ohm": 0.1},
      {"board": "B", "circuit": "1", "board_fed_from": "A/1", "r1_r2_ohm": 0.1, "design_current_a": 10}],
     "feeder_incomplete"),
    ([{"board": "B", "circuit": "1", "board_fed_from": "B/1", "r1_r2_ohm": 0.1, "design_current_a": 10}],
     "feeder_cycle"),
])
def test_other_broken_chains_are_named(rows: list[dict[str, Any]], code: str) -> None:
    """Conflicting feeders, a feeder without data, a board fed from itself: each a named error."""
    check = vd_of(run(rows)[("B", "1")])
    assert check.outcome == "incomplete"
    assert check.inputs["error"]["code"] == code


def test_board_names_with_a_slash_resolve() -> None:
    """'DB/A/3' resolves to board 'DB/A', circuit '3' when that record exists."""
    rows = [{"board": "DB/A", "circuit": "3", "r1_r2_ohm": 0.1, "design_current_a": 10},
            {"board": "S", "circuit": "1", "board_fed_from": "DB/A/3", "r1_r2_ohm": 0.1,
             "design_current_a": 10}]
    assert vd_of(run(rows)[("S", "1")]).inputs["upstream"] == ["DB/A/3"]


def test_chain_is_cached_per_board() -> None:
    """The chain and the upstream drop are computed once per board per call (ctx.cache)."""
    records = [r for r in (build_record(row)[0] for row in CHAIN) if r is not None]
    ctx = Context.build(records, load_builtin("bs7671-2018-a2"))
    first = upstream_drop("DB3", ctx)
    assert not isinstance(first, FeederProblem)
    assert upstream_drop("DB3", ctx) is first
    chain = feeder_chain("DB3", ctx)
    assert not isinstance(chain, FeederProblem)
    assert [r.key for r in chain] == [("DB2", "2"), ("DB1", "7"), ("DB0", "4")]
