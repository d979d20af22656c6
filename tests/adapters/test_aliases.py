"""Aliases mean one field to every tester; an ambiguous header is a warning, never a guess."""

from __future__ import annotations

import io

import pytest

from adapters import AdapterOptions, InputWarning, collect
from adapters.aliases import AMBIGUOUS, fold, resolve_label
from adapters.csv_adapter import CsvAdapter
from adapters.lines_adapter import LinesAdapter
from engine import FIELDS, load_ruleset, verify


def _csv(data: bytes) -> list[object]:
    return list(CsvAdapter().read(io.BytesIO(data), AdapterOptions()))


@pytest.mark.parametrize(("label", "could_mean"), [
    ("Voltage", {"nominal_voltage_v", "ir_test_v"}),
    ("Type", {"device_curve", "rcd_type", "device_kind"}),
    ("RCD", {"rcd_trip_ms", "rcd_residual_ma", "rcd_type"}),
    ("Rating", {"device_rating_a", "rcd_residual_ma", "device_breaking_ka"}),
    ("Line", {"line_mm2", "ring_r1_ohm"}),
    ("Live", {"line_mm2", "ring_r1_ohm"}),
    ("cpc", {"cpc_mm2", "ring_r2_ohm", "r2_ohm"}),
    ("Temperature", {"test_temp_c", "insulation_temp_c"}),
    ("Loop", {"zs_ohm", "ze_ohm", "r1_r2_ohm"}),
    ("PEFC", {"pfc_ka"}),
    ("Disconnection time", {"max_disconnection_s", "rcd_trip_ms"}),
    ("R1", {"ring_r1_ohm", "ring_rn_ohm", "r1_r2_ohm"}),
])
def test_ambiguous_labels_map_to_no_field(label: str, could_mean: set[str]) -> None:
    """Each label testers use for several things names the fields it could mean and maps to none."""
    found = resolve_label(label)
    assert found.field is None and found.ambiguous
    assert set(found.fields) == could_mean


@pytest.mark.parametrize(("label", "field"), [
    ("r1", "ring_r1_ohm"), ("rn", "ring_rn_ohm"), ("R2", "r2_ohm"), ("Ring r2", "ring_r2_ohm"),
    ("U0", "nominal_voltage_v"), ("IR test voltage", "ir_test_v"), ("Curve", "device_curve"),
    ("RCD type", "rcd_type"), ("Line csa", "line_mm2"), ("cpc csa", "cpc_mm2"), ("Test temp", "test_temp_c"),
    ("PFC (kA)", "pfc_ka"), ("x5", "rcd_trip_5x_ms"), ("In", "device_rating_a"),
])
def test_unambiguous_labels_still_read(label: str, field: str) -> None:
    """Qualified labels, and the trade's case-sensitive ring readings (r1, rn lower case; R2 upper),
    keep their one meaning."""
    assert resolve_label(label).field == field


def test_every_field_name_is_its_own_alias_and_never_ambiguous() -> None:
    """A field's own name always means that field, whatever else is ambiguous."""
    for name in FIELDS:
        assert resolve_label(name).field == name
        assert fold(name) not in AMBIGUOUS


def test_voltage_column_holding_500_is_not_read_as_u0() -> None:
    """A column 'Voltage' = 500 (the insulation test voltage) is a warning naming U0 and the test
    voltage, and the voltage-drop limit stays 5 % of 230 V = 11.5 V (BS 7671:2018 Appendix 4
    Table 4Ab, other uses, public supply), so the 17.28 V drop fails. Drop derived from the split
    R1 = Rn = 0.45 × 2.5 / (2.5 + 2.5), VD = (R1 + Rn) × F × I = 0.45 × 1.2 × 32 (F = 1.2 from 20 °C
    to 70 °C, α = 0.004 /K)."""
    data = (b"Board,Circuit,Voltage,R1+R2,Device,Curve,In,Test temp,Line csa,cpc csa\n"
            b"DB1,1,500,0.45,breaker,B,32,20,2.5,2.5\n")
    results = _csv(data)
    got = collect(results)
    (warning,) = [r for r in results if isinstance(r, InputWarning)]
    assert (warning.code, warning.column) == ("ambiguous_label", "Voltage")
    assert set(warning.fields) == {"nominal_voltage_v", "ir_test_v"}
    (record,) = got.records
    assert record.nominal_voltage_v is None
    (verdict,) = verify(got.records, load_ruleset(None))
    drop = next(c for c in verdict.checks if c.check == "voltage_drop")
    assert drop.limit == pytest.approx(11.5)
    assert drop.value == pytest.approx(17.28)
    assert drop.outcome.value == "fail"


def test_qualified_voltage_columns_read_as_meant() -> None:
    """Named for what they are, U0 and the insulation test voltage are read without a warning."""
    got = collect(_csv(b"Board,Circuit,U0,IR test voltage\nDB1,1,230,500\n"))
    assert got.warnings == []
    (record,) = got.records
    assert (record.nominal_voltage_v, record.ir_test_v) == (230.0, 500.0)


def test_ambiguous_key_in_lines_is_a_warning_too() -> None:
    """In the lines format 'Type=B' (breaker curve or RCD type B?) is a warning, not a curve."""
    results = list(LinesAdapter().read(io.BytesIO(b"board=DB1 circuit=1 Type=B zs=0.8\n"), AdapterOptions()))
    got = collect(results)
    assert [(w.code, w.column) for w in got.warnings] == [("ambiguous_label", "Type")]
    assert got.records[0].device_curve is None and got.records[0].rcd_type is None
