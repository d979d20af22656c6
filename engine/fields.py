"""The circuit record's fields: name, kind and canonical unit, as one table.

Field names are part of the API (engine/README.md, "The circuit record"); units are in
the names. Every other module asks this table what a field is, so adding a
field is one line here and one attribute on :class:`engine.records.CircuitRecord`.

Kinds:
- ``text``: free text or a reference.
- ``choice``: one of a fixed set, matched case-, space- and hyphen-insensitively.
- ``flag``: true/false, from JSON booleans or the words testers write.
- ``count``: a small integer (phases).
- ``number``: a design value (rating, size, length), plain, unit optional.
- ``reading``: a measured value that keeps its relation (``=``, ``>``, ``<``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

__all__ = ["FIELDS", "MEASURED_FIELDS", "FieldSpec", "Kind"]

Kind = Literal["text", "choice", "flag", "count", "number", "reading"]


@dataclass(frozen=True, slots=True, kw_only=True)
class FieldSpec:
    name: str
    kind: Kind
    unit: str | None = None  # pint expression of the canonical unit
    symbol: str | None = None  # how the unit is printed
    choices: tuple[str, ...] = ()
    meaning: str = ""


def _f(
    name: str,
    kind: Kind,
    unit: str | None = None,
    symbol: str | None = None,
    choices: tuple[str, ...] = (),
    meaning: str = "",
) -> FieldSpec:
    return FieldSpec(name=name, kind=kind, unit=unit, symbol=symbol, choices=choices, meaning=meaning)


_OHM = ("ohm", "Ω")
_MOHM = ("megaohm", "MΩ")
_MM2 = ("mm**2", "mm²")

_SPECS: tuple[FieldSpec, ...] = (
    _f("board", "text", meaning="distribution board reference"),
    _f("circuit", "text", meaning="circuit reference on the board"),
    _f("description", "text", meaning="free text"),
    _f("board_fed_from", "text", meaning="BOARD/CIRCUIT of the distribution circuit feeding this board"),
    _f("nominal_voltage_v", "number", "V", "V", meaning="U0, line to earth"),
    _f("phases", "count", choices=("1", "3"), meaning="1 or 3"),
    _f("earthing", "choice", choices=("TN-S", "TN-C-S", "TT", "IT"), meaning="earthing system"),
    _f("supply", "choice", choices=("public", "private"), meaning="public or private LV supply"),
    _f("circuit_form", "choice", choices=("radial", "ring"), meaning="radial or ring"),
    _f("circuit_role", "choice", choices=("final", "distribution"), meaning="final or distribution"),
    _f("socket_outlets", "flag", meaning="the final circuit has socket-outlets"),
    _f("load_type", "choice", choices=("lighting", "other"), meaning="lighting or other uses"),
    _f("design_current_a", "number", "A", "A", meaning="Ib"),
    _f("max_disconnection_s", "number", "s", "s", meaning="overrides the disconnection time"),
    _f("device_kind", "choice", choices=("breaker", "rcbo", "fuse", "other"), meaning="protective device"),
    _f("device_standard", "text", meaning="e.g. BS EN 60898, BS 88-2"),
    _f("device_curve", "choice", choices=("B", "C", "D"), meaning="breaker curve"),
    _f("device_rating_a", "number", "A", "A", meaning="In"),
    _f("device_breaking_ka", "number", "kA", "kA", meaning="rated short-circuit capacity"),
    _f("device_max_zs_ohm", "number", *_OHM, meaning="designer's or maker's maximum Zs"),
    _f("rcd_residual_ma", "number", "mA", "mA", meaning="IΔn"),
    _f("rcd_type", "choice", choices=("AC", "A", "F", "B"), meaning="RCD type"),
    _f("rcd_delayed", "flag", meaning="time-delayed (S) RCD"),
    _f("conductor_material", "choice", choices=("copper", "aluminium"), meaning="conductor metal"),
    _f("line_mm2", "number", *_MM2, meaning="line conductor cross-section"),
    _f("neutral_mm2", "number", *_MM2, meaning="neutral cross-section (defaults to line)"),
    _f("cpc_mm2", "number", *_MM2, meaning="circuit protective conductor cross-section"),
    _f("insulation_temp_c", "number", "degC", "°C", meaning="maximum conductor operating temperature"),
    _f("length_m", "number", "m", "m", meaning="route length"),
    _f("cable_mv_per_a_m", "number", "mV/A/m", "mV/A/m", meaning="tabulated voltage drop"),
    _f("test_temp_c", "number", "degC", "°C", meaning="conductor temperature at test"),
    _f("r1_r2_ohm", "reading", *_OHM, meaning="R1+R2"),
    _f("r2_ohm", "reading", *_OHM, meaning="R2"),
    _f("ring_r1_ohm", "reading", *_OHM, meaning="ring end-to-end r1"),
    _f("ring_rn_ohm", "reading", *_OHM, meaning="ring end-to-end rn"),
    _f("ring_r2_ohm", "reading", *_OHM, meaning="ring end-to-end r2"),
    _f("ir_test_v", "number", "V", "V", meaning="insulation test voltage"),
    _f("ir_ll_mohm", "reading", *_MOHM, meaning="insulation resistance between live conductors"),
    _f("ir_le_mohm", "reading", *_MOHM, meaning="insulation resistance live conductors to earth"),
    _f("polarity_ok", "flag", meaning="polarity correct"),
    _f("zs_ohm", "reading", *_OHM, meaning="earth fault loop impedance at the circuit"),
    _f("ze_ohm", "reading", *_OHM, meaning="external earth fault loop impedance"),
    _f("pfc_ka", "reading", "kA", "kA", meaning="prospective fault current"),
    _f("rcd_trip_ms", "reading", "ms", "ms", meaning="RCD time at IΔn"),
    _f("rcd_trip_5x_ms", "reading", "ms", "ms", meaning="RCD time at 5 IΔn"),
    _f("rcd_half_no_trip", "flag", meaning="did not trip at 50 % IΔn"),
    _f("ra_ohm", "reading", *_OHM, meaning="TT earth electrode resistance"),
)

FIELDS: dict[str, FieldSpec] = {spec.name: spec for spec in _SPECS}
MEASURED_FIELDS: frozenset[str] = frozenset(n for n, s in FIELDS.items() if s.kind == "reading")
