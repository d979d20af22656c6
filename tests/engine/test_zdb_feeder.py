"""A sub-board's Zdb against Ze upstream + the sub-main's R1+R2 (external_impedance, method zdb_vs_feeder).

Zs = Ze + (R1+R2) (IEC 60364-6:2016 6.4.3.7.3, as the ruleset's basis cites it, from memory) holds at a
board as at a socket: Zdb = Ze upstream + R1+R2 of the circuit feeding the board. The tolerance is the
ruleset's ±(0.05 Ω + 10 % of the expected value), ohmtally's choice (common practice). The readings are
invented; the figures below are computed here from that formula, not read from the engine.
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import CheckResult, Outcome, Verdict, build_record, build_site, builtin_ruleset_ids, verify

# Origin Ze 0.25 Ω; DB1/5 feeds DB2 with R1+R2 0.25 Ω: expected Zdb 0.5 Ω, tolerance 0.05 + 0.05 = 0.1 Ω.
ZE, FEEDER_R1R2 = 0.25, 0.25
EXPECTED = ZE + FEEDER_R1R2
TOLERANCE = 0.05 + 0.1 * EXPECTED


def verdicts(zdb: Any, *, feeder: dict[str, Any] | None = None, boards: list[dict[str, Any]] | None = None,
             installation: dict[str, Any] | None = None, ruleset: str | None = None,
             extra: list[dict[str, Any]] = ()) -> dict[tuple[str, str], Verdict]:  # type: ignore[assignment]
    rows = [{"board": "DB1", "circuit": "5", "circuit_role": "distribution", "r1_r2_ohm": FEEDER_R1R2,
             **(feeder or {})},
            {"board": "DB2", "circuit": "1", "zs_ohm": 0.9}, {"board": "DB2", "circuit": "2", "zs_ohm": 0.8},
            *extra]
    records = [build_record(r)[0] for r in rows]
    default_boards = [{"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": zdb}]
    site, errors = build_site({
        "installation": installation if installation is not None else {"earthing": "TN-C-S", "ze_ohm": ZE},
        "boards": boards if boards is not None else default_boards,
    })
    assert all(e.error.code in ("bad_value",) for e in errors), errors  # "0,5" is refused on purpose
    return {v.key: v for v in verify([r for r in records if r is not None], ruleset, site=site)}


def zdb_result(verdict: Verdict) -> CheckResult:
    found = [c for c in verdict.checks if c.check == "external_impedance" and
             c.method not in ("declared_maximum", "operator_part_ze_minus_ra")]
    assert len(found) == 1, found
    return found[0]


@pytest.mark.parametrize(("zdb", "outcome"), [
    (EXPECTED, Outcome.PASS),
    (EXPECTED + TOLERANCE - 0.001, Outcome.PASS),   # just inside
    (0.6, Outcome.PASS),                            # at the tolerance (0.6 − 0.5 = 0.1 Ω)
    (0.61, Outcome.INVESTIGATE),                    # beyond, above
    (EXPECTED - TOLERANCE + 0.001, Outcome.PASS),   # just inside, below
    (0.39, Outcome.INVESTIGATE),                    # beyond, below (but above the upstream Ze)
])
def test_zdb_against_ze_upstream_plus_the_sub_main(zdb: float, outcome: Outcome) -> None:
    """Within ±(0.05 Ω + 10 %) of Ze + R1+R2 passes, beyond investigates (never fail): every circuit of the
    board carries the same result."""
    got = verdicts(zdb)
    first, second = zdb_result(got[("DB2", "1")]), zdb_result(got[("DB2", "2")])
    assert first == second and first.outcome is outcome and first.method == "zdb_vs_feeder"
    assert first.inputs["expected_zdb_ohm"] == pytest.approx(EXPECTED)
    assert first.limit == pytest.approx(TOLERANCE) and first.value == pytest.approx(abs(zdb - EXPECTED))
    assert first.inputs["ze_upstream_source"] == "installation" and first.inputs["feeder"] == "DB1/5"


def test_a_zdb_below_the_upstream_ze_cannot_be() -> None:
    """The sub-main only adds impedance: Zdb 0.15 Ω below Ze 0.25 Ω upstream is investigated, said so."""
    found = zdb_result(verdicts(0.15)[("DB2", "1")])
    assert found.outcome is Outcome.INVESTIGATE and "cannot be" in found.detail


def test_upstream_ze_is_the_feeding_boards_zdb() -> None:
    """DB3 fed from DB2/4: Ze upstream is DB2's Zdb 0.5 Ω, so DB3's expected Zdb is 0.5 + 0.2 = 0.7 Ω."""
    got = verdicts(0.5, boards=[{"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.5},
                                {"board": "DB3", "board_fed_from": "DB2/4", "zdb_ohm": 0.72}],
                   extra=[{"board": "DB2", "circuit": "4", "circuit_role": "distribution", "r1_r2_ohm": 0.2},
                          {"board": "DB3", "circuit": "1", "zs_ohm": 1.2}])
    found = zdb_result(got[("DB3", "1")])
    assert found.outcome is Outcome.PASS and found.inputs["ze_upstream_source"] == "board DB2"
    assert found.inputs["expected_zdb_ohm"] == pytest.approx(0.7)


def test_missing_or_refused_pieces_are_incomplete_never_pass() -> None:
    """No feeder R1+R2, a bounded one, a refused Zdb, a LIM Zdb: incomplete, naming what is missing."""
    no_r1r2 = zdb_result(verdicts(0.5, feeder={"r1_r2_ohm": None})[("DB2", "1")])
    assert no_r1r2.outcome is Outcome.INCOMPLETE and no_r1r2.inputs["missing"] == ["DB1/5 r1_r2_ohm"]
    bounded = zdb_result(verdicts(0.5, feeder={"r1_r2_ohm": "<0.3"})[("DB2", "1")])
    assert bounded.outcome is Outcome.INCOMPLETE
    refused = zdb_result(verdicts("0,5")[("DB2", "1")])
    assert refused.outcome is Outcome.INCOMPLETE and refused.method == "rejected_value"
    assert refused.inputs["inherited_from"] == "board DB2"
    limited = zdb_result(verdicts("LIM")[("DB2", "1")])
    assert limited.outcome is Outcome.INCOMPLETE and limited.method == "limitation_recorded"
    no_ze = zdb_result(verdicts(0.5, installation={"earthing": "TN-C-S"})[("DB2", "1")])
    assert no_ze.outcome is Outcome.INCOMPLETE and no_ze.inputs["missing"] == ["DB1 zdb_ohm"]


def test_an_impossible_feeder_reading_is_investigated() -> None:
    """A feeder R1+R2 of −0.1 Ω cannot be (IEC 60228 conductors have resistance): investigate, naming it."""
    found = zdb_result(verdicts(0.5, feeder={"r1_r2_ohm": -0.1})[("DB2", "1")])
    assert found.outcome is Outcome.INVESTIGATE and found.inputs["record"] == "DB1/5"


def test_left_out_where_it_does_not_apply() -> None:
    """No Zdb, a board at the origin, a TT board fed from a TN board (its own electrode): no such result."""
    def methods(got: dict[tuple[str, str], Verdict], key: tuple[str, str]) -> set[str | None]:
        return {c.method for c in got[key].checks if c.check == "external_impedance"}

    assert "zdb_vs_feeder" not in methods(verdicts(None), ("DB2", "1"))
    origin = verdicts(0.3, boards=[{"board": "DB2", "zdb_ohm": 0.3}])
    assert "zdb_vs_feeder" not in methods(origin, ("DB2", "1"))
    tt = verdicts(5.0, boards=[{"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 5.0, "earthing": "TT",
                                "ra_ohm": 4}])
    assert "zdb_vs_feeder" not in methods(tt, ("DB2", "1"))


@pytest.mark.parametrize("ruleset", builtin_ruleset_ids())
def test_every_ruleset_judges_it(ruleset: str) -> None:
    """The comparison needs no declared Ze figure, so the IEC ruleset (which has none) judges it too."""
    assert zdb_result(verdicts(0.5, ruleset=ruleset)[("DB2", "1")]).outcome is Outcome.PASS
