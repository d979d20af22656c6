"""Trade notation read into split fields: devices, cables, RCDs, earthing, N/A and LIM.

Sources: the device standards and curve letters are those BS 7671:2018+A2 lists in
Table 41.2 and Table 41.4 (fuses: BS 88-2, BS 88-3, BS 3036, BS 1362) and Table 41.3
(circuit-breakers to BS EN 60898 and RCBOs to BS EN 61009, types B, C, D). Spellings
the trade writes but no standard fixes are marked "ohmtally notation choice".
"""

from __future__ import annotations

from typing import Any

import pytest
from hypothesis import given
from hypothesis import strategies as st

from engine.errors import ReadingError
from engine.notation import (
    NOTATION_FIELDS,
    Limitation,
    NotApplicable,
    Notation,
    NotationError,
    cell_word,
    parse_cable,
    parse_device,
    parse_earthing,
    parse_notation,
    parse_rcd,
)
from engine.readings import format_number
from engine.records import CircuitRecord, coerce_field


def _fields(result: object) -> dict[str, Any]:
    assert isinstance(result, Notation), result
    return dict(result.fields)


def _breaker(curve: str, rating: float) -> dict[str, Any]:
    return {"device_kind": "breaker", "device_standard": "BS EN 60898", "device_curve": curve,
            "device_rating_a": rating}


def _fuse(standard: str, rating: float) -> dict[str, Any]:
    return {"device_kind": "fuse", "device_standard": standard, "device_rating_a": rating}


def _rcbo(curve: str, rating: float, standard: str = "BS EN 61009", **rcd: Any) -> dict[str, Any]:
    return {"device_kind": "rcbo", "device_standard": standard, "device_curve": curve,
            "device_rating_a": rating, **rcd}


DEVICES = [
    ("B32", _breaker("B", 32.0)),
    ("C16", _breaker("C", 16.0)),
    ("D10", _breaker("D", 10.0)),
    ("B6", _breaker("B", 6.0)),
    ("MCB C40", _breaker("C", 40.0)),
    ("BS EN 60898 B16", _breaker("B", 16.0)),
    ("BS EN 60898-1 B16", _breaker("B", 16.0)),
    ("RCBO B20 30mA A", _rcbo("B", 20.0, rcd_residual_ma=30.0, rcd_type="A")),
    ("RCBO C16 30mA AC", _rcbo("C", 16.0, rcd_residual_ma=30.0, rcd_type="AC")),
    ("RCBO B32", _rcbo("B", 32.0)),
    ("BS EN 61009 C32 30mA", _rcbo("C", 32.0, rcd_residual_ma=30.0)),
    ("RCBO BS EN 61009 B20 30mA F", _rcbo("B", 20.0, rcd_residual_ma=30.0, rcd_type="F")),
    ("RCBO B40 100mA S", _rcbo("B", 40.0, rcd_residual_ma=100.0, rcd_delayed=True)),
    ("IEC 60898 C10", {**_breaker("C", 10.0), "device_standard": "IEC 60898"}),
    ("IEC 61009 B16 30mA A", _rcbo("B", 16.0, "IEC 61009", rcd_residual_ma=30.0, rcd_type="A")),
    ("BS 88-2 63A", _fuse("BS 88-2", 63.0)),
    ("BS 88-3 32A", _fuse("BS 88-3", 32.0)),
    ("BS 3036 15A", _fuse("BS 3036", 15.0)),
    ("BS 1362 13A", _fuse("BS 1362", 13.0)),
    ("BS 1361 30A", _fuse("BS 1361", 30.0)),
]


