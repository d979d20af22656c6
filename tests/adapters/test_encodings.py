"""Encodings: undecodable bytes cost their line and never make an identifier; UTF-16 and CR-only
line ends work in every text format (issue: '2ÿþ' made a new circuit, UTF-16BE lines were lost).

Byte orders and byte-order marks are those of the Unicode Standard (UTF-16 LE/BE, U+FEFF); the
expected text is what Python's own codecs give for the same bytes.
"""

from __future__ import annotations

import codecs
import io
import json

import pytest

from adapters import AdapterOptions, Fragment, LineError, collect
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from adapters.line_format import append_checksum
from adapters.lines_adapter import LinesAdapter

ADAPTERS = {"csv": CsvAdapter(), "lines": LinesAdapter(), "json": JsonAdapter()}


def _read(adapter: str, data: bytes, **options: object) -> list[object]:
    return list(ADAPTERS[adapter].read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


TEXTS = {
    "csv": "DB;Cct;Description;Zs\r\nDB1;1;Küche Ω;0,82\r\nDB1;2;Hall;0,91\r\n",
    "lines": "board=DB1\r\ncircuit=1 desc=\"Küche Ω\" zs=0.82\r\ncircuit=2 desc=Hall zs=0.91\r\n",
    "json": json.dumps([{"board": "DB1", "circuit": "1", "description": "Küche Ω", "zs_ohm": 0.82},
                        {"board": "DB1", "circuit": "2", "description": "Hall", "zs_ohm": 0.91}],
                       ensure_ascii=False),
}
UTF16 = {"LE with BOM": codecs.BOM_UTF16_LE, "BE with BOM": codecs.BOM_UTF16_BE,
         "LE without BOM": b"", "BE without BOM": b""}


@pytest.mark.parametrize("adapter", sorted(TEXTS))
@pytest.mark.parametrize("form", sorted(UTF16))
def test_utf16_either_byte_order_with_or_without_bom(adapter: str, form: str) -> None:
    """The same readings come out of UTF-16 LE and BE, marked or not, in CSV, lines and JSON."""
    codec = "utf-16-le" if form.startswith("LE") else "utf-16-be"
    got = collect(_read(adapter, UTF16[form] + TEXTS[adapter].encode(codec)))
    assert got.errors == []
    assert [(r.circuit, r.description, r.zs_ohm.value if r.zs_ohm else None) for r in got.records] == [
        ("1", "Küche Ω", 0.82), ("2", "Hall", 0.91)]


def test_utf16_checksum_is_over_the_bytes_as_sent() -> None:
    """A checksummed line in UTF-16BE verifies over its UTF-16BE bytes; a changed digit does not."""
    good = append_checksum("board=DB1 circuit=1 zs=0.8", encoding="utf-16-be")
    bad = good.replace("0.8", "0.9")
    results = _read("lines", f"{good}\n{bad}\n".encode("utf-16-be"))
    assert [(e.line, e.code) for e in results if isinstance(e, LineError)] == [(2, "bad_checksum")]
    assert [f.line for f in results if isinstance(f, Fragment)] == [1]


@pytest.mark.parametrize("adapter", ["csv", "lines", "json"])
def test_cr_only_line_ends(adapter: str) -> None:
    """Old Mac-style CR line ends split lines in every format, with line numbers counted by them."""
    text = TEXTS[adapter].replace("\r\n", "\r") if adapter != "json" else \
        "\r".join(json.dumps({"board": "DB1", "circuit": str(n), "zs_ohm": 0.8}) for n in (1, 2, 3))
    results = _read(adapter, text.encode("utf-8"))
    got = collect(results)
    assert got.errors == [] and len(got.records) >= 2
    lines = [r.line for r in results if isinstance(r, Fragment)]
    assert lines == sorted(set(lines)) and lines[-1] == text.count("\r") + (adapter == "json")


def test_invalid_bytes_in_a_csv_circuit_cell_never_make_a_circuit() -> None:
    """ASCII CSV with 0xFF 0xFE in a circuit cell: that line is an error naming line 3, and no circuit
    '2ÿþ' appears (the detector's cp1252 guess is not trusted for a reference)."""
    results = _read("csv", b"DB,Cct,Zs\nDB1,1,0.8\nDB1,2\xff\xfe,0.9\nDB1,3,1.0\n")
    got = collect(results)
    assert [r.circuit for r in got.records] == ["1", "3"]
    (error,) = got.errors
    assert (error.line, error.code, error.field) == (3, "bad_encoding", "circuit")
    assert "line 3" in error.reason


def test_declared_single_byte_encoding_is_trusted_for_references() -> None:
    """The same bytes declared as cp1252 are what the sender says they are: a circuit 'Küche' is read."""
    got = collect(_read("csv", "DB,Cct,Zs\nDB1,Küche,0.8\n".encode("cp1252"), encoding="cp1252"))
    assert got.errors == [] and got.records[0].circuit == "Küche"


@pytest.mark.parametrize(("adapter", "data"), [
    ("csv", b"DB,Cct,Zs\nDB1,2\x00,0.9\nDB1,3,1.0\n"),
    ("json", b'[{"board": "DB1", "circuit": "2\\u0000"}, {"board": "DB1", "circuit": "3"}]'),
    ("json", b'[{"board": "DB1", "circuit": "2\xff"}, {"board": "DB1", "circuit": "3"}]'),
    ("json", b'[{"board": "DB1", "circuit": "\\ud800"}, {"board": "DB1", "circuit": "3"}]'),
    ("lines", b"board=DB1 circuit=2\xff zs=0.9\nboard=DB1 circuit=3 zs=1.0\n"),
])
def test_no_noise_in_a_board_or_circuit_reference(adapter: str, data: bytes) -> None:
    """A NUL, a byte that is not UTF-8 or a lone surrogate in a reference rejects that line or record;
    the next one is read."""
    got = collect(_read(adapter, data))
    assert [r.circuit for r in got.records] == ["3"]
    assert len(got.errors) == 1 and got.errors[0].code in ("bad_key", "bad_encoding")
