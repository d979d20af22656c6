"""N/A and LIM in any field: absent for the checks, remembered, said — and never a pass.

On a schedule of test results N/A means the test does not apply and LIM a recorded limitation (the
item was not tested); BS 7671 Appendix 6 model forms use both (from memory). The readings here are
invented; what is checked is that no check passes on a marked field.
"""

from __future__ import annotations

from typing import Any

import pytest

from engine import (
    FIELDS,
    MarkedCell,
    Outcome,
    build_record,
    cell_mark,
    coerce_field,
    record_to_dict,
    verify,
)

BASE = {"board": "DB1", "circuit": "1"}
# A circuit every check applies to, all within limits (invented): each key field is then marked in turn.
FULL: dict[str, Any] = {
    "earthing": "TN-S", "device": "RCBO B32 30mA A", "device_breaking_ka": 6, "cable": "2.5/1.5",
    "length_m": 20, "r1_r2_ohm": 0.3, "zs_ohm": 0.6, "ze_ohm": 0.3, "pfc_ka": 0.8, "ir_test_v": 500,
    "ir_ll_mohm": ">299", "ir_le_mohm": ">299", "polarity_ok": True, "rcd_trip_ms": 25,
    "socket_outlets": True, "socket_rating_a": 13, "design_current_a": 20, "cable_type": "twin_and_earth",
    "reference_method": "C",
}


@pytest.mark.parametrize(("text", "mark"), [("N/A", "N/A"), ("n/a", "N/A"), ("NA", "N/A"), ("N.A.", "N/A"),
                                            ("not applicable", "N/A"), ("LIM", "LIM"), ("lim.", "LIM"),
                                            ("limitation", "LIM"), ("NT", "LIM"), ("n.t.", "LIM"),
                                            ("Not Tested", "LIM")])
def test_cell_words_are_marks(text: str, mark: str) -> None:
    """N/A spellings mark N/A; LIM and the 'not tested' words mark a limitation."""
    assert cell_mark(text) == mark


@pytest.mark.parametrize("text", ["", "-", "none", "0.5", "LIMIT", "N", "0", ">999"])
def test_other_text_is_no_mark(text: str) -> None:
    """Blank cells, readings and other words are not marks."""
    assert cell_mark(text) is None


def test_per_cell_na_is_absent_and_lim_is_said() -> None:
    """coerce_field: N/A → None; LIM and NT raise MarkedCell (code limitation), never silently absent."""
    assert coerce_field("zs_ohm", "N/A") is None
    for text in ("LIM", "NT", "not tested"):
        with pytest.raises(MarkedCell) as found:
            coerce_field("zs_ohm", text)
        assert found.value.code == "limitation"


def test_marks_in_any_field_are_remembered_and_round_trip() -> None:
    """Every field but the keys takes a mark; record_to_dict writes them under 'marks' and they read back."""
    names = [n for n in FIELDS if n not in ("board", "circuit")]
    data = {**BASE, **{n: ("N/A" if i % 2 else "LIM") for i, n in enumerate(names)}}
    record, errors = build_record(data)
    assert record is not None and errors == []
    assert set(record.marks) == set(names) and all(getattr(record, n) is None for n in names)
    out = record_to_dict(record)
    assert out["marks"] == dict(record.marks)
    assert build_record(out) == (record, [])


def test_a_value_clears_a_stored_mark() -> None:
    """A later value for a marked field is the field's value; the mark goes."""
    record, _ = build_record({**BASE, "zs_ohm": 0.5, "marks": {"zs_ohm": "LIM", "ze_ohm": "N/A"}})
    assert record is not None and record.marks == {"ze_ohm": "N/A"}


def test_a_bad_marks_member_is_an_error() -> None:
    """marks must map known fields to N/A or LIM."""
    _, errors = build_record({**BASE, "marks": {"zs_ohm": "maybe", "colour": "N/A"}})
    assert [e.field for e in errors] == ["marks", "marks"]