@pytest.mark.parametrize(("text", "expected"), DEVICES)
def test_device_forms_give_the_split_fields(text: str, expected: dict[str, Any]) -> None:
    """Each device form gives kind, standard, curve and rating (BS 7671 Tables 41.2, 41.3, 41.4)."""
    assert _fields(parse_device(text)) == expected


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("b32", _breaker("B", 32.0)),
        ("B 32", _breaker("B", 32.0)),
        ("B32A", _breaker("B", 32.0)),
        ("b 32 a", _breaker("B", 32.0)),
        ("  B32\t", _breaker("B", 32.0)),
        ("B0.5", _breaker("B", 0.5)),
        ("mcb c40", _breaker("C", 40.0)),
        ("bs en60898 b16", _breaker("B", 16.0)),
        ("BSEN60898 B16", _breaker("B", 16.0)),
        ("BS88-3 32A", _fuse("BS 88-3", 32.0)),
        ("bs 88 - 3   32 a", _fuse("BS 88-3", 32.0)),
        ("BS 3036 15", _fuse("BS 3036", 15.0)),
        ("rcbo b20 30ma a", _rcbo("B", 20.0, rcd_residual_ma=30.0, rcd_type="A")),
        ("RCBO B20A 30 mA type A", _rcbo("B", 20.0, rcd_residual_ma=30.0, rcd_type="A")),
        ("RCBO B20 30mA S A", _rcbo("B", 20.0, rcd_residual_ma=30.0, rcd_type="A", rcd_delayed=True)),
    ],
)
def test_device_case_and_spacing_variants(text: str, expected: dict[str, Any]) -> None:
    """Case, spacing and an 'A' on the rating do not change the reading (ohmtally notation choice)."""
    assert _fields(parse_device(text)) == expected


@pytest.mark.parametrize(
    ("text", "inferred"),
    [
        ("B32", {"device_kind", "device_standard"}),
        ("MCB B32", {"device_standard"}),
        ("RCBO B20 30mA A", {"device_standard"}),
        ("BS EN 60898 B16", {"device_kind"}),
        ("BS EN 61009 C32 30mA", {"device_kind"}),
        ("RCBO BS EN 61009 B20", set()),
        ("BS 88-3 32A", {"device_kind"}),
    ],
)
def test_what_the_text_does_not_write_is_reported_as_inferred(text: str, inferred: set[str]) -> None:
    """A value implied but not written is listed with its reason (BS 7671 Table 41.3: a curve letter is
    a breaker to BS EN 60898 or an RCBO to BS EN 61009); a value written is not."""
    result = parse_device(text)
    assert isinstance(result, Notation)
    assert set(result.inferred) == inferred
    assert all(reason.startswith(str(result.fields[name])) for name, reason in result.inferred.items())


def test_a_bare_curve_letter_cites_table_41_3() -> None:
    """'B32' says why it is a BS EN 60898 circuit-breaker: BS 7671 Table 41.3."""
    result = parse_device("B32")
    assert isinstance(result, Notation)
    assert "Table 41.3" in result.inferred["device_kind"]
    assert "BS EN 60898" in result.inferred["device_standard"]


@pytest.mark.parametrize(
    ("text", "says"),
    [
        ("B", "write e.g. B32"),
        ("X32", "curve 'X' is not B, C or D"),
        ("K16", "curve 'K' is not B, C or D"),
        ("BS 88-9 32A", "not a device standard"),
        ("BS 88-2.2 32A", "not a device standard"),  # withdrawn, other limits
        ("BS EN 60898-2 B16", "not a device standard"),
        ("BS 88 32A", "BS 88 has parts"),
        ("32A type B", "curve letter comes before the rating"),
        ("32B", "curve letter comes before the rating"),
        ("B20 30mA A", "a residual current belongs to an RCBO"),
        ("BS EN 60898 B16 30mA", "a residual current belongs to an RCBO"),
        ("B32 C16", "write e.g. B32"),
        ("B32 BS EN 60898", "write e.g. B32"),
        ("RCBO B20 A", "may be amperes or RCD type A"),
        ("RCBO BS EN 60898 B20", "not a standard for an RCBO"),
        ("MCB BS EN 61009 B20", "not a standard for an MCB"),
        ("MCB BS 88-3 32A", "fuse standard, not one for an MCB"),
        ("BS 3036", "a fuse is written as its standard and rating"),
        ("BS 3036 C15", "a fuse is written as its standard and rating"),
        ("BS 303615A", "not a device standard"),
        ("B0", "must be a positive number"),
        ("B3,2", "does not declare decimal commas"),
        ("RCBO", "write e.g. B32"),
        ("RCBO B20 30mA Q", "'Q' is not one of them"),
        ("RCBO B20 30mA A AC", "'AC' is not one of them"),
        ("fuse 30A", "write e.g. B32"),
    ],
)
def test_device_errors_quote_the_text(text: str, says: str) -> None:
    """Unreadable or ambiguous device text is an error naming the field and quoting the text, never a guess
    (ohmtally notation choice for what is refused)."""
    with pytest.raises(NotationError) as caught:
        parse_device(text)
    assert caught.value.field == "device"
    assert caught.value.text == text
    assert says in caught.value.message
    assert repr(text) in caught.value.message


