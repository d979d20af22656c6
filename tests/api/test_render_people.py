"""Output for people: numbers as a meter shows them, descriptions, the trade's words, cases named by
what they tested, warnings shown, the caution always there.

Circuits are invented; what is checked is how the renderers show the engine's results, against the
body the engine gave (so these tests do not depend on a rule's figures).
"""

from __future__ import annotations

from typing import Any

import pytest
from junitparser import JUnitXml

from api.answers import verify_body
from api.intake.objects import records_from_objects
from api.render import FORMATS, policy_from_names, render
from api.render._text import meter_number, meter_pair
from api.render.words import case_names, trade_text
from engine import NOTICE, load_ruleset, verify

RING = {"board": "DB1", "circuit": "2", "description": "Office sockets ring", "circuit_form": "ring",
        "line_mm2": 2.5, "cpc_mm2": 1.5, "ring_r1_ohm": 0.48, "ring_rn_ohm": 0.49, "ring_r2_ohm": 0.79,
        "r1_r2_ohm": 0.33, "length_m": 52, "ir_test_v": 500, "ir_le_mohm": ">999",
        "device_kind": "rcbo", "rcd_residual_ma": 30, "rcd_trip_ms": 21.4, "rcd_trip_5x_ms": 12.1}


def body_of(circuits: list[dict[str, Any]]) -> dict[str, Any]:
    records, bad = records_from_objects(circuits)
    ruleset = load_ruleset(None)
    return verify_body(ruleset, verify(records, ruleset), bad)


@pytest.mark.parametrize(("value", "shown"), [
    (0.367038, "0.367"), (0.00619433, "0.006"), (17.28, "17.3"), (338.0, "338"), (999.0, "999"),
    (1.37, "1.37"), (0.0004, "0.0004"), (-0.12, "-0.12"), (2000.0, "2000"), (0.0, "0"),
])
def test_meter_number_rounds_as_a_display_shows(value: float, shown: str) -> None:
    """Three significant figures, integer digits kept, at most three decimals, a non-zero never
    shown as 0 (common practice: a 3½- to 4-digit test meter display)."""
    assert meter_number(value) == shown


def test_a_value_and_its_limit_that_differ_never_read_the_same() -> None:
    """1.3749 Ω against a 1.37 Ω limit reads 1.375 vs 1.37, not 1.37 vs 1.37 (BS 7671 Table 41.3's
    B32 maximum Zs, 1.37 Ω, used as a figure only)."""
    assert meter_pair(1.3749, 1.37) == ("1.375", "1.37")
    assert meter_pair(1.37, 1.37) == ("1.37", "1.37")


def test_table_rounds_names_cases_and_shows_the_description() -> None:
    """The ring's figures are rounded (no 0.367038 / 0.00619433), its description is on its row, and
    each check is named by what it tested (insulation L-E, rcd_time at 5 IΔn, ring r1 vs rn)."""
    body = body_of([RING])
    checks = body["verdicts"][0]["checks"]
    raw = [c["limit"] for c in checks] + [c["value"] for c in checks]
    assert any(isinstance(x, float) and len(repr(x)) > 6 for x in raw)  # the body does carry long floats
    text, _ = render(body, "table", descriptions={("DB1", "2"): "Office sockets ring"})
    assert "Office sockets ring" in text
    for long in ("0.367038", "0.00619433"):
        assert long not in text
    for name in ("insulation L-E", "rcd_time at IΔn", "rcd_time at 5 IΔn", "ring_continuity r1 vs rn"):
        assert name in text


def test_sentences_use_the_trades_words_not_field_names() -> None:
    """A sentence naming fields reads 'IR L-L' in the table and JUnit, whether the engine wrote the trade's
    words itself (it does now) or a field name (trade_text rewrites it)."""
    body = body_of([{"board": "DB1", "circuit": "1", "ir_test_v": 500}])
    details = [c["detail"] for c in body["verdicts"][0]["checks"] if c["check"] == "insulation"]
    assert any("IR L-L" in d for d in details) and not any("ir_ll_mohm" in d for d in details)
    table, _ = render(body, "table")
    junit, _ = render(body, "junit", policy_from_names("incomplete"))
    for shown in (table, junit):
        assert "ir_ll_mohm" not in shown and "IR L-L" in shown
    assert trade_text("ze_ohm would allow it; zs_ohm_extra stays") == "Ze would allow it; zs_ohm_extra stays"
    assert trade_text("needs Ib (design_current_a) or In (device_rating_a)") == "needs Ib or In"


def test_junit_cases_say_what_was_tested() -> None:
    """The two insulation results of a circuit are 'insulation L-L' and 'insulation L-E' (BS 7671
    Reg. 643.3: between live conductors, and live conductors to earth), not insulation#2."""
    body = body_of([{**RING, "ir_ll_mohm": ">999"}])
    text, _ = render(body, "junit", policy_from_names())
    names = {case.name for suite in JUnitXml.fromstring(text.encode()) for case in suite}
    assert {"insulation L-L", "insulation L-E", "rcd_time at IΔn", "rcd_time at 5 IΔn"} <= names
    assert not any("#" in name for name in names)


def test_names_stay_unique_when_nothing_tells_two_results_apart() -> None:
    """Two results of one check with no qualifier still get distinct names."""
    assert case_names([{"check": "polarity"}, {"check": "polarity"}]) == ["polarity", "polarity#2"]


def test_input_warnings_are_shown_and_counted() -> None:
    """Warnings in the body (a column read as no field) are listed in the table and are skipped cases
    of the JUnit input suite."""
    body = body_of([{"board": "DB1", "circuit": "1", "polarity_ok": True}])
    body["warnings"] = [{"line": 1, "code": "unknown_field", "column": "Zss",
                         "reason": "'Zss' is not a field or an alias of one: its values are not read"}]
    table, _ = render(body, "table")
    assert "warning line 1 (Zss): 'Zss' is not a field" in table
    xml = JUnitXml.fromstring(render(body, "junit", policy_from_names())[0].encode())
    (suite,) = [s for s in xml if s.name == "input"]
    (case,) = list(suite)
    assert case.name == "line 1 Zss" and case.is_skipped


@pytest.mark.parametrize("fmt", [f for f in FORMATS if f != "csv"])
def test_every_rendered_output_carries_the_caution(fmt: str) -> None:
    """The safety notice is in the table, JUnit and JSON text (CSV's callers put it beside it)."""
    text, _ = render(body_of([RING]), fmt)
    assert NOTICE.split(":")[0] in text
