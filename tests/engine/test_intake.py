"""One sign rule for every intake, and rejected values that travel with the record.

Readings keep what the meter said (a small negative R1+R2 after lead nulling is real life), whether
they arrive as a JSON number, as text, as a CSV cell or in a logger line; design values at or below
zero are refused everywhere alike. The verdicts then agree whatever the intake.
"""

from __future__ import annotations

import io
from typing import Any

import pytest

from adapters import AdapterOptions, collect
from adapters.registry import get_adapter
from engine import CircuitRecord, Reading, build_record, coerce_field, record_to_dict, verify

ROW = {"board": "DB1", "circuit": "1", "earthing": "TN-C-S", "device_kind": "breaker", "device_curve": "B",
       "device_rating_a": 32, "zs_ohm": -0.05, "r1_r2_ohm": -0.02, "polarity_ok": True}


@pytest.mark.parametrize("raw", [-0.05, "-0.05", "-0.05 Ω", "−0.05 Ω", "-50 mΩ"])
def test_a_negative_reading_is_kept_from_every_spelling(raw: object) -> None:
    """The same value from a JSON number and from text with an ASCII or a typographic minus (U+2212)."""
    text = None if isinstance(raw, float) else str(raw)
    assert coerce_field("zs_ohm", raw) == Reading(value=-0.05, text=text)


@pytest.mark.parametrize("raw", [0, -1, "0", "-1 A", "0 A", 0.0])
def test_a_design_value_at_or_below_zero_is_refused_from_every_spelling(raw: object) -> None:
    """A rating of 0 A or −1 A is a bad value whether it came as a number or as text."""
    record, errors = build_record({"board": "B", "circuit": "1", "device_rating_a": raw})
    assert record is not None and [e.field for e in errors] == ["device_rating_a"]


def _via_adapter(name: str, data: bytes) -> list[CircuitRecord]:
    got = collect(get_adapter(name).read(io.BytesIO(data), AdapterOptions()))
    return got.records


def test_json_csv_and_lines_give_the_same_verdict() -> None:
    """The same negative readings as a JSON body, a CSV row and a logger line: equal verdicts."""
    direct, errors = build_record(ROW)
    assert direct is not None and not errors
    header = ",".join(ROW)
    cells = ",".join("yes" if v is True else str(v) for v in ROW.values())
    line = " ".join(f"{k}={'yes' if v is True else v}" for k, v in ROW.items())
    via_csv = _via_adapter("csv", f"{header}\n{cells}\n".encode())
    via_lines = _via_adapter("lines", f"{line}\n".encode())
    expected = [v.as_dict() for v in verify([direct])]
    assert expected[0]["outcome"] == "investigate"
    assert [v.as_dict() for v in verify(via_csv)] == expected
    assert [v.as_dict() for v in verify(via_lines)] == expected


def test_rejected_values_round_trip_through_record_to_dict() -> None:
    """build_record(record_to_dict(r)) == r, the rejected texts included (the API stores records so)."""
    record, errors = build_record({"board": "B", "circuit": "1", "test_temp_c": -300, "zs_ohm": "abc",
                                   "r1_r2_ohm": 0.4})
    assert record is not None and {e.field for e in errors} == {"test_temp_c", "zs_ohm"}
    data = record_to_dict(record)
    assert data["rejected"] == {"test_temp_c": "-300", "zs_ohm": "abc"}
    again, again_errors = build_record(data)
    assert again == record and again_errors == []


def test_a_valid_value_clears_the_rejection() -> None:
    """A later valid value for the field wins: the rejection is dropped, the value used."""
    record, _ = build_record({"board": "B", "circuit": "1", "rejected": {"test_temp_c": "-300"},
                              "test_temp_c": 15})
    assert record is not None and record.rejected == {} and record.test_temp_c == 15


@pytest.mark.parametrize("bad", [["test_temp_c"], {"no_such_field": "x"}, {"test_temp_c": 5}, {"board": "x"}])
def test_a_malformed_rejected_member_is_an_error_not_a_crash(bad: Any) -> None:
    """A stored 'rejected' that is not field → text is refused with a FieldError; the rest is kept."""
    record, errors = build_record({"board": "B", "circuit": "1", "zs_ohm": 0.5, "rejected": bad})
    assert record is not None and record.zs_ohm == Reading(value=0.5)
    assert [e.field for e in errors] == ["rejected"]


def test_csv_remembers_refused_cells_like_build_record() -> None:
    """A refused CSV cell is remembered on the record, as a refused JSON value is."""
    [record] = _via_adapter("csv", b"board,circuit,test_temp_c\nDB1,1,-300\n")
    assert record.rejected == {"test_temp_c": "-300"}
