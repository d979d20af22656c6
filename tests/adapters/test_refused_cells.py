"""Refused cells are remembered on the record, in every format, so no default takes their place.

The readings are invented transport payload. What is checked is what the
adapters hand on: the refused text per field, and its merging rules (the
engine's record keeps it under ``rejected``; a check that needs the field is
``incomplete`` rather than judged on a default).
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest

from adapters import AdapterOptions, Fragment, LineError, collect, iter_records
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from adapters.lines_adapter import LinesAdapter
from adapters.neutral_csv import records_to_long_csv, records_to_wide_csv
from engine import CircuitRecord, Reading, load_ruleset, record_to_dict, verify

ADAPTERS = {"csv": CsvAdapter(), "lines": LinesAdapter(), "json": JsonAdapter()}


def _read(adapter: str, data: bytes, **options: object) -> list[object]:
    return list(ADAPTERS[adapter].read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


# One refused test temperature (−300 °C: below absolute zero), one good continuity reading.
SAME_ROW = {
    "csv": b"board,circuit,r1_r2_ohm,test_temp_c\nDB1,1,0.45,-300\n",
    "lines": b"board=DB1 circuit=1 r1_r2_ohm=0.45 test_temp_c=-300\n",
    "json": b'[{"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.45, "test_temp_c": "-300"}]',
}


@pytest.mark.parametrize("adapter", sorted(SAME_ROW))
def test_a_refused_cell_is_an_error_and_is_remembered(adapter: str) -> None:
    """The refused cell is a line error naming the field and text, and the record remembers the text,
    in CSV, lines and JSON alike; the good cell beside it is taken."""
    results = _read(adapter, SAME_ROW[adapter])
    (fragment,) = [r for r in results if isinstance(r, Fragment)]
    assert dict(fragment.rejected) == {"test_temp_c": "-300"}
    assert "test_temp_c" not in fragment.fields
    got = collect(results)
    assert [(e.line, e.field, e.text) for e in got.errors] == [(1 if adapter != "csv" else 2, "test_temp_c",
                                                                 "-300")]
    (record,) = got.records
    assert record.r1_r2_ohm is not None and record.r1_r2_ohm.value == 0.45
    assert dict(record.rejected) == {"test_temp_c": "-300"}


def test_no_default_takes_a_refused_temperature_place() -> None:
    """A refused test temperature is not replaced by the 20 °C default: the voltage-drop check, whose
    temperature factor is derived from F = (1 + α(θmax − 20)) / (1 + α(θtest − 20)), is incomplete and
    names the refused text, and 'test_temp_c' is not in the verdict's defaults_applied."""
    data = (b"board,circuit,r1_r2_ohm,device_rating_a,line_mm2,cpc_mm2,test_temp_c\n"
            b"DB1,1,0.45,32,2.5,1.5,-300\n")
    (verdict,) = verify(collect(_read("csv", data)).records, load_ruleset(None))
    body = verdict.as_dict()
    assert "test_temp_c" not in body["defaults_applied"]
    drop = next(c for c in body["checks"] if c["check"] == "voltage_drop")
    assert drop["outcome"] == "incomplete" and drop["inputs"]["rejected"] == {"test_temp_c": "-300"}


def test_a_refused_cell_alone_still_keys_its_record() -> None:
    """A row whose only reading is refused gives a fragment carrying the refusal (and the error), so the
    circuit's record exists and says what was refused."""
    results = _read("csv", b"DB,Cct,Zs\nDB1,7,2 kA\n")
    assert [type(r).__name__ for r in results] == ["Skipped", "Fragment", "LineError"]
    (record,) = collect(results).records
    assert record.zs_ohm is None and dict(record.rejected) == {"zs_ohm": "2 kA"}


@pytest.mark.parametrize("merge", ["collect", "iter_records"])
def test_later_value_clears_and_later_refusal_marks_again(merge: str) -> None:
    """Rows of one circuit merge later-wins for refusals too: a valid value after a refusal clears it;
    a refusal after a valid value drops the value and marks the field again."""
    data = (b"board=DB1 circuit=1 zs=abc ze=0.2\n"   # zs refused
            b"board=DB1 circuit=1 zs=0.8\n"          # zs valid: clears
            b"board=DB1 circuit=1 ze=-\n"            # a blank: neither value nor refusal
            b"board=DB1 circuit=1 ze=3kA\n")          # ze refused after a valid value
    results = _read("lines", data)
    if merge == "collect":
        (record,) = collect(results).records
    else:
        errors: list[LineError] = []
        (record,) = list(iter_records(results, errors))
        assert [(e.line, e.field) for e in errors] == [(1, "zs_ohm"), (4, "ze_ohm")]
    assert record.zs_ohm is not None and record.zs_ohm.value == 0.8
    assert record.ze_ohm is None
    assert dict(record.rejected) == {"ze_ohm": "3kA"}


def test_long_layout_refusal_is_remembered() -> None:
    """In a long CSV a refused value row (PFC given in ohms) is remembered for its circuit like a wide
    cell, with the unit its row gave."""
    data = b"board,circuit,test,value,unit\nDB1,1,Zs,0.8,\nDB1,1,PFC,3,ohm\n"
    got = collect(_read("csv", data))
    (record,) = got.records
    assert [(e.line, e.field) for e in got.errors] == [(3, "pfc_ka")]
    assert dict(record.rejected) == {"pfc_ka": "3 ohm"}  # the value with the unit its row gave


