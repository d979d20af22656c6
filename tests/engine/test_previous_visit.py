"""previous_visit: each reading against the same circuit's at the previous visit (periodic inspection).

The thresholds are the ruleset's ``previous_visit`` figures, ohmtally's choice (`common practice`: no
standard gives a number); each is tested just inside, at and just beyond. That a change should be
compared with the previous inspection's results at all is handbook guidance for periodic inspection
(IET Guidance Note 3; BS 7671:2018 Chapter 65; IEC 60364-6 clause 6.5) — `from memory`.
"""

from __future__ import annotations

from datetime import date
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import (
    BoardRecord,
    CheckResult,
    PreviousVisit,
    Site,
    build_board,
    build_record,
    builtin_ruleset_ids,
    load_builtin,
    ruleset_from_data,
    verify,
    verify_compact,
    visit_changes,
)
from engine.stream import verify_stream
from tests.engine.test_verify_properties import _usable
from tests.strategies import records

WHEN = date(2022, 3, 14)


def rec(board: str = "DB1", circuit: str = "1", **fields: Any) -> Any:
    record, errors = build_record({"board": board, "circuit": circuit, **fields})
    assert record is not None, errors
    return record


def visit(*records: Any, **kwargs: Any) -> PreviousVisit:
    return PreviousVisit(job=41, tested_on=WHEN, records=records, **kwargs)


def results(current: list[Any], previous: PreviousVisit | None, ruleset: Any = None,
            site: Site | None = None) -> list[CheckResult]:
    verdicts = verify(current, ruleset, previous=previous, site=site)
    return [c for v in verdicts for c in v.checks if c.check == "previous_visit"]


def outcome_of(field: str, then: Any, now: Any) -> str:
    found = results([rec(**{field: now})], visit(rec(**{field: then})))
    assert len(found) == 1, found
    return found[0].outcome.value


# (field, previous, just inside, at, just beyond) — each threshold from the ruleset's previous_visit section
THRESHOLDS = [
    # insulation: falls by more than insulation_fall_factor (2): 30 MΩ → limit 15 MΩ (below the 20 MΩ level)
    ("ir_le_mohm", 30, 15.01, 15, 14.99),
    # insulation: below insulation_level_mohm (20 MΩ) after a fall of any factor beyond 2 (> 999 MΩ before)
    ("ir_ll_mohm", ">999", 20.01, 20, 19.99),
    # R1+R2: rise_fraction 0.2 of 0.5 Ω = 0.1 Ω (above the 0.05 Ω margin) → limit 0.6 Ω
    ("r1_r2_ohm", 0.5, 0.59, 0.6, 0.61),
    # R1+R2: continuity_margin_ohm 0.05 Ω (above 0.2 × 0.1 Ω) → limit 0.15 Ω
    ("r1_r2_ohm", 0.1, 0.14, 0.15, 0.16),
    # ring end-to-end r1: 0.2 × 0.3 Ω = 0.06 Ω → limit 0.36 Ω
    ("ring_r1_ohm", 0.3, 0.35, 0.36, 0.37),
    # Zs: 0.2 × 1.0 Ω → limit 1.2 Ω
    ("zs_ohm", 1.0, 1.19, 1.2, 1.21),
    # Zs: loop_margin_ohm 0.1 Ω (above 0.2 × 0.3 Ω) → limit 0.4 Ω
    ("zs_ohm", 0.3, 0.39, 0.4, 0.41),
    # Ze either way: 0.2 × 0.8 Ω = 0.16 Ω → 0.96 Ω above, 0.64 Ω below
    ("ze_ohm", 0.8, 0.95, 0.96, 0.97),
    ("ze_ohm", 0.8, 0.65, 0.64, 0.63),
    # Ze either way: margin 0.1 Ω (above 0.2 × 0.35 Ω) → 0.45 Ω, 0.25 Ω
    ("ze_ohm", 0.35, 0.44, 0.45, 0.46),
    ("ze_ohm", 0.35, 0.26, 0.25, 0.24),
    # RCD at IΔn: rcd_slower_fraction 0.5 of 30 ms = 15 ms (above the 10 ms margin) → 45 ms
    ("rcd_trip_ms", 30, 44, 45, 46),
    # RCD at 5 IΔn: rcd_margin_ms 10 ms (above 0.5 × 10 ms) → 20 ms
    ("rcd_trip_5x_ms", 10, 19, 20, 21),
]


