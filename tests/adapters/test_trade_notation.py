"""Trade notation and cell words reach the engine as written: device, cable, rcd, earthing, N/A, LIM.

The forms are the trade's own (BS 7671 Tables 41.2-41.4 name the device
standards and curves read here; the engine's notation parser reads them);
what is checked here is that the adapters pass them on unchanged, with line
numbers for what cannot be read.
"""

from __future__ import annotations

import io
import json

import pytest

from adapters import AdapterOptions, Fragment, InputWarning, LineError, collect
from adapters.aliases import resolve_label
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from adapters.lines_adapter import LinesAdapter
from engine import record_to_dict

ADAPTERS = {"csv": CsvAdapter(), "lines": LinesAdapter(), "json": JsonAdapter()}


def _read(adapter: str, data: bytes, **options: object) -> list[object]:
    return list(ADAPTERS[adapter].read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


@pytest.mark.parametrize(("label", "name"), [
    ("Device", "device"), ("Protective device", "device"), ("OCPD", "device"), ("device", "device"),
    ("Cable", "cable"), ("Cable size", "cable"), ("Line/cpc", "cable"), ("rcd", "rcd"),
    ("Device type", "device_kind"), ("OCPD type", "device_kind"),
    ("Earthing", "earthing"), ("Zdb", "zdb_ohm"), ("Location", "location"), ("Fed from", "board_fed_from"),
])
def test_trade_headers_name_the_notation_inputs(label: str, name: str) -> None:
    """Schedule headers for the protective device, the cable and (spelt 'rcd') the RCD name the
    notation inputs; the device's kind keeps its own qualified labels."""
    assert resolve_label(label).field == name


def test_rcd_alone_stays_ambiguous_but_says_how_to_name_the_notation() -> None:
    """'RCD' may be a trip time, IΔn or the type: still no field, and the reason names the key 'rcd'."""
    found = resolve_label("RCD")
    assert found.field is None and set(found.fields) == {"rcd_trip_ms", "rcd_residual_ma", "rcd_type"}
    assert "'rcd'" in found.why


SAME_SITE = {
    "csv": b"Board,Circuit,Device,Cable,rcd,Zs,Earthing\nDB1,1,B32,2.5/1.5,30mA A,0.95,TN-C-S (PME)\n",
    "lines": b'board=DB1 circuit=1 device=B32 cable=2.5/1.5 rcd="30mA A" zs=0.95 earthing="TN-C-S (PME)"\n',
    "json": json.dumps([{"board": "DB1", "circuit": "1", "device": "B32", "cable": "2.5/1.5",
                         "rcd": "30mA A", "zs": 0.95, "earthing": "TN-C-S (PME)"}]).encode(),
}


@pytest.mark.parametrize("adapter", sorted(SAME_SITE))
def test_notation_reaches_the_record_as_written(adapter: str) -> None:
    """B32 is a type B circuit-breaker of 32 A (BS 7671 Table 41.3), 2.5/1.5 line/cpc mm², 30mA A an RCD
    of IΔn 30 mA type A: the same record from CSV, lines and JSON, the notation kept as written."""
    got = collect(_read(adapter, SAME_SITE[adapter]))
    assert got.errors == [] and got.warnings == []
    (record,) = got.records
    assert dict(record.notation) == {"device": "B32", "cable": "2.5/1.5", "rcd": "30mA A"}
    assert (record.device_curve, record.device_rating_a) == ("B", 32.0)
    assert (record.line_mm2, record.cpc_mm2) == (2.5, 1.5)
    assert (record.rcd_residual_ma, record.rcd_type, record.earthing) == (30.0, "A", "TN-C-S")


@pytest.mark.parametrize("adapter", sorted(SAME_SITE))
def test_na_and_lim_pass_through_as_marks(adapter: str) -> None:
    """N/A and LIM (and 'not tested') in a reading cell, and N/A for the RCD notation, are remembered
    as marks — never dropped as blank, never an error."""
    rows = {"csv": b"Board,Circuit,Zs,IR L-E,Polarity,rcd\nDB1,1,N/A,LIM,not tested,N/A\n",
            "lines": b'board=DB1 circuit=1 zs=N/A "IR L-E"=LIM polarity="not tested" rcd=N/A\n',
            "json": json.dumps([{"board": "DB1", "circuit": "1", "zs": "N/A", "IR L-E": "LIM",
                                 "polarity": "not tested", "rcd": "N/A"}]).encode()}
    results = _read(adapter, rows[adapter])
    (fragment,) = [r for r in results if isinstance(r, Fragment)]
    assert dict(fragment.marks) == {"zs_ohm": "N/A", "ir_le_mohm": "LIM", "polarity_ok": "LIM"}
    assert fragment.fields == {"rcd": "N/A"}  # the notation's own word, for the engine to spread
    got = collect(results)
    assert got.errors == []
    (record,) = got.records
    assert dict(record.marks) == {"zs_ohm": "N/A", "ir_le_mohm": "LIM", "polarity_ok": "LIM",
                                  "rcd_residual_ma": "N/A", "rcd_type": "N/A", "rcd_delayed": "N/A"}
    assert record.zs_ohm is None and record.rejected == {}


def test_unreadable_notation_is_an_error_with_its_line_and_refuses_its_split_fields() -> None:
    """'B3X' is no device notation: an error quoting it on its line; the split fields it stood for are
    refused (no default for them), except one the row gives itself."""
    results = _read("csv", b"DB,Cct,Device,In\nDB1,1,B3X,20\n")
    (error,) = [r for r in results if isinstance(r, LineError)]
    assert (error.line, error.code, error.field, error.text) == (2, "bad_notation", "device", "B3X")
    (record,) = collect(results).records
    assert record.device_rating_a == 20.0
    assert dict(record.rejected) == dict.fromkeys(("device_kind", "device_standard", "device_curve"), "B3X")


def test_decimal_comma_notation_is_read_with_the_lines_convention() -> None:
    """'2,5/1,5' where decimal commas are declared is 2.5/1.5 (kept with points, so it reads back
    without the declaration); undeclared, it is refused, never guessed."""
    declared = collect(_read("lines", b"#% decimal=comma\nboard=DB1 circuit=1 cable=2,5/1,5\n"))
    assert declared.errors == [] and dict(declared.records[0].notation) == {"cable": "2.5/1.5"}
    plain = collect(_read("lines", b"board=DB1 circuit=1 cable=2,5/1,5\n"))
    assert [(e.line, e.code) for e in plain.errors] == [(1, "bad_notation")]


def test_notation_against_a_split_field_on_another_line_is_a_conflict_on_its_line() -> None:
    """device=B32 on one line and In=20 on a later line of the same circuit disagree: the engine refuses
    both (notation_conflict), and the error names the line of the notation; a later notation restates
    the device and replaces what was said of it before."""
    got = collect(_read("lines", b"board=DB1 circuit=1 device=B32\nboard=DB1 circuit=1 In=20\n"))
    assert [(e.line, e.code, e.field) for e in got.errors] == [(1, "notation_conflict", "device")]
    (record,) = got.records
    assert record.device_rating_a is None and "device_rating_a" in record.rejected
    again = collect(_read("lines", b"board=DB1 circuit=1 In=20\nboard=DB1 circuit=1 device=B32\n"))
    assert again.errors == [] and again.records[0].device_rating_a == 32.0


def test_a_board_fact_header_on_a_circuit_sheet_is_a_warning() -> None:
    """'Zdb' on a circuit sheet names a board's fact: a warning at the header, the rest read."""
    results = _read("csv", b"DB,Cct,Zs,Zdb\nDB1,1,0.5,0.3\n")
    assert [(w.code, w.column) for w in results if isinstance(w, InputWarning)] == [("other_scope", "Zdb")]
    assert [record_to_dict(r) for r in collect(results).records] == [
        {"board": "DB1", "circuit": "1", "zs_ohm": 0.5}]