@pytest.mark.parametrize(
    ("text", "line", "cpc"),
    [
        ("2.5/1.5", 2.5, 1.5),
        ("1.5/1.0", 1.5, 1.0),
        ("6/2.5", 6.0, 2.5),
        ("1/1", 1.0, 1.0),
        ("2.5/1.5mm²", 2.5, 1.5),
        ("2.5/1.5 mm2", 2.5, 1.5),
        ("2.5 / 1.5", 2.5, 1.5),
        ("2.5mm²/1.5mm²", 2.5, 1.5),
        ("10/4 MM2", 10.0, 4.0),
        ("16/6 mm^2", 16.0, 6.0),
    ],
)
def test_cable_line_over_cpc(text: str, line: float, cpc: float) -> None:
    """'line/cpc' in mm² gives line_mm2 and cpc_mm2 (IEC 60228 nominal sizes; the slash form is an
    ohmtally notation choice after common practice on schedules)."""
    assert _fields(parse_cable(text)) == {"line_mm2": line, "cpc_mm2": cpc}


def test_cable_decimal_comma_only_when_declared() -> None:
    """'2,5/1,5' is read when the source declares decimal commas, refused otherwise; a declared
    decimal-comma source may not use '.', which there is a grouping mark (ohmtally notation choice)."""
    assert _fields(parse_cable("2,5/1,5", decimal_comma=True)) == {"line_mm2": 2.5, "cpc_mm2": 1.5}
    assert _fields(parse_cable("6/2,5 mm²", decimal_comma=True)) == {"line_mm2": 6.0, "cpc_mm2": 2.5}
    with pytest.raises(NotationError, match="does not declare decimal commas"):
        parse_cable("2,5/1,5")
    with pytest.raises(NotationError, match="declares decimal commas"):
        parse_cable("2.5/1.5", decimal_comma=True)
    assert _fields(parse_device("B0,5", decimal_comma=True))["device_rating_a"] == 0.5