@pytest.mark.parametrize(("field", "then", "inside", "at", "beyond"), THRESHOLDS)
def test_each_comparison_at_its_threshold(field: str, then: Any, inside: float, at: float,
                                          beyond: float) -> None:
    """Just inside and at the threshold pass; just beyond is `investigate` (previous_visit figures,
    common practice: a change *more than* the threshold needs a look)."""
    assert outcome_of(field, then, inside) == "pass"
    assert outcome_of(field, then, at) == "pass"
    assert outcome_of(field, then, beyond) == "investigate"


def test_a_fall_above_the_level_is_not_flagged() -> None:
    """Insulation halving and more from 999 to 100 MΩ stays above insulation_level_mohm (20): pass
    (both conditions must hold, common practice)."""
    assert outcome_of("ir_le_mohm", 999, 100) == "pass"


def test_a_small_fall_below_the_level_is_not_flagged() -> None:
    """10 MΩ to 6 MΩ is below the 20 MΩ level but not a fall by more than 2: pass (common practice)."""
    assert outcome_of("ir_le_mohm", 10, 6) == "pass"


def test_investigate_carries_the_previous_value_date_job_and_change() -> None:
    """The result holds inputs.previous {value, relation, unit, date, job} and the change (derived:
    0.8 − 0.6 = 0.2 Ω, +1/3)."""
    found = results([rec(r1_r2_ohm=0.8)], visit(rec(r1_r2_ohm=0.6)))
    (result,) = found
    assert result.outcome.value == "investigate"
    assert result.value == 0.8 and result.limit == pytest.approx(0.72) and result.limit_kind == "max"
    assert result.inputs["previous"] == {"value": 0.6, "relation": "=", "unit": "Ω", "date": "2022-03-14",
                                         "job": 41}
    assert result.inputs["change"] == pytest.approx(0.2)
    assert result.inputs["fraction"] == pytest.approx(1 / 3)
    assert "0.6 Ω" in result.detail and "2022-03-14" in result.detail
    assert result.basis is not None and "Chapter 65" in result.basis


def test_from_over_range_to_a_few_megohms() -> None:
    """> 999 MΩ then 4.5 MΩ now: a fall by more than 2 to below 20 MΩ, shown by the bound (common
    practice)."""
    (result,) = results([rec(ir_le_mohm=4.5)], visit(rec(ir_le_mohm=">999")))
    assert result.outcome.value == "investigate" and result.limit == 20
    assert result.inputs["previous"]["relation"] == ">"


def test_a_bound_that_settles_nothing_is_investigated() -> None:
    """> 0.5 Ω then 0.65 Ω now: the previous bound allows both a rise beyond and within the 20 %
    (derived): never a pass, `investigate` as bound_unsettled."""
    (result,) = results([rec(r1_r2_ohm=0.65)], visit(rec(r1_r2_ohm=">0.5")))
    assert result.outcome.value == "investigate" and result.method == "bound_unsettled"


def test_over_range_both_times_is_unchanged() -> None:
    """> 999 MΩ at both visits: at least 999 MΩ now, above the 20 MΩ level: pass (common practice)."""
    (result,) = results([rec(ir_le_mohm=">999")], visit(rec(ir_le_mohm=">999")))
    assert result.outcome.value == "pass" and result.inputs["compared"] == ["ir_le_mohm"]


def test_a_device_or_cable_that_changed() -> None:
    """B32 then C32, 2.5 then 4 mm²: each a change to look at; the same device is a pass."""
    found = results([rec(device_curve="C", device_rating_a=32, line_mm2=4)],
                    visit(rec(device_curve="B", device_rating_a=32, line_mm2=2.5)))
    assert {(r.inputs["field"], r.outcome.value) for r in found} == {("device_curve", "investigate"),
                                                                     ("line_mm2", "investigate")}
    same = results([rec(device_curve="B", device_rating_a=32)],
                   visit(rec(device_curve="B", device_rating_a=32)))
    assert [r.outcome.value for r in same] == ["pass"]


def test_no_previous_visit_no_check() -> None:
    """A first visit: verify() without previous= gives no previous_visit result."""
    assert results([rec(r1_r2_ohm=0.5)], None) == []


def test_a_new_circuit_gets_no_check() -> None:
    """A circuit the previous visit did not have: no result (it is listed as appeared, not judged)."""
    assert results([rec(circuit="9", r1_r2_ohm=0.5)], visit(rec(circuit="1", r1_r2_ohm=0.5))) == []


