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
# Appendix 4 (BS 7671) and Annex B (IEC 60364-5-52) installation reference methods
_METHODS = ("A", "A1", "A2", "B", "B1", "B2", "C", "D", "D1", "D2", "E", "F", "G", "100", "101", "102", "103")

_SPECS: tuple[FieldSpec, ...] = (
    _f("board", "text", meaning="distribution board reference"),
    _f("circuit", "text", meaning="circuit reference on the board"),
    _f("description", "text", meaning="free text"),
    _f("board_fed_from", "text", meaning="`BOARD/CIRCUIT` of the distribution circuit feeding this board"),
    _f("nominal_voltage_v", "number", "V", "V", meaning="U0, line to earth (default 230)"),
    _f("phases", "count", choices=("1", "3"), meaning="1 or 3 (default 1)"),
    _f("earthing", "choice", choices=("TN-S", "TN-C-S", "TT", "IT"), meaning="earthing system"),
    _f("supply", "choice", choices=("public", "private"),
       meaning="public or private LV supply, for the voltage-drop limits (default public)"),
    _f("circuit_form", "choice", choices=("radial", "ring"),
       meaning="radial or ring (default radial; ring readings mean a ring unless this says otherwise)"),
    _f("circuit_role", "choice", choices=("final", "distribution"),
       meaning="final or distribution (default final; a circuit feeding a board is a distribution circuit)"),
    _f("socket_outlets", "flag",
       meaning="the final circuit has socket-outlets (a ring has them unless this says otherwise)"),
    _f("load_type", "choice", choices=("lighting", "other"),
       meaning="lighting or other uses (default other)"),
    _f("design_current_a", "number", "A", "A", meaning="Ib, the design current"),
    _f("max_disconnection_s", "number", "s", "s",
       meaning="designer's disconnection time: tightens the regulation's time, never loosens it"),
    _f("device_kind", "choice", choices=("breaker", "rcbo", "fuse", "other"),
       meaning="protective device (a curve letter alone means a circuit-breaker)"),
    _f("device_standard", "text",
       meaning="e.g. BS EN 60898, BS EN 61009, BS 88-2, BS 88-3, BS 3036, BS 1362"),
    _f("device_curve", "choice", choices=("B", "C", "D"), meaning="circuit-breaker curve"),
    _f("device_rating_a", "number", "A", "A", meaning="In, the device's rated current"),
    _f("device_breaking_ka", "number", "kA", "kA", meaning="rated short-circuit breaking capacity"),
    _f("device_max_zs_ohm", "number", *_OHM,
       meaning="designer's or maker's maximum Zs: tightens the tables, never loosens them"),
    _f("rcd_residual_ma", "number", "mA", "mA", meaning="IΔn, the RCD's rated residual operating current"),
    _f("rcd_type", "choice", choices=("AC", "A", "F", "B"), meaning="RCD type"),
    _f("rcd_delayed", "flag", meaning="time-delayed (type S) RCD"),
    _f("rcd_type_required", "choice", choices=("AC", "A", "F", "B"),
       meaning="the RCD type the load needs (maker's instructions), judged against rcd_type"),
    _f("conductor_material", "choice", choices=("copper", "aluminium"),
       meaning="conductor metal (default copper)"),
    _f("line_mm2", "number", *_MM2, meaning="line conductor cross-section"),
    _f("neutral_mm2", "number", *_MM2, meaning="neutral cross-section (defaults to line)"),
    _f("cpc_mm2", "number", *_MM2, meaning="circuit protective conductor cross-section"),
    _f("insulation_temp_c", "number", "degC", "°C",
       meaning="maximum conductor operating temperature: 70 thermoplastic (default), 90 thermosetting"),
    _f("cable_type", "choice", choices=("twin_and_earth", "single_core", "multicore", "armoured"),
       meaning="flat twin-and-earth; single-core (non-sheathed) conductors; sheathed multicore; "
               "armoured multicore"),
    _f("reference_method", "choice", choices=_METHODS,
       meaning="installation reference method of BS 7671 Appendix 4 / IEC 60364-5-52 Annex B"),
    _f("cable_iz_a", "number", "A", "A",
       meaning="designer's current-carrying capacity Iz after correction factors"),
    _f("ambient_factor", "number", "dimensionless",
       meaning="Ca, correction for ambient temperature (default 1)"),
    _f("grouping_factor", "number", "dimensionless", meaning="Cg, correction for grouping (default 1)"),
    _f("thermal_insulation_factor", "number", "dimensionless",
       meaning="Ci, correction for thermal insulation (default 1)"),
    _f("length_m", "number", "m", "m", meaning="route length of the circuit (of the whole ring for a ring)"),
    _f("cable_mv_per_a_m", "number", "mV/A/m", "mV/A/m", meaning="tabulated voltage drop of the cable"),
    _f("test_temp_c", "number", "degC", "°C",
       meaning="conductor temperature when the readings were taken (default 20)"),
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
    _f("pfc_ka", "reading", "kA", "kA", meaning="prospective fault current (line to neutral or earth)"),
    _f("rcd_trip_ms", "reading", "ms", "ms",
       meaning="RCD time at IΔn (a recorded time means an RCD is there)"),
    _f("rcd_trip_5x_ms", "reading", "ms", "ms", meaning="RCD time at 5 IΔn"),
    _f("rcd_half_no_trip", "flag", meaning="did not trip at 50 % IΔn"),
    _f("ra_ohm", "reading", *_OHM, meaning="TT earth electrode resistance"),
    _f("socket_rating_a", "number", "A", "A",
       meaning="rated current of the circuit's socket-outlets (additional protection up to 32 A)"),
    _f("outdoor_equipment", "flag", meaning="supplies mobile equipment for use outdoors (Reg. 411.3.3)"),
    _f("concealed_in_wall", "flag",
       meaning="cables concealed in a wall or partition less than 50 mm deep without earthed "
               "protection (Reg. 522.6.202/203)"),
    _f("premises", "choice", choices=("domestic", "other"),
       meaning="domestic (a dwelling) or other premises"),
)

FIELDS: dict[str, FieldSpec] = {spec.name: spec for spec in _SPECS}
MEASURED_FIELDS: frozenset[str] = frozenset(n for n, s in FIELDS.items() if s.kind == "reading")
