"""verify_stream: one board at a time, the same verdicts as verify() on the same records.

The reference here is :func:`engine.verify` itself over the whole input (the
contract ``verify_stream`` promises to keep), not any rule's figure: the rules
are tested against their sources in the other engine tests.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from engine import CircuitRecord, build_record, verify
from engine.stream import verify_stream
from tests.bench import synthetic


def _records(rows: list[dict[str, Any]]) -> list[CircuitRecord]:
    out = []
    for row in rows:
        record, errors = build_record(row)
        assert record is not None and not errors
        out.append(record)
    return out


def _dicts(verdicts: Any) -> list[dict[str, Any]]:
    return [v.as_dict() for v in verdicts]


@pytest.mark.parametrize("ruleset", ["bs7671-2018-a2", "iec-60364"])
def test_grouped_input_gives_verifys_verdicts_in_order(ruleset: str) -> None:
    """Boards in origin-first order (feeders, sub-boards, TT, rings, three-phase): equal to verify()."""
    records = synthetic.records(300)
    assert _dicts(verify_stream(records, ruleset)) == _dicts(verify(records, ruleset))


# Our own invented chain: DB0/4 feeds DB1, DB1/7 feeds DB2; Ze recorded on DB0 only.
CHAIN: list[dict[str, Any]] = [
    {"board": "DB0", "circuit": "1", "ze_ohm": 0.2, "zs_ohm": 0.5, "r1_r2_ohm": 0.3,
     "device_kind": "breaker", "device_curve": "B", "device_rating_a": 16},
    {"board": "DB0", "circuit": "4", "circuit_role": "distribution", "line_mm2": 16, "cpc_mm2": 6,
     "r1_r2_ohm": 0.09, "design_current_a": 40, "length_m": 30, "ze_ohm": 0.2, "zs_ohm": 0.29},
    {"board": "DB1", "circuit": "7", "board_fed_from": "DB0/4", "circuit_role": "distribution",
     "line_mm2": 10, "cpc_mm2": 4, "r1_r2_ohm": 0.12, "design_current_a": 32, "length_m": 25,
     "zs_ohm": 0.41},
    {"board": "DB1", "circuit": "8", "board_fed_from": "DB0/4", "line_mm2": 2.5, "cpc_mm2": 1.5,
     "r1_r2_ohm": 0.4, "zs_ohm": 0.7, "device_kind": "breaker", "device_curve": "B",
     "device_rating_a": 20},
    {"board": "DB2", "circuit": "1", "board_fed_from": "DB1/7", "line_mm2": 2.5, "cpc_mm2": 1.5,
     "r1_r2_ohm": 0.15, "design_current_a": 16, "length_m": 15, "zs_ohm": 0.58},
]


def test_sub_board_before_its_feeder_is_held_and_then_matches() -> None:
    """A board listed before the board feeding it is verified at the end, with verify()'s verdicts."""
    records = _records([CHAIN[4], *CHAIN[:4]])
    streamed = _dicts(verify_stream(records))
    whole = _dicts(verify(records))
    assert [(v["board"], v["circuit"]) for v in streamed][-1] == ("DB2", "1")
    assert sorted(streamed, key=lambda v: (v["board"], v["circuit"])) == \
        sorted(whole, key=lambda v: (v["board"], v["circuit"]))


def test_chain_three_deep_matches_verify() -> None:
    """The origin Ze and the feeders' drops reach DB2 through two kept distribution circuits."""
    records = _records(CHAIN)
    streamed = _dicts(verify_stream(records))
    assert streamed == _dicts(verify(records))
    vd = next(c for c in streamed[-1]["checks"] if c["check"] == "voltage_drop")
    assert vd["inputs"]["upstream"] == ["DB1/7", "DB0/4"]  # both kept feeders were followed


@pytest.mark.parametrize(("rows", "problem"), [
    ([{**CHAIN[0]}, {**CHAIN[2], "board_fed_from": "DB9/1"}], "no record of"),  # never given
    ([{**CHAIN[1], "board_fed_from": "DB1/7"}, CHAIN[2]], "in a cycle"),  # DB0, DB1 feed each other
    ([CHAIN[1], {**CHAIN[2]}, {**CHAIN[3], "board_fed_from": "DB0/1"}], "different feeders"),
])
def test_broken_chains_fail_as_verify_says(rows: list[dict[str, Any]], problem: str) -> None:
    """Missing, cyclic and conflicting feeders give the same verdicts streamed as whole."""
    records = _records(rows)
    streamed = sorted(_dicts(verify_stream(records)), key=lambda v: (v["board"], v["circuit"]))
    assert streamed == sorted(_dicts(verify(records)), key=lambda v: (v["board"], v["circuit"]))
    assert problem in str(streamed)


def test_first_board_is_answered_before_the_input_ends() -> None:
    """Streaming: DB0's verdicts come out while the input still has boards to give."""
    pulled: list[str] = []

    def source() -> Iterator[CircuitRecord]:
        for record in _records(CHAIN):
            pulled.append(record.board)
            yield record

    stream = verify_stream(source())
    first = next(stream)
    assert first.board == "DB0"
    assert pulled == ["DB0", "DB0", "DB1"]  # one record past the board's end, no more


def test_duplicate_key_in_a_board_keeps_the_later_record() -> None:
    """Within a board's run a repeated circuit is replaced, first-seen order, as verify() does."""
    records = _records([CHAIN[0], CHAIN[1], {**CHAIN[0], "zs_ohm": 0.9}])
    assert _dicts(verify_stream(records)) == _dicts(verify(records))