def test_nothing_recorded_on_both_visits_gives_nothing() -> None:
    """A match with no field recorded on both visits: nothing to judge, no result (never a bare pass)."""
    assert results([rec(r1_r2_ohm=0.5)], visit(rec(zs_ohm=0.5))) == []


def test_a_refused_value_is_not_compared() -> None:
    """A current R1+R2 refused at intake is not compared (its own checks say so); no pass rests on it."""
    record, _errors = build_record({"board": "DB1", "circuit": "1", "r1_r2_ohm": "lots"})
    assert record is not None and "r1_r2_ohm" in record.rejected
    assert results([record], visit(rec(r1_r2_ohm=0.5))) == []


def test_renamed_board_and_circuit_through_the_map() -> None:
    """Boards and circuits renamed since are matched only through the visit's explicit map."""
    previous = visit(rec("CU", "1", r1_r2_ohm=0.5), rec("CU", "2", r1_r2_ohm=0.5),
                     rec("DB1", "7", zs_ohm=1.0), boards={"CU": "DB1"}, circuits={("DB1", "7"): ("DB1", "3")})
    verdicts = verify([rec("DB1", "1", r1_r2_ohm=0.7), rec("DB1", "2", r1_r2_ohm=0.5),
                       rec("DB1", "3", zs_ohm=1.3)], previous=previous)
    got = {v.circuit: [c.outcome.value for c in v.checks if c.check == "previous_visit"] for v in verdicts}
    assert got == {"1": ["investigate"], "2": ["pass"], "3": ["investigate"]}
    unmapped = visit(rec("CU", "1", r1_r2_ohm=0.5))
    assert results([rec("DB1", "1", r1_r2_ohm=0.7)], unmapped) == []  # never guessed


def test_an_ambiguous_map_matches_nothing() -> None:
    """Two previous circuits mapped onto one key at the same level: neither is used (no guess)."""
    previous = visit(rec("A", "1", r1_r2_ohm=0.5), rec("B", "1", r1_r2_ohm=0.9),
                     boards={"A": "DB1", "B": "DB1"})
    assert results([rec("DB1", "1", r1_r2_ohm=0.7)], previous) == []
    listing = visit_changes([rec("DB1", "1", r1_r2_ohm=0.7)], previous)
    assert listing["ambiguous"] == [{"board": "A", "circuit": "1"}, {"board": "B", "circuit": "1"}]
    assert listing["appeared"] == [{"board": "DB1", "circuit": "1"}] and listing["gone"] == []


def test_an_inherited_zdb_change_reaches_the_board_s_circuits() -> None:
    """A board's Zdb 0.3 Ω then 0.55 Ω: the circuits inheriting it see a Ze change beyond 0.1 Ω
    (loop_margin_ohm, common practice), named with where it came from."""
    def site(zdb: float) -> Site:
        board, _errors = build_board({"board": "DB1", "zdb_ohm": zdb})
        assert isinstance(board, BoardRecord)
        return Site.of(None, [board])
    previous = visit(rec(r1_r2_ohm=0.5), site=site(0.3))
    (verdict,) = verify([rec(r1_r2_ohm=0.5)], previous=previous, site=site(0.55))
    found = [c for c in verdict.checks if c.check == "previous_visit"]
    assert [(c.inputs["field"], c.outcome.value) for c in found] == [("ze_ohm", "investigate")]
    assert verdict.inherited.get("ze_ohm") == "board DB1"
    listing = visit_changes([rec(r1_r2_ohm=0.5)], previous, site=site(0.55))
    assert listing["supply"] == [{"where": "board DB1", "field": "zdb_ohm",
                                  "previous": {"value": 0.3, "relation": "=", "unit": "Ω"},
                                  "current": {"value": 0.55, "relation": "=", "unit": "Ω"},
                                  "change": 0.25, "fraction": pytest.approx(0.833333), "needs_look": True}]