def _passes(data: dict[str, Any]) -> set[tuple[str, str | None]]:
    record, errors = build_record({**BASE, **data})
    assert record is not None and errors == [], errors
    [verdict] = verify([record])
    return {(c.check, c.method) for c in verdict.checks if c.outcome is Outcome.PASS}


_KEY_FIELDS = ("zs_ohm", "ze_ohm", "r1_r2_ohm", "ir_le_mohm", "ir_ll_mohm", "ir_test_v", "pfc_ka",
               "device_breaking_ka", "rcd_trip_ms", "polarity_ok", "length_m", "nominal_voltage_v",
               "test_temp_c", "earthing", "design_current_a")


@pytest.mark.parametrize("field", _KEY_FIELDS)
def test_lim_never_passes_a_check_that_reads_it(field: str) -> None:
    """LIM on a field: every check that read it is incomplete, 'limitation recorded: not tested'; no pass
    appears that the full record did not have."""
    full = _passes(FULL)
    data = {**FULL, field: "LIM"}
    record, _ = build_record({**BASE, **data})
    assert record is not None
    [verdict] = verify([record])
    limited = [c for c in verdict.checks if c.inputs.get("marked", {}).get(field) == "LIM"]
    assert limited, field
    assert all(c.outcome is Outcome.INCOMPLETE and "limitation recorded: not tested" in c.detail
               for c in limited)
    assert _passes(data) <= full


def _judged(data: dict[str, Any]) -> list[tuple[str, str | None, Outcome, float | None, float | None]]:
    record, errors = build_record({**BASE, **data})
    assert record is not None and errors == [], errors
    [verdict] = verify([record])
    return [(c.check, c.method, c.outcome, c.value, c.limit) for c in verdict.checks]


_DEFAULTED = ("nominal_voltage_v", "test_temp_c")


@pytest.mark.parametrize("field", _KEY_FIELDS)
def test_na_only_explains_an_absence(field: str) -> None:
    """N/A gives the verdict the field's absence gives (never a pass more), and a check needing the field
    says 'recorded as N/A'; where a default would stand in, there is none and no pass rests on it."""
    omitted = {k: v for k, v in FULL.items() if k != field}
    data = {**omitted, field: "N/A"}
    if field in _DEFAULTED:
        assert _passes(data) <= _passes(omitted)
    else:
        assert _judged(data) == _judged(omitted)
    record, _ = build_record({**BASE, **data})
    assert record is not None
    [verdict] = verify([record])
    for check in verdict.checks:
        if field in check.inputs.get("missing", ()):
            assert check.outcome is Outcome.INCOMPLETE and check.inputs["marked"] == {field: "N/A"}
            assert "recorded as N/A" in check.detail


def test_na_is_never_answered_by_a_default() -> None:
    """U0 recorded N/A is not taken as the ruleset's 230 V: checks needing U0 are incomplete instead."""
    record, _ = build_record({**BASE, **FULL, "nominal_voltage_v": "N/A"})
    assert record is not None
    [verdict] = verify([record])
    assert "nominal_voltage_v" not in verdict.defaults_applied
    needing = [c for c in verdict.checks if c.method == "recorded_not_applicable"]
    assert needing and all(c.inputs["field"] == "nominal_voltage_v" for c in needing)


def test_rcd_na_means_no_rcd() -> None:
    """'rcd: N/A' is no RCD: no RCD time is judged, and socket-outlets up to 32 A then lack the 30 mA RCD
    additional protection requires (BS 7671 Reg. 411.3.3, from memory): fail, not pass."""
    record, _ = build_record({**BASE, "device": "B32", "rcd": "N/A", "socket_outlets": True,
                              "socket_rating_a": 13, "earthing": "TN-S"})
    assert record is not None and record.marks["rcd_residual_ma"] == "N/A"
    [verdict] = verify([record])
    assert not [c for c in verdict.checks if c.check == "rcd_time"]
    extra = [c for c in verdict.checks if c.check == "additional_protection"]
    assert extra and all(c.outcome is not Outcome.PASS for c in extra)
