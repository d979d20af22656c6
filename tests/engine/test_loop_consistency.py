"""Loop consistency: Zs against Ze + R1+R2 per circuit, and against the board's Ze consensus."""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Verdict, build_record, verify
from engine.board_consistency import board_ze
from engine.context import Context
from engine.ruleset import load_builtin


def run(rows: list[dict[str, Any]]) -> dict[tuple[str, str], Verdict]:
    records = []
    for row in rows:
        record, errors = build_record(row)
        assert record is not None and not errors
        records.append(record)
    return {v.key: v for v in verify(records)}


def loop(verdict: Verdict) -> dict[str, CheckResult]:
    return {c.method or "incomplete": c for c in verdict.checks if c.check == "loop_consistency"}


def test_e10_measured_zs_equals_ze_plus_r1r2() -> None:
    """E10 [derived]: TN-C-S Ze 0.35 Ω + 40 m of 2.5/1.5 (0.780 Ω) → Zs 1.130 Ω agrees."""
    [verdict] = run([{"board": "B", "circuit": "1", "ze_ohm": 0.35, "r1_r2_ohm": 0.780,
                      "zs_ohm": 1.130}]).values()
    check = loop(verdict)["ze_plus_r1r2"]
    assert check.outcome == "pass"
    assert check.inputs["expected_zs_ohm"] == pytest.approx(1.130)
    assert check.limit == pytest.approx(0.05 + 0.10 * 1.130)  # ±(0.05 Ω + 10 %), our choice [practice]


@pytest.mark.parametrize(("zs", "outcome"), [(1.29, "pass"), (1.30, "investigate"), (0.97, "pass"),
                                             (0.96, "investigate")])
def test_tolerance_both_ways(zs: float, outcome: str) -> None:
    """E10's loop: beyond ±(0.05 + 0.113) Ω either side of 1.130 Ω → investigate [practice]."""
    [verdict] = run([{"board": "B", "circuit": "1", "ze_ohm": 0.35, "r1_r2_ohm": 0.780,
                      "zs_ohm": zs}]).values()
    assert loop(verdict)["ze_plus_r1r2"].outcome == outcome


# Our own invented board: Ze 0.35 Ω measured once, six circuits; circuit 6's Zs is mis-recorded.
BOARD = [{"board": "DB1", "circuit": str(n), "r1_r2_ohm": r, "zs_ohm": round(0.35 + r + d, 3)}
         for n, r, d in ((1, 0.78, 0.01), (2, 0.45, -0.02), (3, 0.98, 0.0), (4, 0.21, 0.02),
                         (5, 0.60, -0.01), (6, 0.30, 0.40))]
BOARD[0]["ze_ohm"] = 0.35


def test_board_consensus_names_the_outlier_and_the_median() -> None:
    """The median of Zs − (R1+R2) over the board is the consensus; only the outlier is investigated."""
    verdicts = run(BOARD)
    records = [r for r in (build_record(row)[0] for row in BOARD) if r is not None]
    consensus = board_ze("DB1", Context.build(records, load_builtin("bs7671-2018-a2"))).consensus_ohm
    assert consensus is not None
    assert consensus == pytest.approx(0.35, abs=0.011)
    for n in range(1, 6):
        assert {c.outcome for c in loop(verdicts[("DB1", str(n))]).values()} == {"pass"}
    outlier = loop(verdicts[("DB1", "6")])
    assert outlier["board_consensus"].outcome == "investigate"
    assert outlier["board_consensus"].inputs["consensus_ze_ohm"] == pytest.approx(consensus)
    assert f"{consensus:.3g} Ω" in outlier["ze_plus_r1r2"].detail  # names the consensus value
    assert outlier["ze_plus_r1r2"].inputs["ze_source"] == "board DB1"


def test_consensus_needs_three_circuits() -> None:
    """Fewer than three estimates are no consensus (our choice [practice]): no board_consensus result."""
    verdicts = run(BOARD[:2])
    assert "board_consensus" not in loop(verdicts[("DB1", "2")])


def test_no_ze_is_incomplete_but_consensus_still_judges() -> None:
    """Without any Ze the per-circuit comparison is incomplete; the consensus still finds the outlier."""
    rows = [{k: v for k, v in row.items() if k != "ze_ohm"} for row in BOARD]
    outlier = loop(run(rows)[("DB1", "6")])
    assert outlier["incomplete"].inputs["missing"] == ["ze_ohm"]
    assert outlier["board_consensus"].outcome == "investigate"


def test_sub_board_adds_the_feeders_r1r2_and_uses_the_origin_ze() -> None:
    """Zs on a sub-board = Ze(origin) + R1+R2 of the feeder + R1+R2 of the circuit (series loop [derived])."""
    rows = [{"board": "MAIN", "circuit": "1", "ze_ohm": 0.35, "r1_r2_ohm": 0.1, "zs_ohm": 0.45},
            {"board": "SUB", "circuit": "1", "board_fed_from": "MAIN/1", "r1_r2_ohm": 0.5,
             "zs_ohm": 0.95}]
    check = loop(run(rows)[("SUB", "1")])["ze_plus_r1r2"]
    assert check.outcome == "pass"
    assert check.inputs["feeders"] == ["MAIN/1"]
    assert check.inputs["ze_source"] == "origin board MAIN"
    assert check.inputs["expected_zs_ohm"] == pytest.approx(0.95)


def test_broken_feeder_chain_is_incomplete_for_that_board() -> None:
    """A sub-board fed from a missing record cannot find the origin's Ze: incomplete naming the error."""
    rows = [{"board": "SUB", "circuit": "1", "board_fed_from": "MAIN/9", "r1_r2_ohm": 0.5,
             "zs_ohm": 0.95}]
    check = loop(run(rows)[("SUB", "1")])["incomplete"]
    assert check.inputs["error"]["code"] == "feeder_missing"


def test_board_computation_is_cached() -> None:
    """The board's consensus is computed once per call and kept in ctx.cache."""
    ctx = Context.build([r for r in (build_record(row)[0] for row in BOARD) if r is not None],
                        load_builtin("bs7671-2018-a2"))
    assert board_ze("DB1", ctx) is board_ze("DB1", ctx)
    assert ("board_consistency.ze", "DB1") in ctx.cache


def test_no_zs_means_not_applicable() -> None:
    """Without Zs there is nothing to cross-check (loop_impedance reports the missing Zs)."""
    [verdict] = run([{"board": "B", "circuit": "1", "r1_r2_ohm": 0.5, "ze_ohm": 0.35}]).values()
    assert loop(verdict) == {}


def test_tt_sub_board_does_not_inherit_the_origin_ze() -> None:
    """A TT board fed from a TN-C-S origin: its loop runs through its own electrode (BS 7671 411.5),
    so Zs is not compared with the origin's Ze + R1+R2; a Ze measured on the TT board itself is."""
    rows = [{"board": "DB1", "circuit": "1", "earthing": "TN-C-S", "ze_ohm": 0.22, "r1_r2_ohm": 0.16,
             "zs_ohm": 0.38, "circuit_role": "distribution"},
            {"board": "DB3", "circuit": "1", "earthing": "TT", "board_fed_from": "DB1/1",
             "r1_r2_ohm": 0.24, "zs_ohm": 71.3, "ra_ohm": 68}]
    assert "ze_plus_r1r2" not in loop(run(rows)[("DB3", "1")])
    rows[1]["ze_ohm"] = 71.0  # measured on the TT board: now it is the loop's own Ze
    check = loop(run(rows)[("DB3", "1")])["ze_plus_r1r2"]
    assert check.outcome == "pass"
    assert check.inputs["ze_source"] == "record"