@pytest.mark.parametrize(
    "text",
    ["2.5/", "2.5", "/1.5", "2.5/1.5/1.5", "2.5-1.5", "0/1.5", "2.5/0", "2.5/1.5 T&E",
     "2.5/1.5 mm", "2x2.5+1.5", "two/one"],
)
def test_cable_errors_quote_the_text(text: str) -> None:
    """A cable that is not exactly line/cpc with positive sizes is an error quoting the text
    (ohmtally notation choice: a single size or a line/neutral/cpc triple is refused)."""
    with pytest.raises(NotationError) as caught:
        parse_cable(text)
    assert (caught.value.field, caught.value.text) == ("cable", text)
    assert repr(text) in caught.value.message


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("30mA A", {"rcd_residual_ma": 30.0, "rcd_type": "A"}),
        ("100mA S", {"rcd_residual_ma": 100.0, "rcd_delayed": True}),
        ("30 mA type A", {"rcd_residual_ma": 30.0, "rcd_type": "A"}),
        ("300mA S AC", {"rcd_residual_ma": 300.0, "rcd_type": "AC", "rcd_delayed": True}),
        ("300mA AC S", {"rcd_residual_ma": 300.0, "rcd_type": "AC", "rcd_delayed": True}),
        ("30mA", {"rcd_residual_ma": 30.0}),
        ("30mA F", {"rcd_residual_ma": 30.0, "rcd_type": "F"}),
        ("30mA B", {"rcd_residual_ma": 30.0, "rcd_type": "B"}),
        ("30ma ac", {"rcd_residual_ma": 30.0, "rcd_type": "AC"}),
        ("RCD 30mA A", {"rcd_residual_ma": 30.0, "rcd_type": "A"}),
        ("RCCB 100 mA Type S", {"rcd_residual_ma": 100.0, "rcd_delayed": True}),
        ("10mA A", {"rcd_residual_ma": 10.0, "rcd_type": "A"}),
    ],
)
def test_rcd_forms(text: str, expected: dict[str, Any]) -> None:
    """IΔn in mA, type AC/A/F/B and S for time-delayed (BS 7671 Reg. 531.3.3 names the types, from memory;
    S marks a time-delayed RCD in BS EN 61008-1 / 61009-1, from memory); no S leaves rcd_delayed unset."""
    assert _fields(parse_rcd(text)) == expected


@pytest.mark.parametrize(
    ("text", "says"),
    [
        ("30mA Q", "'Q' is not one of them"),
        ("30mA G", "'G' is not one of them"),
        ("30mA A AC", "'AC' is not one of them"),
        ("30mA S S", "'S' is not one of them"),
        ("30mA type", "'type' is not one of them"),
        ("30", "an RCD is written as IΔn in mA"),
        ("30 A", "an RCD is written as IΔn in mA"),
        ("0.03A", "an RCD is written as IΔn in mA"),
        ("A 30mA", "an RCD is written as IΔn in mA"),
        ("mA A", "an RCD is written as IΔn in mA"),
        ("0mA A", "must be a positive number"),
        ("RCBO 30mA A", "an RCD is written as IΔn in mA"),
    ],
)
def test_rcd_errors_quote_the_text(text: str, says: str) -> None:
    """An RCD that is not IΔn in mA then one type and S at most once each is an error quoting the text
    (ohmtally notation choice: a bare number or amperes is refused here; rcd_residual_ma takes them)."""
    with pytest.raises(NotationError) as caught:
        parse_rcd(text)
    assert (caught.value.field, caught.value.text) == ("rcd", text)
    assert says in caught.value.message


@pytest.mark.parametrize(
    ("text", "system"),
    [
        ("TN-C-S (PME)", "TN-C-S"),
        ("TN-C-S", "TN-C-S"),
        ("PME", "TN-C-S"),
        ("TNCS", "TN-C-S"),
        ("tn-c-s", "TN-C-S"),
        ("TN C S", "TN-C-S"),
        ("TN-C-S PME", "TN-C-S"),
        ("TN-C-S(pme)", "TN-C-S"),
        ("TN-S", "TN-S"),
        ("tns", "TN-S"),
        ("TN_S", "TN-S"),
        ("TT", "TT"),
        ("tt", "TT"),
        ("IT", "IT"),
    ],
)
def test_earthing_systems(text: str, system: str) -> None:
    """Earthing text gives the canonical system (IEC 60364-1 Clause 312.2 system types, from memory;
    PME is an arrangement of a TN-C-S system, BS 7671 Part 2 definitions, from memory)."""
    assert _fields(parse_earthing(text)) == {"earthing": system}


@pytest.mark.parametrize("text", ["TN-X", "TN", "TN-C", "T", "TN-C-S (SNE)", "PNE", "TTT", "earth rod"])
def test_earthing_errors_quote_the_text(text: str) -> None:
    """An earthing text that is not TN-S, TN-C-S, TT or IT is an error quoting it: 'TN' alone could be
    TN-S or TN-C-S, and TN-C is not a system a circuit record takes (ohmtally notation choice)."""
    with pytest.raises(NotationError) as caught:
        parse_earthing(text)
    assert (caught.value.field, caught.value.text) == ("earthing", text)


