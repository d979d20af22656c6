"""Reading strings: numbers, units, bounds and over-range markers (engine/README.md, "Readings")."""

from __future__ import annotations

import contextlib
import math

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from engine import Reading, ReadingError, parse_reading
from engine.units import unit_factor

UREG = pint.UnitRegistry()


@pytest.mark.parametrize(
    ("text", "unit", "value", "relation"),
    [
        ("0.82", "ohm", 0.82, "="),
        ("0.82 Ω", "ohm", 0.82, "="),
        ("0.82Ω", "ohm", 0.82, "="),
        ("350 mΩ", "ohm", 0.35, "="),
        ("1.2 kΩ", "ohm", 1200.0, "="),
        ("1.2 KΩ", "ohm", 1200.0, "="),
        (">999", "megaohm", 999.0, ">"),
        ("> 299 MΩ", "megaohm", 299.0, ">"),
        ("<0.01", "ohm", 0.01, "<"),
        ("≥ 200 MΩ", "megaohm", 200.0, ">"),
        ("2 GΩ", "megaohm", 2000.0, "="),
        ("500 kΩ", "megaohm", 0.5, "="),
        ("1.6 kA", "kA", 1.6, "="),
        ("980 A", "kA", 0.98, "="),
        ("0.024 s", "ms", 24.0, "="),
        ("18 ms", "ms", 18.0, "="),
        ("2.5 mm²", "mm**2", 2.5, "="),
        ("2.5mm2", "mm**2", 2.5, "="),
    ],
)
def test_parses_numbers_units_and_bounds(text: str, unit: str, value: float, relation: str) -> None:
    """Each spelling resolves to the canonical unit and keeps its relation."""
    got = parse_reading(text, field="f", unit=unit)
    assert got is not None
    assert got.value == pytest.approx(value, rel=1e-12)
    assert got.relation == relation
    assert got.text == text


@pytest.mark.parametrize("text", ["OL", "ol", "O.L.", "OVER", ">", "---", "----", "∞", "OL MΩ"])
def test_over_range_markers_are_bounded_without_a_value(text: str) -> None:
    """Over range is kept as '>' with no number, never turned into a number or dropped."""
    got = parse_reading(text, field="ir_le_mohm", unit="megaohm")
    assert got == Reading(value=None, relation=">", text=text)
    assert got.upper == math.inf


@pytest.mark.parametrize("text", ["", "  ", "-", "n/a", "N/A", "NT"])
def test_no_reading_is_absent(text: str) -> None:
    """'not tested' spellings parse to None (absent), never to zero."""
    assert parse_reading(text, field="zs_ohm", unit="ohm") is None


def test_decimal_comma_only_when_declared() -> None:
    """'0,82' is read as 0.82 when the source declares decimal commas, an error otherwise."""
    got = parse_reading("0,82 Ω", field="zs_ohm", unit="ohm", decimal_comma=True)
    assert got is not None and got.value == pytest.approx(0.82)
    with pytest.raises(ReadingError, match="decimal comma"):
        parse_reading("0,82", field="zs_ohm", unit="ohm")


@pytest.mark.parametrize(("text", "unit"), [("2 kA", "ohm"), ("0.4 Ω", "kA"), ("30 mA", "ms"),
                                            ("12 V", "megaohm")])
def test_unit_of_another_dimension_is_an_error_naming_field_and_text(text: str, unit: str) -> None:
    """A unit of another dimension (kA in an ohm field) is an error naming field and text."""
    with pytest.raises(ReadingError) as info:
        parse_reading(text, field="zs_ohm", unit=unit)
    assert info.value.field == "zs_ohm"
    assert info.value.text == text
    assert "zs_ohm" in info.value.message


@pytest.mark.parametrize("text", ["abc", "1.2.3.4x", "--5", "0.5 furlongs"])
def test_garbage_is_an_error(text: str) -> None:
    """Text that is no number, bound or marker is an error, not a silent None."""
    with pytest.raises(ReadingError):
        parse_reading(text, field="zs_ohm", unit="ohm")


@pytest.mark.parametrize(
    ("token", "canonical", "pint_from", "pint_to"),
    [
        ("mΩ", "ohm", "milliohm", "ohm"),
        ("kΩ", "ohm", "kiloohm", "ohm"),
        ("MΩ", "megaohm", "megaohm", "megaohm"),
        ("GΩ", "megaohm", "gigaohm", "megaohm"),
        ("kΩ", "megaohm", "kiloohm", "megaohm"),
        ("A", "kA", "ampere", "kiloampere"),
        ("kA", "kA", "kiloampere", "kiloampere"),
        ("s", "ms", "second", "millisecond"),
        ("mA", "mA", "milliampere", "milliampere"),
        ("A", "mA", "ampere", "milliampere"),
        ("km", "m", "kilometer", "meter"),
        ("mV/A/m", "mV/A/m", "millivolt / ampere / meter", "millivolt / ampere / meter"),
    ],
)
def test_unit_factors_agree_with_pint(token: str, canonical: str, pint_from: str,
                                      pint_to: str) -> None:
    """External check: every factor equals pint's own conversion (pint, independent registry)."""
    expected = UREG.Quantity(1.0, pint_from).to(pint_to).magnitude
    assert unit_factor(token, canonical) == pytest.approx(expected, rel=1e-12)


@given(st.text(max_size=30))
def test_parser_never_raises_anything_but_reading_error(text: str) -> None:
    """Any text either parses or raises ReadingError (never another exception)."""
    with contextlib.suppress(ReadingError):
        parse_reading(text, field="zs_ohm", unit="ohm")


@given(st.floats(min_value=0, max_value=1e9, allow_nan=False), st.sampled_from(["", ">", "<"]))
def test_bounded_reading_round_trips_through_json(value: float, rel: str) -> None:
    """to_json() text parses back to the same reading value and relation."""
    first = parse_reading(f"{rel}{value!r}", field="zs_ohm", unit="ohm")
    assert first is not None
    again = parse_reading(first.to_json(), field="zs_ohm", unit="ohm")
    assert again is not None
    assert again.relation == first.relation
    assert again.value == pytest.approx(first.value, rel=1e-11)
