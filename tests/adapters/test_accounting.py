"""Every column and key is accounted for: a name read as no field is a warning, the same in every format.

The readings are invented transport payload; what is checked is what the
adapters say about the names, not any rule of the wiring regulations.
"""

from __future__ import annotations

import io
import json

import pytest

from adapters import AdapterOptions, Fragment, InputWarning, LineError, Skipped, collect
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from adapters.lines_adapter import LinesAdapter
from engine import record_to_dict

ADAPTERS = {"csv": CsvAdapter(), "lines": LinesAdapter(), "json": JsonAdapter()}


def _read(adapter: str, data: bytes, **options: object) -> list[object]:
    return list(ADAPTERS[adapter].read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


# One job, three spellings: two circuits, a typo'd Zs column/key ("Zss") and a column/key we do not read.
SAME_INPUT = {
    "csv": b"Board,Circuit,Zss,R1+R2,Tester\nDB1,1,0.82,0.41,JB\nDB1,2,0.91,0.52,JB\n",
    "lines": b"board=DB1 circuit=1 Zss=0.82 R1+R2=0.41 Tester=JB\n"
             b"board=DB1 circuit=2 Zss=0.91 R1+R2=0.52 Tester=JB\n",
    "json": json.dumps([{"board": "DB1", "circuit": "1", "Zss": 0.82, "R1+R2": 0.41, "Tester": "JB"},
                        {"board": "DB1", "circuit": "2", "Zss": 0.91, "R1+R2": 0.52, "Tester": "JB"}],
                       indent=0).encode(),
}


@pytest.mark.parametrize("adapter", sorted(SAME_INPUT))
def test_unknown_names_are_warned_once_and_the_rest_is_read(adapter: str) -> None:
    """CSV, lines and JSON give the same account: each unknown name once, naming it, nothing rejected,
    every known reading taken."""
    results = _read(adapter, SAME_INPUT[adapter])
    got = collect(results)
    assert got.errors == []
    assert [record_to_dict(r) for r in got.records] == [
        {"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.41},
        {"board": "DB1", "circuit": "2", "r1_r2_ohm": 0.52}]
    assert [(w.code, w.column) for w in got.warnings] == [("unknown_field", "Zss"),
                                                          ("unknown_field", "Tester")]
    assert "did you mean 'zs'" in got.warnings[0].reason
    assert all(w.line == got.warnings[0].line for w in got.warnings)  # where the names first appear


def test_warning_follows_the_line_it_names() -> None:
    """A warning comes right after the result of the line that carries the name, and never stands in
    for that line's account (lines format, third line first names the key)."""
    data = b"board=DB1\ncircuit=1 zs=0.8\ncircuit=2 zs=0.9 colour=red\ncircuit=3 colour=blue\n"
    results = _read("lines", data)
    kinds = [(type(r).__name__, r.line) for r in results]  # type: ignore[attr-defined]
    assert kinds == [("Skipped", 1), ("Fragment", 2), ("Fragment", 3), ("InputWarning", 3), ("Skipped", 4)]
    assert isinstance(results[4], Skipped) and results[4].reason == "context"


def test_csv_duplicate_and_profile_ignored_columns_are_warned() -> None:
    """A second column for a field already read, and a column a profile leaves out, are warnings on
    the header line saying which column is read instead (issue: an 'ignored columns' note was lost)."""
    results = _read("csv", b"DB,Cct,Zs,Measured Zs\nDB1,1,0.8,0.9\n")
    warnings = [r for r in results if isinstance(r, InputWarning)]
    assert [(w.line, w.code, w.column, w.field) for w in warnings] == [
        (1, "duplicate_column", "Measured Zs", "zs_ohm")]
    assert "'Zs'" in warnings[0].reason
    (rec,) = collect(results).records
    assert rec.zs_ohm is not None and rec.zs_ohm.value == 0.8


def test_json_pointer_names_the_member() -> None:
    """A JSON member read as no field carries its pointer, as a bad field's error does."""
    results = _read("json", b'{"circuits": [{"board": "DB1", "circuit": "1", "colour": "red"}]}')
    (warning,) = [r for r in results if isinstance(r, InputWarning)]
    assert (warning.pointer, warning.column) == ("/circuits/0/colour", "colour")


def test_lines_field_given_twice_is_an_error_for_that_field_only() -> None:
    """zs and its alias Zs on one line: neither value is taken (which was meant cannot be known); the
    line's other readings are."""
    results = _read("lines", b"board=DB1 circuit=1 zs=0.8 Zs=0.9 r1+r2=0.4\n")
    errors = [(e.code, e.field) for e in results if isinstance(e, LineError)]
    assert errors == [("duplicate_field", "zs_ohm")]
    (frag,) = [r for r in results if isinstance(r, Fragment)]
    assert set(frag.fields) == {"r1_r2_ohm"}


def test_many_unknown_names_stay_bounded() -> None:
    """Thousands of distinct unknown keys give a bounded number of warnings (constant memory)."""
    data = "".join(f"board=DB1 circuit=1 k{n}=1\n" for n in range(2000)).encode()
    warnings = [r for r in _read("lines", data) if isinstance(r, InputWarning)]
    assert len(warnings) == 257 and warnings[-1].code == "too_many_names"