def test_earthing_accepts_every_spelling_the_record_field_accepts() -> None:
    """Routing the earthing field through the notation loses no spelling the record already took."""
    for text in ["TN-S", "TN-C-S", "TT", "IT", "tns", "tncs", "pme", "tt", "it", "TN S", "tn_c_s", "T.T."]:
        assert _fields(parse_earthing(text)) == {"earthing": coerce_field("earthing", text)}


@pytest.mark.parametrize(
    "text", ["N/A", "n/a", "N / A", "NA", "na", "N.A.", "n.a", "Not applicable", " N/A "])
def test_not_applicable_spellings(text: str) -> None:
    """N/A in these spellings is 'the test does not apply' (BS 7671 Appendix 6 model forms use N/A,
    from memory); the text is kept as written."""
    assert cell_word(text) == NotApplicable(text=text)
    for name in NOTATION_FIELDS:
        assert parse_notation(name, text) == NotApplicable(text=text)


@pytest.mark.parametrize("text", ["LIM", "lim", "Lim", "LIM.", " LIM ", "limitation", "LIMITATION"])
def test_limitation_spellings(text: str) -> None:
    """LIM in these spellings is a recorded limitation, not tested (BS 7671 Appendix 6 model forms use
    LIM, from memory); it is a value distinct from N/A and from a blank cell."""
    word = cell_word(text)
    assert word == Limitation(text=text)
    assert isinstance(word, Limitation)
    assert word.reason == "limitation recorded: not tested"
    assert word.code == "limitation"
    for name in NOTATION_FIELDS:
        assert parse_notation(name, text) == Limitation(text=text)


@pytest.mark.parametrize("text", ["LIMIT", "L", "N", "LIM 0.82", "LIM - no access", "N/A 0.5", "NT", "-", "",
                                  "n/v", "ſ", "lım"])
def test_other_words_are_not_cell_words(text: str) -> None:
    """Only the listed spellings are N/A or LIM: 'LIMIT' may be a limit, 'LIM 0.82' may be a reading,
    a lone letter is too short to tell (ohmtally notation choice)."""
    assert cell_word(text) is None


def test_not_applicable_and_limitation_differ() -> None:
    """N/A and LIM are distinct sentinels with distinct codes: a caller cannot mistake one for the other."""
    assert [type(cell_word("N/A")), type(cell_word("LIM"))] == [NotApplicable, Limitation]
    assert NotApplicable.code != Limitation.code
    assert "not tested" not in NotApplicable.reason


@pytest.mark.parametrize("text", [None, "", "   ", "-", "none", "NULL"])
def test_blank_cells_are_absent(text: str | None) -> None:
    """A blank cell is None (the field is absent), as the record builder treats blanks."""
    for name in NOTATION_FIELDS:
        assert parse_notation(name, text) is None


@pytest.mark.parametrize("raw", [2.5, 32, True, ["B32"], {"device": "B32"}])
def test_values_that_are_not_text_are_errors(raw: object) -> None:
    """Notation is text; a number, a boolean or a list is an error for the field, not coerced."""
    with pytest.raises(NotationError) as caught:
        parse_notation("cable", raw)
    assert caught.value.field == "cable"


def test_unknown_notation_is_an_error() -> None:
    """Asking for a notation that does not exist raises the documented error naming it."""
    with pytest.raises(NotationError, match="unknown notation 'colour'"):
        parse_notation("colour", "red")


def test_the_error_is_a_reading_error_a_record_builder_already_handles() -> None:
    """NotationError is a ReadingError with field and text, so a builder turns it into a FieldError."""
    with pytest.raises(ReadingError) as caught:
        parse_device("X32")
    assert caught.value.as_dict() == {"code": "bad_notation", "message": caught.value.message,
                                      "field": "device", "text": "X32"}


