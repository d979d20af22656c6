"""External check: every unit spelling the adapters accept converts as pint says it should.

Reference: pint's own unit registry (a fresh ``pint.UnitRegistry()``), with each meter spelling
written out by hand as pint's full unit name, so the adapters' spelling rules are checked too.
"""

from __future__ import annotations

import io

import pint
import pytest

from adapters import AdapterOptions, collect
from adapters.csv_adapter import CsvAdapter
from adapters.lines_adapter import LinesAdapter
from engine import FIELDS

UREG = pint.UnitRegistry()

# (spelling a meter or sheet writes, pint's full name for it, a field in that dimension)
SPELLINGS = [
    ("Ω", "ohm", "zs_ohm"), ("ohm", "ohm", "zs_ohm"), ("Ohm", "ohm", "zs_ohm"), ("ohms", "ohm", "zs_ohm"),
    ("mΩ", "milliohm", "zs_ohm"), ("mOhm", "milliohm", "r1_r2_ohm"), ("kΩ", "kiloohm", "ra_ohm"),
    ("KΩ", "kiloohm", "ra_ohm"), ("kOhm", "kiloohm", "ir_le_mohm"), ("MΩ", "megaohm", "ir_le_mohm"),
    ("MOhm", "megaohm", "ir_ll_mohm"), ("GΩ", "gigaohm", "ir_le_mohm"), ("uΩ", "microohm", "r2_ohm"),
    ("A", "ampere", "pfc_ka"), ("kA", "kiloampere", "pfc_ka"), ("mA", "milliampere", "rcd_residual_ma"),
    ("ms", "millisecond", "rcd_trip_ms"), ("s", "second", "rcd_trip_ms"), ("sec", "second", "rcd_trip_5x_ms"),
    ("msec", "millisecond", "rcd_trip_ms"), ("µs", "microsecond", "rcd_trip_ms"),
    ("V", "volt", "nominal_voltage_v"), ("kV", "kilovolt", "ir_test_v"), ("mm²", "millimeter**2", "line_mm2"),
    ("mm2", "millimeter**2", "cpc_mm2"), ("m", "meter", "length_m"), ("km", "kilometer", "length_m"),
]


def _expected(value: float, full: str, field: str) -> float:
    canonical = FIELDS[field].unit
    return float(UREG.Quantity(value, full).to(canonical).magnitude)



def _read_one(data: bytes, field: str, adapter: CsvAdapter | LinesAdapter) -> float:
    """The one record's ``field`` as a number (a Reading's value, or a design value)."""
    (record,) = collect(adapter.read(io.BytesIO(data), AdapterOptions())).records
    got = getattr(record, field)
    return float(got.value if hasattr(got, "value") else got)

@pytest.mark.parametrize(("spelling", "full", "field"), SPELLINGS)
def test_unit_in_cell_agrees_with_pint(spelling: str, full: str, field: str) -> None:
    """A unit written in a CSV cell converts to the field's unit exactly as pint converts it."""
    data = f"board,circuit,{field}\nDB1,1,1.5 {spelling}\n".encode()
    got = _read_one(data, field, CsvAdapter())
    assert got == pytest.approx(_expected(1.5, full, field), rel=1e-9)


@pytest.mark.parametrize(("spelling", "full", "field"), SPELLINGS)
def test_unit_in_header_agrees_with_pint(spelling: str, full: str, field: str) -> None:
    """A unit written in a CSV header (``field (unit)``) applies to bare numbers as pint converts it."""
    data = f"board,circuit,{field} ({spelling})\nDB1,1,2.5\n".encode()
    got = _read_one(data, field, CsvAdapter())
    assert got == pytest.approx(_expected(2.5, full, field), rel=1e-9)


@pytest.mark.parametrize(("spelling", "full", "field"), SPELLINGS)
def test_unit_in_line_value_agrees_with_pint(spelling: str, full: str, field: str) -> None:
    """A unit written in a key=value line's value converts as pint converts it."""
    data = f'board=DB1 circuit=1 {field}="0.75 {spelling}"\n'.encode()
    got = _read_one(data, field, LinesAdapter())
    assert got == pytest.approx(_expected(0.75, full, field), rel=1e-9)


def test_wrong_dimension_is_refused() -> None:
    """A unit of another dimension (kA in an ohm field) is an error for that cell, as pint's
    dimensionality check says, never a silent conversion."""
    assert UREG.Quantity(1, "kiloampere").dimensionality != UREG.Quantity(1, "ohm").dimensionality
    got = collect(CsvAdapter().read(io.BytesIO(b"board,circuit,zs_ohm\nDB1,1,2 kA\n"), AdapterOptions()))
    assert [e.field for e in got.errors] == ["zs_ohm"]
