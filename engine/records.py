"""The normalised circuit record, and turning loose data into one.

Invariants:
- :class:`CircuitRecord` has exactly the fields of :mod:`engine.fields` (the
  record table of engine/README.md), plus what intake remembers (``rejected``,
  ``marks``, ``notation``); ``board`` and ``circuit`` are required, every other
  field is optional (``None``).
- Measured fields hold :class:`Reading`; design values hold plain floats;
  choices hold their canonical spelling; flags hold bools.
- :func:`build_record` never raises for bad field values: it returns the record
  built from the good fields and one :class:`FieldError` per bad one, so one bad
  cell never loses the rest of a row (:mod:`engine.intake`).
- A rejected value is remembered, never replaced: ``CircuitRecord.rejected``
  maps each refused field to the text that was refused, so no check takes a
  default in its place (:mod:`engine.plausibility`). ``N/A`` and ``LIM`` are
  remembered in ``marks`` (:mod:`engine.marks`). Trade notation (``device``,
  ``cable``, ``rcd``) is read into the split fields and its text kept in
  ``notation`` (:mod:`engine.record_notation`).
- It round-trips: ``build_record(record_to_dict(r))`` gives ``r`` back,
  ``rejected``, ``marks`` and ``notation`` included; a valid value for the same
  field clears a rejection or a mark.
- The sign rule is one rule for every intake (JSON numbers, text, CSV cells,
  logger lines all pass through :func:`coerce_field`): a measured reading keeps
  its sign; a design value (a rating, a size, IΔn, a length, U0 …) must be
  above zero, else it is refused.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from .coerce import coerce_field, normalise_standard
from .fields import FIELDS
from .intake import MARKS_KEY, REJECTED_KEY, FieldError, take_fields
from .readings import Reading
from .record_notation import NOTATION_INPUTS, apply_notation, notation_values

__all__ = [
    "MARKS_KEY",
    "REJECTED_KEY",
    "CircuitRecord",
    "FieldError",
    "build_record",
    "coerce_field",
    "normalise_standard",
    "record_to_dict",
]


@dataclass(frozen=True, slots=True, kw_only=True)
class CircuitRecord:
    """One circuit, keyed by ``(board, circuit)``; units are in the field names."""

    board: str
    circuit: str
    description: str | None = None
    board_fed_from: str | None = None
    nominal_voltage_v: float | None = None
    phases: int | None = None
    earthing: str | None = None
    supply: str | None = None
    circuit_form: str | None = None
    circuit_role: str | None = None
    socket_outlets: bool | None = None
    load_type: str | None = None
    design_current_a: float | None = None
    max_disconnection_s: float | None = None
    device_kind: str | None = None
    device_standard: str | None = None
    device_curve: str | None = None
    device_rating_a: float | None = None
    device_breaking_ka: float | None = None
    device_max_zs_ohm: float | None = None
    rcd_residual_ma: float | None = None
    rcd_type: str | None = None
    rcd_delayed: bool | None = None
    rcd_type_required: str | None = None
    conductor_material: str | None = None
    line_mm2: float | None = None
    neutral_mm2: float | None = None
    cpc_mm2: float | None = None
    insulation_temp_c: float | None = None
    cable_type: str | None = None
    reference_method: str | None = None
    cable_iz_a: float | None = None
    ambient_factor: float | None = None
    grouping_factor: float | None = None
    thermal_insulation_factor: float | None = None
    length_m: float | None = None
    cable_mv_per_a_m: float | None = None
    test_temp_c: float | None = None
    r1_r2_ohm: Reading | None = None
    r2_ohm: Reading | None = None
    ring_r1_ohm: Reading | None = None
    ring_rn_ohm: Reading | None = None
    ring_r2_ohm: Reading | None = None
    ir_test_v: float | None = None
    ir_ll_mohm: Reading | None = None
    ir_le_mohm: Reading | None = None
    polarity_ok: bool | None = None
    zs_ohm: Reading | None = None
    ze_ohm: Reading | None = None
    pfc_ka: Reading | None = None
    rcd_trip_ms: Reading | None = None
    rcd_trip_5x_ms: Reading | None = None
    rcd_half_no_trip: bool | None = None
    ra_ohm: Reading | None = None
    socket_rating_a: float | None = None
    outdoor_equipment: bool | None = None
    concealed_in_wall: bool | None = None
    premises: str | None = None
    rejected: Mapping[str, str] = dataclasses.field(default_factory=dict, hash=False)
    """Fields refused at intake → the text refused (not one of :data:`engine.fields.FIELDS`)."""
    marks: Mapping[str, str] = dataclasses.field(default_factory=dict, hash=False)
    """Fields recorded as ``N/A`` or ``LIM`` → the mark (the field itself is ``None``)."""
    notation: Mapping[str, str] = dataclasses.field(default_factory=dict, hash=False)
    """Trade notation read into the split fields: ``device`` / ``cable`` / ``rcd`` → the text."""

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.circuit)

    def replace(self, **changes: Any) -> CircuitRecord:
        return dataclasses.replace(self, **changes)


_MEMORY = frozenset({REJECTED_KEY, MARKS_KEY, "notation"})
_RECORD_FIELDS = frozenset(f.name for f in dataclasses.fields(CircuitRecord)) - _MEMORY
assert set(FIELDS) == _RECORD_FIELDS, "engine.fields and CircuitRecord disagree"
assert not NOTATION_INPUTS & set(FIELDS), "a notation input must not be a field name"
_KEYS = ("board", "circuit")


def build_record(
    data: Mapping[str, Any],
    *,
    decimal_comma: bool = False,
    source: str | None = None,
) -> tuple[CircuitRecord | None, list[FieldError]]:
    """Build a record from loose data; bad fields become errors, good ones are kept.

    Besides the fields, ``data`` may hold trade notation (``device``, ``cable``,
    ``rcd``) and a stored record's ``rejected`` and ``marks``. Returns
    ``(None, errors)`` only when ``board`` or ``circuit`` is missing.
    """
    intake = take_fields(data, FIELDS, keys=_KEYS, decimal_comma=decimal_comma, source=source,
                         extra=NOTATION_INPUTS)
    notation = apply_notation(data, intake, decimal_comma=decimal_comma) \
        if not NOTATION_INPUTS.isdisjoint(data) else {}
    values = intake.values
    for key in _KEYS:
        if not values.get(key):
            intake.errors.append(FieldError(field=key, code="missing_key",
                                            reason=f"{key} is required to key the circuit record"))
    if any(e.code == "missing_key" for e in intake.errors):
        return None, intake.errors
    return CircuitRecord(**values, rejected=intake.rejected, marks=intake.marks, notation=notation), \
        intake.errors


def record_to_dict(record: CircuitRecord) -> dict[str, Any]:
    """The record as JSON-ready data: absent fields left out, readings as number or text.

    A field a kept notation gives is written as the notation's text instead
    (``"device": "B32"``, after the fields); marks travel under ``"marks"`` and
    refused values under ``"rejected"`` (field → text), last.
    """
    given = notation_values(record.notation)[0] if record.notation else {}
    out: dict[str, Any] = {}
    for name in FIELDS:
        value = getattr(record, name)
        if value is None or (given and name in given and given[name] == value):
            continue
        out[name] = value.to_json() if isinstance(value, Reading) else value
    out.update(record.notation)
    if record.marks:
        out[MARKS_KEY] = dict(record.marks)
    if record.rejected:
        out[REJECTED_KEY] = dict(record.rejected)
    return out