def test_refused_cell_beats_the_profiles_default(tmp_path: Path) -> None:
    """A profile's default fills in only where a row gives nothing: a refused cell for that field is
    remembered as refused, never silently replaced by the profile's default."""
    (tmp_path / "site.json").write_text(json.dumps({
        "name": "site-defaults", "kind": "csv", "defaults": {"test_temp_c": "20"},
        "columns": {"DB": "board", "Cct": "circuit", "Temp at test": "test_temp_c", "Zs": "zs_ohm"}}))
    data = b"DB,Cct,Temp at test,Zs\nDB1,1,-300,0.8\nDB1,2,,0.9\n"
    got = collect(_read("csv", data, profile="site-defaults", profile_dir=str(tmp_path)))
    first, second = got.records
    assert first.test_temp_c is None and dict(first.rejected) == {"test_temp_c": "-300"}
    assert second.test_temp_c == 20.0 and dict(second.rejected) == {}


def test_a_field_given_twice_is_remembered_as_refused() -> None:
    """'zs=0.8 Zs=0.9' on one line (or one JSON record): which value was meant cannot be known, so
    neither is taken and the record says so, both texts quoted."""
    lines = collect(_read("lines", b"board=DB1 circuit=1 test_temp_c=18 Test temp=25 zs=0.8\n"))
    assert [e.code for e in lines.errors] == ["bad_syntax"]  # a key with a space must be quoted
    lines = collect(_read("lines", b'board=DB1 circuit=1 test_temp_c=18 "Test temp"=25 zs=0.8\n'))
    (record,) = lines.records
    assert [e.code for e in lines.errors] == ["duplicate_field"]
    assert record.test_temp_c is None and dict(record.rejected) == {"test_temp_c": "18 | 25"}
    doc = b'[{"board": "DB1", "circuit": "1", "test_temp_c": 18, "Test temp": "25", "zs": 0.8}]'
    got = collect(_read("json", doc))
    assert [(e.code, e.pointer) for e in got.errors] == [("duplicate_field", "/0/Test temp")]
    (record,) = got.records
    assert record.test_temp_c is None and dict(record.rejected) == {"test_temp_c": "18 | 25"}
    assert record.zs_ohm is not None


def test_json_carries_a_stored_records_rejected_member() -> None:
    """A record written by record_to_dict carries 'rejected'; the json adapter reads it back as the
    record's refusals (not an unknown name), and refuses a malformed one with a pointer."""
    stored = CircuitRecord(board="DB1", circuit="1", zs_ohm=Reading(value=0.8),
                           rejected={"test_temp_c": "-300"})
    text = json.dumps([record_to_dict(stored),
                       {"board": "DB1", "circuit": "2", "rejected": {"nonsense": "x", "ze_ohm": "y"}},
                       {"board": "DB1", "circuit": "3", "rejected": ["ze_ohm"]}])
    got = collect(_read("json", text.encode()))
    assert got.warnings == []
    assert [record_to_dict(r) for r in got.records] == [
        record_to_dict(stored), {"board": "DB1", "circuit": "2", "rejected": {"ze_ohm": "y"}}]
    assert [(e.field, e.pointer) for e in got.errors] == [("rejected", "/1/rejected/nonsense"),
                                                         ("rejected", "/2/rejected")]


def test_neutral_csv_carries_refusals_both_layouts() -> None:
    """records_to_wide_csv / records_to_long_csv write refused texts in their own column or rows (never
    in the field's own cell, where a re-read would refuse them again or even take them), and the csv
    adapter reads them back: the same records, no error (hypothesis covers arbitrary texts in
    test_csv.py's round trips)."""
    recs = [CircuitRecord(board="DB1", circuit="1", zs_ohm=Reading(value=0.5),
                          rejected={"test_temp_c": "-300", "ze_ohm": ' a "b",c;d '}),
            CircuitRecord(board="DB1", circuit="2", rejected={"pfc_ka": ""})]
    for write in (records_to_wide_csv, records_to_long_csv):
        text = write(recs)
        assert "-300" not in text.splitlines()[1].split(",")[:-1]  # not in the field's own column
        got = collect(_read("csv", text.encode()))
        assert got.errors == []
        assert [record_to_dict(r) for r in got.records] == [record_to_dict(r) for r in recs]


def test_a_bad_carried_rejection_is_an_error_for_that_pair() -> None:
    """A 'rejected' cell naming no field is an error for that pair; the rest of the row is taken."""
    data = b"board,circuit,zs_ohm,rejected\nDB1,1,0.8,bogus=1 ze_ohm=x\nDB1,2,0.9,zs_ohm=\n"
    got = collect(_read("csv", data))
    assert [(e.line, e.field, e.text) for e in got.errors] == [(2, "rejected", "bogus")]
    first, second = got.records
    assert dict(first.rejected) == {"ze_ohm": "x"}
    assert second.zs_ohm is not None and dict(second.rejected) == {}  # its own value clears it
