"""Trade notation reaches the record: device, cable, RCD and earthing as schedules write them.

Forms and what they mean: BS 7671:2018 Tables 41.2, 41.3 and 41.4 (curve letters and device standards),
BS EN 61008-1 / 61009-1 (RCD types and S), IEC 60364-1 (earthing systems; PME is the UK name of TN-C-S).
The Zs figure below is BS 7671 Table 41.3's 1.37 Ω for a B32 (0.95 × 230 / (5 × 32) = 1.365, rounded).
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import Outcome, build_record, record_to_dict, verify

BASE = {"board": "DB1", "circuit": "1"}


def built(**data: Any) -> Any:
    record, errors = build_record({**BASE, **data})
    assert record is not None and errors == [], errors
    return record


@pytest.mark.parametrize(("text", "fields"), [
    ("B32", {"device_kind": "breaker", "device_standard": "BS EN 60898", "device_curve": "B",
             "device_rating_a": 32.0}),
    ("C16", {"device_kind": "breaker", "device_curve": "C", "device_rating_a": 16.0}),
    ("D10", {"device_kind": "breaker", "device_curve": "D", "device_rating_a": 10.0}),
    ("RCBO B20 30mA A", {"device_kind": "rcbo", "device_standard": "BS EN 61009", "device_curve": "B",
                         "device_rating_a": 20.0, "rcd_residual_ma": 30.0, "rcd_type": "A"}),
    ("BS 88-2 63A", {"device_kind": "fuse", "device_standard": "BS 88-2", "device_rating_a": 63.0}),
    ("BS 88-3 32A", {"device_kind": "fuse", "device_standard": "BS 88-3", "device_rating_a": 32.0}),
    ("BS 3036 15A", {"device_kind": "fuse", "device_standard": "BS 3036", "device_rating_a": 15.0}),
    ("BS 1362 13A", {"device_kind": "fuse", "device_standard": "BS 1362", "device_rating_a": 13.0}),
    ("BS EN 60898 B16", {"device_kind": "breaker", "device_standard": "BS EN 60898", "device_curve": "B",
                         "device_rating_a": 16.0}),
])
def test_each_device_form_reaches_the_split_fields(text: str, fields: dict[str, Any]) -> None:
    """A device written as a schedule writes it sets the split fields (Tables 41.2–41.4); the text is kept."""
    record = built(device=text)
    assert {name: getattr(record, name) for name in fields} == fields
    assert record.notation == {"device": text}


@pytest.mark.parametrize(("text", "line", "cpc"), [("2.5/1.5", 2.5, 1.5), ("1.5/1.0", 1.5, 1.0),
                                                   ("6/2.5", 6.0, 2.5)])
def test_each_cable_form_reaches_line_and_cpc(text: str, line: float, cpc: float) -> None:
    """line/cpc in mm² (IEC 60228 nominal sizes) set line_mm2 and cpc_mm2."""
    record = built(cable=text)
    assert (record.line_mm2, record.cpc_mm2, record.notation) == (line, cpc, {"cable": text})


@pytest.mark.parametrize(("text", "fields"), [
    ("30mA A", {"rcd_residual_ma": 30.0, "rcd_type": "A", "rcd_delayed": None}),
    ("100mA S", {"rcd_residual_ma": 100.0, "rcd_type": None, "rcd_delayed": True}),
])
def test_each_rcd_form_reaches_the_rcd_fields(text: str, fields: dict[str, Any]) -> None:
    """IΔn, type (BS EN 61008-1 / 61009-1) and S (time-delayed); without S the default is not guessed."""
    record = built(rcd=text)
    assert {name: getattr(record, name) for name in fields} == fields


@pytest.mark.parametrize(("text", "system"), [("TN-C-S (PME)", "TN-C-S"), ("PME", "TN-C-S"),
                                              ("TN-S", "TN-S"), ("TT", "TT"), ("tn-c-s", "TN-C-S")])
def test_each_earthing_form_reaches_the_field(text: str, system: str) -> None:
    """Earthing notation (IEC 60364-1 systems; PME the UK name of TN-C-S) is the earthing field itself."""
    assert built(earthing=text).earthing == system


def test_a_curve_letter_alone_now_gets_zs_judged() -> None:
    """'B32' alone gives device kind and standard, so Zs 1.2 Ω is judged against Table 41.3's 1.37 Ω, and
    the verdict says what the notation inferred and which notation the check read."""
    [verdict] = verify([built(device="B32", zs_ohm=1.2, earthing="TN-S", ze_ohm=0.3)])
    loop = next(c for c in verdict.checks if c.check == "loop_impedance")
    assert loop.outcome is not Outcome.INCOMPLETE and loop.inputs["max_zs"] == 1.37
    assert loop.inputs["notation"] == {"device": "B32"}
    assert verdict.inferred["device_standard"] == "BS EN 60898"
    assert verdict.inferred["device_kind"] == "breaker"


@pytest.mark.parametrize("data", [
    {"device": "B32", "cable": "2.5/1.5", "rcd": "30mA A"},
    {"device": "RCBO C16 30mA A", "zs_ohm": 0.9},
    {"device": "BS 88-3 32A", "device_breaking_ka": 16},
    {"cable": "2,5/1,5"},
    {"rcd": "N/A", "device": "B6"},
    {"device": "B3 2"},
    {"device": "B32", "device_rating_a": 20},
])
def test_notation_round_trips(data: dict[str, Any]) -> None:
    """build_record(record_to_dict(r)) gives r back: the text is written back in place of its fields;
    refused and conflicting fields travel as refused, marks as marks."""
    comma = data.get("cable") == "2,5/1,5"
    record, _ = build_record({**BASE, **data}, decimal_comma=comma)
    assert record is not None
    again, errors = build_record(record_to_dict(record))
    assert errors == [] and again == record


def test_the_stored_form_writes_the_text_not_the_fields_it_gave() -> None:
    """record_to_dict writes 'device': 'B32' and leaves out the split fields the text gives."""
    out = record_to_dict(built(device="B32", zs_ohm=0.8))
    assert out == {"board": "DB1", "circuit": "1", "zs_ohm": 0.8, "device": "B32"}


@pytest.mark.parametrize(("data", "field", "code"), [
    ({"device": "B3 2"}, "device", "bad_notation"),
    ({"device": "BS 88 32A"}, "device", "bad_notation"),
    ({"cable": "2.5"}, "cable", "bad_notation"),
    ({"rcd": "30 A"}, "rcd", "bad_notation"),
    ({"cable": "2,5/1,5"}, "cable", "bad_notation"),
    ({"earthing": "TN-X"}, "earthing", "bad_value"),
])
def test_unreadable_notation_is_an_error_quoting_the_text(data: dict[str, Any], field: str,
                                                          code: str) -> None:
    """Never a guess: text that is none of the forms is an error for that value, quoting it; the split
    fields it stands for are refused, so a check needing them says so."""
    record, errors = build_record({**BASE, **data})
    assert record is not None
    assert [(e.field, e.code, e.text) for e in errors] == [(field, code, data[field])]
    if field in ("device", "cable", "rcd"):
        assert record.rejected and set(record.rejected.values()) == {data[field]}
        assert record.notation == {}


def test_the_decimal_comma_refusal_says_how_to_declare_it() -> None:
    """A decimal comma from a source that did not declare it is refused, saying how to declare it."""
    _, errors = build_record({**BASE, "cable": "2,5/1,5"})
    assert "#% decimal=comma" in errors[0].reason and "?decimal=comma" in errors[0].reason


@pytest.mark.parametrize(("data", "field"), [
    ({"device": "B32", "device_rating_a": 20}, "device_rating_a"),
    ({"device": "B32", "device_curve": "C"}, "device_curve"),
    ({"cable": "2.5/1.5", "cpc_mm2": 1.0}, "cpc_mm2"),
    ({"device": "RCBO B20 30mA A", "rcd": "100mA A"}, "rcd_residual_ma"),
    ({"rcd": "N/A", "rcd_residual_ma": 30}, "rcd_residual_ma"),
])
def test_a_notation_that_disagrees_is_a_conflict_and_neither_is_used(data: dict[str, Any],
                                                                     field: str) -> None:
    """notation_conflict names both; the field is refused (neither value used), so the checks say so."""
    record, errors = build_record({**BASE, **data})
    assert record is not None and getattr(record, field) is None and field in record.rejected
    [conflict] = [e for e in errors if e.code == "notation_conflict"]
    assert field in conflict.reason and "neither is used" in conflict.reason


def test_a_split_field_that_agrees_is_the_same_value() -> None:
    """'B32' beside device_rating_a 32 is no conflict."""
    record = built(device="B32", device_rating_a=32, device_curve="b")
    assert record.device_rating_a == 32.0 and record.device_curve == "B" and record.rejected == {}


def test_a_refused_device_makes_the_zs_check_incomplete_naming_it() -> None:
    """An unreadable device leaves no guess: the Zs check is incomplete and quotes the text."""
    record, _ = build_record({**BASE, "device": "B3 2", "zs_ohm": 0.9, "earthing": "TN-S"})
    assert record is not None
    [verdict] = verify([record])
    loop = next(c for c in verdict.checks if c.check == "loop_impedance")
    assert loop.outcome is Outcome.INCOMPLETE and "'B3 2'" in loop.detail