def test_changes_listing_appeared_gone_and_rows() -> None:
    """The listing names what differs (with needs_look per the check's rules), what appeared and what went."""
    previous = visit(rec("DB1", "1", r1_r2_ohm=0.6, zs_ohm=0.9), rec("DB1", "4", r1_r2_ohm=0.2))
    current = [rec("DB1", "1", r1_r2_ohm=0.8, zs_ohm=0.9), rec("DB1", "5", r1_r2_ohm=0.2)]
    listing = visit_changes(current, previous)
    assert listing["previous"] == {"date": "2022-03-14", "job": 41}
    assert listing["appeared"] == [{"board": "DB1", "circuit": "5"}]
    assert listing["gone"] == [{"board": "DB1", "circuit": "4"}]
    (circuit,) = listing["circuits"]
    assert circuit["needs_look"] is True
    assert [(row["field"], row["needs_look"]) for row in circuit["changes"]] == [("r1_r2_ohm", True)]


def test_compact_and_stream_views_agree() -> None:
    """verify_compact and verify_stream carry the same previous_visit outcomes as verify()."""
    previous = visit(rec("DB1", "1", r1_r2_ohm=0.5), rec("DB2", "1", ir_le_mohm=300))
    current = [rec("DB1", "1", r1_r2_ohm=0.9), rec("DB2", "1", ir_le_mohm=250)]
    full = [[(c.check, c.outcome.value) for c in v.checks] for v in verify(current, previous=previous)]
    compact = [[(row[0], row[1]) for row in v["checks"]] for v in verify_compact(current, previous=previous)]
    stream = [[(c.check, c.outcome.value) for c in v.checks]
              for v in verify_stream(current, previous=previous)]
    assert full == compact == stream
    assert ("previous_visit", "investigate") in full[0] and ("previous_visit", "pass") in full[1]


def test_a_ruleset_without_the_figures_is_incomplete_never_a_pass() -> None:
    """A user's ruleset that lacks the previous_visit section: the check is `incomplete` with an error."""
    base = load_builtin("bs7671-2018-a2")
    sections = {name: {k: e.as_dict() for k, e in entries.items()} for name, entries in base.sections.items()
                if name != "previous_visit"}
    for entries in sections.values():
        for entry in entries.values():
            entry.pop("marker_meaning", None)
    rules = ruleset_from_data({"id": "local", "title": "no previous_visit", "sections": sections})
    (verdict,) = verify([rec(r1_r2_ohm=0.9)], rules, previous=visit(rec(r1_r2_ohm=0.5)))
    found = [c for c in verdict.checks if c.check == "previous_visit"]
    assert [c.outcome.value for c in found] == ["incomplete"]
    assert any(e["check"] == "previous_visit" for e in verdict.errors)


@pytest.mark.parametrize("ruleset", ["bs7671-2018-a2", "iec-60364"])
def test_both_rulesets_hold_every_figure_with_a_basis(ruleset: str) -> None:
    """Every threshold is ruleset data with its source and a marker; the thresholds are `practice`."""
    rules = load_builtin(ruleset)
    section = rules.sections["previous_visit"]
    for key in ("insulation_fall_factor", "insulation_level_mohm", "rise_fraction", "continuity_margin_ohm",
                "loop_margin_ohm", "ze_change_fraction", "rcd_slower_fraction", "rcd_margin_ms"):
        assert section[key].marker == "practice" and section[key].source
    assert section["basis"].value


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(current=st.lists(records(), min_size=1, max_size=3), before=st.lists(records(), max_size=3),
       ruleset=st.sampled_from(builtin_ruleset_ids()))
def test_any_two_visits_verify_and_a_pass_rests_on_usable_values(current: list[Any], before: list[Any],
                                                                 ruleset: str) -> None:
    """Any records on either visit (bounded, zero, negative, refused values): no check error, the compact
    view agrees, and each field a previous_visit pass compared is usable on both visits (the oracle of
    tests/engine/test_verify_properties.py: present, not refused, not impossible by sign)."""
    previous = visit(*before)
    verdicts = verify(current, ruleset, previous=previous)
    compact = verify_compact(current, ruleset, previous=previous)
    assert [[(c.check, c.outcome.value) for c in v.checks] for v in verdicts] == \
        [[(row[0], row[1]) for row in v["checks"]] for v in compact]
    now = {r.key: r for r in current}
    then = {r.key: r for r in before}
    for verdict in verdicts:
        assert "check_error" not in [e.get("code") for e in verdict.errors], verdict.errors
        for check in verdict.checks:
            if check.check != "previous_visit":
                continue
            assert verdict.key in then  # matched by name: no map here
            assert check.outcome.value in ("pass", "investigate")
            if check.outcome.value == "pass":
                for name in check.inputs["compared"]:
                    assert _usable(now[verdict.key], name) and _usable(then[verdict.key], name), name
