"""The lines adapter: ohmtally's key=value line format, its checksum, and per-line faults."""

from __future__ import annotations

import binascii
import io

import pytest

from adapters import AdapterOptions, Fragment, InputWarning, LineError, Skipped, collect
from adapters.line_format import append_checksum, check_suffix, checksum, parse_pairs
from adapters.lines_adapter import LinesAdapter
from engine import Reading, record_to_dict


def _read(data: bytes, **options: object) -> list[object]:
    return list(LinesAdapter().read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


def test_checksum_is_crc16_ccitt_false() -> None:
    """The checksum is CRC-16/CCITT-FALSE: the catalogued check value for b"123456789" is 0x29B1
    (CRC catalogue check value, from memory)."""
    assert checksum(b"123456789") == "29B1"


def test_checksum_suffix_round_trip() -> None:
    """A line written with append_checksum verifies; any changed byte before the '*' does not."""
    line = append_checksum("board=DB1 circuit=2 zs=0.82Ω")
    assert check_suffix(line.encode()).ok and check_suffix(line.encode()).present
    tampered = line.replace("0.82", "0.83").encode()
    assert not check_suffix(tampered).ok
    assert check_suffix(b"zs=1").present is False


def test_pairs_syntax() -> None:
    """Pairs split on spaces, tabs and ';'; quoted keys and values keep their spaces."""
    parsed = parse_pairs('circuit=3;zs = 0.8Ω\t"IR L-E"=">999 MΩ" desc="Hall \\"A\\""')
    assert parsed.problem is None
    assert parsed.pairs == [("circuit", "3"), ("zs", "0.8Ω"), ("IR L-E", ">999 MΩ"), ("desc", 'Hall "A"')]
    assert parse_pairs("zs=0.8 oops").column == 8


def test_context_lines_are_sticky() -> None:
    """board/circuit set by a context line apply to the following lines; a new board forgets the circuit."""
    data = b"# site log\nboard=DB1\ncircuit=1\nzs=0.82\nr1+r2=0.41\ncircuit=2 zs=1.1\nboard=DB2\nzs=0.3\n"
    results = _read(data)
    got = collect(results)
    assert [record_to_dict(r) for r in got.records] == [
        {"board": "DB1", "circuit": "1", "zs_ohm": 0.82, "r1_r2_ohm": 0.41},
        {"board": "DB1", "circuit": "2", "zs_ohm": 1.1},
    ]
    assert [(e.line, e.code) for e in got.errors] == [(8, "missing_key")]
    skipped = [r.reason for r in results if isinstance(r, Skipped)]
    assert skipped == ["comment", "context", "context", "context"]


def test_every_fault_costs_one_line() -> None:
    """Bad checksum, bad byte, control byte, syntax error, over-long line: one line each; an unknown
    key is a warning on its line and the rest of the line is taken; the good lines still come through."""
    good = append_checksum("board=DB1 circuit=1 zs=0.82").encode()
    bad_sum = good[:-1] + (b"0" if good[-1:] != b"0" else b"1")
    data = b"\n".join([
        good,                                  # 1 ok
        bad_sum,                               # 2 bad_checksum
        b"circuit=2 zs=0.9 desc=K\xfcche",     # 3 bad_encoding
        b"circuit=3 zs=0.9\x07",               # 4 control_bytes
        b"circuit=4 zs 0.9",                   # 5 bad_syntax
        b"circuit=5 zs=0.9 colour=red",        # 6 fragment + unknown_field warning
        b"circuit=6 zs=" + b"9" * 300,         # 7 line_too_long
        b"circuit=7 zs=1.0",                   # 8 ok
    ])
    results = _read(data, max_line_length=120)
    codes = [(r.line, r.code) for r in results if isinstance(r, LineError)]
    assert codes == [(2, "bad_checksum"), (3, "bad_encoding"), (4, "control_bytes"), (5, "bad_syntax"),
                     (7, "line_too_long")]
    warnings = [(r.line, r.code, r.column) for r in results if isinstance(r, InputWarning)]
    assert warnings == [(6, "unknown_field", "colour")]
    assert [f.circuit for f in results if isinstance(f, Fragment)] == ["1", "5", "7"]
    assert collect(results).lines == 8


@pytest.mark.parametrize("ending", [b"\n", b"\r", b"\r\n"])
def test_line_endings(ending: bytes) -> None:
    """CR, LF and CRLF all end a line, and a last line without an ending is still read."""
    data = ending.join([b"board=DB1", b"circuit=1 zs=0.5", b"circuit=2 zs=0.6"])
    got = collect(_read(data))
    assert [r.circuit for r in got.records] == ["1", "2"] and got.lines == 3


def test_checksum_over_raw_bytes_of_any_encoding() -> None:
    """The checksum covers the bytes as sent (here cp1252), computed with binascii.crc_hqx."""
    payload = "board=DB1 circuit=1 desc=Küche".encode("cp1252")
    line = payload + b" *" + f"{binascii.crc_hqx(payload, 0xFFFF):04x}".encode()
    got = collect(_read(line, encoding="cp1252"))
    assert got.errors == [] and got.records[0].description == "Küche"


def test_units_in_values() -> None:
    """Units written in values convert to the field's unit: 350mΩ → 0.35 Ω, 2GΩ → 2000 MΩ."""
    got = collect(_read("board=DB1 circuit=1 zs=350mΩ ir_le=2GΩ pfc=980A".encode()))
    assert record_to_dict(got.records[0]) == {"board": "DB1", "circuit": "1", "zs_ohm": 0.35,
                                              "ir_le_mohm": 2000.0, "pfc_ka": 0.98}


def test_readme_example_line_verifies() -> None:
    """The checksummed example line in adapters/README.md really verifies (so the recipe is right)."""
    from pathlib import Path

    readme = (Path(__file__).parents[2] / "adapters" / "README.md").read_text(encoding="utf-8")
    line = next(x for x in readme.splitlines() if x.startswith("board=DB1 circuit=3") and "*" in x)
    result = check_suffix(line.encode())
    assert result.present and result.ok
    assert collect(_read(line.encode())).errors == []


def test_decimal_comma_directive_holds_from_its_line_on() -> None:
    """'#% decimal=comma' makes 0,82 read as 0.82 on the lines after it; '#% decimal=point' ends it;
    without a declaration a comma is refused, never guessed."""
    data = (b"board=DB1\ncircuit=1 zs=0,82\n#% decimal=comma\ncircuit=2 zs=0,82\n"
            b"#% decimal=point\ncircuit=3 zs=0,5\n")
    results = _read(data)
    got = collect(results)
    assert [(r.circuit, r.zs_ohm.value if r.zs_ohm else None, dict(r.rejected)) for r in got.records] == [
        ("1", None, {"zs_ohm": "0,82"}), ("2", 0.82, {}), ("3", None, {"zs_ohm": "0,5"})]
    assert [(e.line, e.code) for e in got.errors] == [(2, "bad_value"), (6, "bad_value")]
    assert [r.reason for r in results if isinstance(r, Skipped)].count("directive") == 2


def test_decimal_comma_option_and_lines_profile() -> None:
    """AdapterOptions.decimal_comma (the API's query parameter) and a 'lines' profile's decimal both
    declare commas for the whole input."""
    assert collect(_read(b"board=DB1 circuit=1 zs=0,82\n", decimal_comma=True)).records[0].zs_ohm \
        == Reading(value=0.82, text="0,82")
    got = collect(_read(b"board=DB1 circuit=1 Schleife=0,82\n", profile="example-lines-decimal-comma"))
    assert got.errors == [] and got.records[0].zs_ohm == Reading(value=0.82, text="0,82")


def test_unknown_directive_is_an_error_and_changes_nothing() -> None:
    """A directive we do not know could change how later lines read: it is refused on its line."""
    results = _read(b"#% units=mohm\nboard=DB1 circuit=1 zs=0.8\n")
    assert [(e.line, e.code) for e in results if isinstance(e, LineError)] == [(1, "bad_directive")]
    assert collect(results).records[0].zs_ohm == Reading(value=0.8, text="0.8")


def test_context_directive_sets_board_and_circuit_exactly() -> None:
    """'#% board=DB2 circuit=4' puts the following reading on DB2/4; an empty value clears the key, so a
    reading after '#% board=DB2 circuit=""' has no circuit (what capture relies on)."""
    data = b'#% board=DB2 circuit=4\nzs=0.5\n#% board=DB2 circuit=""\nzs=0.6\n'
    results = _read(data)
    assert [(f.board, f.circuit) for f in results if isinstance(f, Fragment)] == [("DB2", "4")]
    assert [(e.line, e.code) for e in results if isinstance(e, LineError)] == [(4, "missing_key")]
