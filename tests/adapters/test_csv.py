"""The csv adapter: neutral round trips, detection, aliases, bad input (adapters/README.md)."""

from __future__ import annotations

import codecs
import io

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from adapters import AdapterOptions, Fragment, LineError, Skipped, collect
from adapters.aliases import field_for_label
from adapters.csv_adapter import CsvAdapter
from adapters.neutral_csv import records_to_long_csv, records_to_wide_csv
from engine import CircuitRecord, Reading, record_to_dict

from .strategies import records


def _read(data: bytes, **options: object) -> list[object]:
    return list(CsvAdapter().read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


def _unique(recs: list[CircuitRecord]) -> list[CircuitRecord]:
    seen: dict[tuple[str, str], CircuitRecord] = {}
    for rec in recs:
        seen.setdefault(rec.key, rec)
    return list(seen.values())


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(records(), min_size=1, max_size=6).map(_unique))
def test_wide_round_trip(recs: list[CircuitRecord]) -> None:
    """Records → neutral wide CSV → csv adapter gives the same records, with no errors."""
    got = collect(_read(records_to_wide_csv(recs).encode()))
    assert got.errors == []
    assert [record_to_dict(r) for r in got.records] == [record_to_dict(r) for r in recs]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(records(), min_size=1, max_size=6).map(_unique))
def test_long_round_trip(recs: list[CircuitRecord]) -> None:
    """Records → neutral long CSV (one reading per row) → the same records, merged per circuit."""
    got = collect(_read(records_to_long_csv(recs).encode()))
    assert got.errors == []
    with_fields = [record_to_dict(r) for r in recs if len(record_to_dict(r)) > 2]
    assert [record_to_dict(r) for r in got.records] == with_fields


@pytest.mark.parametrize(
    ("label", "field", "unit"),
    [
        ("R1+R2", "r1_r2_ohm", None),
        ("r1 + r2", "r1_r2_ohm", None),
        ("R1-R2", "r1_r2_ohm", None),
        ("Zs (Ω)", "zs_ohm", "Ω"),
        ("ZS [mΩ]", "zs_ohm", "mΩ"),
        ("Ze", "ze_ohm", None),
        ("IR L-E [MΩ]", "ir_le_mohm", "MΩ"),
        ("ir l-n", "ir_ll_mohm", None),
        ("RCD ms", "rcd_trip_ms", None),
        ("x5", "rcd_trip_5x_ms", None),
        ("PFC (kA)", "pfc_ka", "kA"),
        ("Ipf", "pfc_ka", None),
        ("zs_ohm", "zs_ohm", None),
        ("mV/A/m", "cable_mv_per_a_m", None),
        ("Nothing like a field", None, None),
    ],
)
def test_header_aliases(label: str, field: str | None, unit: str | None) -> None:
    """Trade labels map to fields whatever their case, spacing and punctuation; header units split off."""
    assert field_for_label(label) == (field, unit)


def test_units_in_header_and_cells() -> None:
    """A header unit applies to bare numbers; a unit written in the cell wins over it."""
    data = "DB,Cct,Zs (mΩ),R1+R2\nDB1,1,820,350 mΩ\nDB1,2,1.2 Ω,0.5\n".encode()
    got = collect(_read(data))
    assert got.errors == []
    first, second = got.records
    assert first.zs_ohm is not None and first.zs_ohm.value == pytest.approx(0.82)
    assert first.r1_r2_ohm is not None and first.r1_r2_ohm.value == pytest.approx(0.35)
    assert second.zs_ohm is not None and second.zs_ohm.value == pytest.approx(1.2)


@pytest.mark.parametrize("encoding", ["utf-8", "utf-8-sig", "utf-16", "cp1252"])
def test_encodings_detected(encoding: str) -> None:
    """UTF-8 with and without BOM, UTF-16 with BOM and cp1252 are read without being told."""
    text = "Board;Circuit;Description;Test temp;Zs\r\nDB1;1;Küche µ²;18 °C;0,82\r\n"
    data = text.encode(encoding)
    if encoding == "utf-16":
        assert data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE))
    got = collect(_read(data))
    assert got.errors == []
    (rec,) = got.records
    assert rec.description == "Küche µ²"
    assert rec.test_temp_c == 18.0
    assert rec.zs_ohm == Reading(value=0.82, text="0,82")


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
def test_delimiters_sniffed(delimiter: str) -> None:
    """Comma, semicolon, tab and pipe delimiters are found by csv.Sniffer."""
    rows = [["DB", "Cct", "Zs", "IR L-E"], ["DB1", "1", "0.82", ">999"], ["DB1", "2", "1.1", "200"]]
    data = "\n".join(delimiter.join(r) for r in rows).encode()
    got = collect(_read(data))
    assert got.errors == []
    assert [r.circuit for r in got.records] == ["1", "2"]