@pytest.mark.parametrize(
    ("name", "text"),
    [("device", t) for t, _ in DEVICES] + [("cable", "2.5/1.5"), ("rcd", "300mA S AC"),
                                            ("earthing", "TN-C-S (PME)")],
)
def test_values_are_what_the_record_holds(name: str, text: str) -> None:
    """Every value is already canonical for the record: coerce_field returns it unchanged, and a
    CircuitRecord takes the fields as they are."""
    result = parse_notation(name, text)
    assert isinstance(result, Notation)
    assert set(result.fields) <= NOTATION_FIELDS[name]
    for field, value in result.fields.items():
        assert coerce_field(field, value) == value
        assert type(coerce_field(field, value)) is type(value)
    fields: dict[str, Any] = dict(result.fields)
    record = CircuitRecord(board="DB1", circuit="1", **fields)
    assert {name: getattr(record, name) for name in fields} == fields


def test_a_notation_is_frozen() -> None:
    """A parsed notation cannot be changed after the fact, nor built with a field its name does not set."""
    result = parse_device("B32")
    assert isinstance(result, Notation)
    with pytest.raises(TypeError):
        result.fields["device_rating_a"] = 40.0  # type: ignore[index]
    with pytest.raises(ValueError, match="cannot set"):
        Notation(name="cable", text="x", fields={"zs_ohm": 1.0}, inferred={})


_NOTATION_ALPHABET = "BCDXbcdRCBOMSEN IAFT/.,-()²mK0123456789\t"


@given(name=st.sampled_from(sorted(NOTATION_FIELDS)),
       text=st.one_of(st.text(), st.text(alphabet=_NOTATION_ALPHABET, max_size=30)),
       decimal_comma=st.booleans())
def test_arbitrary_text_gives_a_result_or_the_documented_error(
        name: str, text: str, decimal_comma: bool) -> None:
    """Whatever the text, a parser returns a notation, a cell word or None, or raises NotationError
    quoting the text; a notation sets only its own fields."""
    try:
        result = parse_notation(name, text, decimal_comma=decimal_comma)
    except NotationError as exc:
        assert (exc.field, exc.text) == (name, text)
        return
    assert result is None or isinstance(result, Notation | NotApplicable | Limitation)
    if isinstance(result, Notation):
        assert result.text == text
        assert set(result.fields) <= NOTATION_FIELDS[name]
        assert all(isinstance(v, bool) or v > 0 for v in result.fields.values() if not isinstance(v, str))


@given(curve=st.sampled_from("BCDbcd"), rating=st.integers(min_value=1, max_value=125),
       space=st.sampled_from(["", " ", "  "]), amps=st.sampled_from(["", "A", "a", " A"]))
def test_any_curve_and_rating_reads_back(curve: str, rating: int, space: str, amps: str) -> None:
    """Curve letter, rating and optional 'A' in any case and spacing read back exactly (Table 41.3 curves)."""
    text = f"{curve}{space}{rating}{amps}"
    assert _fields(parse_device(text)) == _breaker(curve.upper(), float(rating))


IEC_60228_SIZES = [1.0, 1.5, 2.5, 4.0, 6.0, 10.0, 16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0,
                   185.0, 240.0, 300.0]


@given(line=st.sampled_from(IEC_60228_SIZES), cpc=st.sampled_from(IEC_60228_SIZES),
       unit=st.sampled_from(["", "mm²", " mm2"]), decimal_comma=st.booleans())
def test_any_nominal_size_pair_reads_back(line: float, cpc: float, unit: str, decimal_comma: bool) -> None:
    """Every IEC 60228 nominal size (1–300 mm², IEC 60228 Table 2) written line/cpc reads back exactly,
    with a decimal point or a declared decimal comma."""
    def written(size: float) -> str:
        text = format_number(size)
        return text.replace(".", ",") if decimal_comma else text

    parsed = parse_cable(f"{written(line)}/{written(cpc)}{unit}", decimal_comma=decimal_comma)
    assert _fields(parsed) == {"line_mm2": line, "cpc_mm2": cpc}