def test_repeated_circuits_blank_and_comment_rows() -> None:
    """Rows of one circuit merge (later wins); blank and comment rows are skipped, not errors."""
    data = b"# export\nDB,Cct,Zs,R1+R2\nDB1,1,0.9,\n\n# retest\nDB1,1,0.8,0.4\n,,,\n"
    results = _read(data)
    got = collect(results)
    (rec,) = got.records
    assert rec.zs_ohm is not None and rec.zs_ohm.value == 0.8
    assert rec.r1_r2_ohm is not None and rec.r1_r2_ohm.value == 0.4
    assert got.errors == []
    assert sum(isinstance(r, Skipped) for r in results) == 5
    assert got.lines == 7


def test_no_recognisable_header() -> None:
    """A CSV with no recognisable header is one unrecognised_header error on line 1, naming the columns."""
    results = _read(b"alpha,beta,gamma\n1,2,3\n4,5,6\n")
    errors = [r for r in results if isinstance(r, LineError)]
    assert len(errors) == 1
    assert (errors[0].line, errors[0].code, errors[0].text) == (1, "unrecognised_header", "alpha,beta,gamma")
    assert all(isinstance(r, Skipped) for r in results[1:])


def test_bad_cells_keep_the_good_ones() -> None:
    """A bad cell is an error naming line, field and column; the row's good cells and other rows survive."""
    data = "DB,Cct,Zs,PFC,Polarity\nDB1,1,0.8,3 Ω,maybe\nDB1,2,0.9,1.6,ok\n".encode()
    results = _read(data)
    errors = {(e.line, e.field, e.column) for e in results if isinstance(e, LineError)}
    assert errors == {(2, "pfc_ka", "PFC"), (2, "polarity_ok", "Polarity")}
    fragments = [r for r in results if isinstance(r, Fragment)]
    assert [f.line for f in fragments] == [2, 3]
    assert set(fragments[0].fields) == {"zs_ohm"}


def test_missing_key_and_extra_cells() -> None:
    """A row without a circuit is rejected alone; cells beyond the header are reported."""
    results = _read(b"DB,Cct,Zs\nDB1,,0.8\nDB1,2,0.9,junk\nDB1,3,1.0\n")
    codes = [(r.line, r.code) for r in results if isinstance(r, LineError)]
    assert codes == [(2, "missing_key"), (3, "extra_cells")]
    assert [r.circuit for r in collect(results).records] == ["2", "3"]


def test_limits() -> None:
    """Over-long lines and too many columns are errors for that line only, with the limit in the reason."""
    wide_row = ",".join(["x"] * 40)
    data = f"DB,Cct,Zs\nDB1,1,{'9' * 300}\n{wide_row}\nDB1,2,0.5\n".encode()
    results = _read(data, max_line_length=200, max_columns=20)
    codes = [(r.line, r.code) for r in results if isinstance(r, LineError)]
    assert codes == [(2, "line_too_long"), (3, "too_many_columns")]
    assert "200" in next(r.reason for r in results if isinstance(r, LineError))
    assert [r.circuit for r in collect(results).records] == ["2"]


def test_bad_bytes_cost_one_line() -> None:
    """In a UTF-8 file, a byte that is not valid UTF-8 rejects its line only."""
    good = "".join(f"DB1,{n},0.8,Küche Ω {n}\n" for n in range(1, 6)).encode()
    data = "DB,Cct,Zs (Ω),Description\n".encode() + good + b"DB1,9,0.9,\xff\xfe\nDB1,10,1.0,ok\n"
    results = _read(data)
    errors = [r for r in results if isinstance(r, LineError)]
    assert [(e.line, e.code) for e in errors] == [(7, "bad_encoding")]
    assert [r.circuit for r in collect(results).records] == ["1", "2", "3", "4", "5", "10"]
    assert collect(results).records[0].description == "Küche Ω 1"


def test_long_layout_detected_from_header() -> None:
    """board, circuit, test, value, unit headers select the long layout; unknown tests are errors."""
    data = "board;circuit;test;value;unit\nDB1;1;Zs;0,82;Ω\nDB1;1;R1+R2;410;mΩ\nDB1;1;Frobnicate;1;\n"
    results = _read(data.encode())
    (rec,) = collect(results).records
    assert rec.zs_ohm is not None and rec.zs_ohm.value == 0.82
    assert rec.r1_r2_ohm is not None and rec.r1_r2_ohm.value == pytest.approx(0.41)
    assert [(e.line, e.code) for e in results if isinstance(e, LineError)] == [(4, "unknown_test")]


def test_quoted_cells_and_crlf_cr() -> None:
    """Quoted cells may hold the delimiter; CR, LF and CRLF all end a row."""
    data = b'DB,Cct,Description,Zs\r\nDB1,1,"Kitchen, ring",0.8\rDB1,2,"Hall",0.9\nDB1,3,x,1\r\n'
    got = collect(_read(data))
    assert got.errors == []
    assert [r.description for r in got.records] == ["Kitchen, ring", "Hall", "x"]
