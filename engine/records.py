"""The normalised circuit record, and turning loose data into one.

Invariants:
- :class:`CircuitRecord` has exactly the fields of :mod:`engine.fields` (the
  record table of engine/README.md); ``board`` and
  ``circuit`` are required, every other field is optional (``None``).
- Measured fields hold :class:`Reading`; design values hold plain floats;
  choices hold their canonical spelling; flags hold bools.
- :func:`build_record` never raises for bad field values: it returns the record
  built from the good fields and one :class:`FieldError` per bad one, so one bad
  cell never loses the rest of a row.
- A rejected value is remembered, never replaced: ``CircuitRecord.rejected``
  maps each refused field to the text that was refused, so no check takes a
  default in its place (:mod:`engine.plausibility`). It round-trips:
  ``build_record(record_to_dict(r))`` gives ``r`` back, ``rejected`` included;
  a valid value for the same field clears the rejection.
- The sign rule is one rule for every intake (JSON numbers, text, CSV cells,
  logger lines all pass through :func:`coerce_field`): a measured reading keeps
  its sign; a design value (a rating, a size, IΔn, a length, U0 …) must be
  above zero, else it is refused.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from .errors import ReadingError
from .fields import FIELDS, FieldSpec
from .readings import Reading, format_number, parse_number, parse_reading, tidy_value

__all__ = [
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

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.circuit)

    def replace(self, **changes: Any) -> CircuitRecord:
        return dataclasses.replace(self, **changes)


REJECTED_KEY = "rejected"
_RECORD_FIELDS = frozenset(f.name for f in dataclasses.fields(CircuitRecord)) - {REJECTED_KEY}
assert set(FIELDS) == _RECORD_FIELDS, "engine.fields and CircuitRecord disagree"


@dataclass(frozen=True, slots=True, kw_only=True)
class FieldError:
    """One field that could not be taken: which, what it said, and why."""

    field: str
    reason: str
    text: str | None = None
    code: str = "bad_value"

    def as_dict(self) -> dict[str, str]:
        out = {"field": self.field, "code": self.code, "reason": self.reason}
        if self.text is not None:
            out["text"] = self.text
        return out


_TRUE = frozenset({"true", "yes", "y", "1", "ok", "pass", "passed", "correct", "✓", "✔", "t"})
_FALSE = frozenset({"false", "no", "n", "0", "fail", "failed", "incorrect", "wrong", "x", "✗", "✘", "f"})
_CHOICE_ALIASES: dict[str, dict[str, str]] = {
    "earthing": {"tns": "TN-S", "tncs": "TN-C-S", "pme": "TN-C-S", "tt": "TT", "it": "IT"},
    "conductor_material": {"cu": "copper", "copper": "copper", "al": "aluminium",
                           "aluminium": "aluminium", "aluminum": "aluminium"},
    "device_kind": {"mcb": "breaker", "cb": "breaker", "breaker": "breaker", "rcbo": "rcbo",
                    "fuse": "fuse", "other": "other"},
    "load_type": {"lighting": "lighting", "lights": "lighting", "other": "other", "power": "other"},
    "cable_type": {"te": "twin_and_earth", "tande": "twin_and_earth", "twinandearth": "twin_and_earth",
                   "twinearth": "twin_and_earth", "singlecore": "single_core", "singles": "single_core",
                   "t&e": "twin_and_earth", "multicore": "multicore", "armoured": "armoured",
                   "armored": "armoured", "swa": "armoured"},
    "premises": {"domestic": "domestic", "dwelling": "domestic", "house": "domestic", "other": "other",
                 "commercial": "other", "industrial": "other"},
}
_FOLD = re.compile(r"[\s\-_./]+")


def _fold(text: str) -> str:
    return _FOLD.sub("", text).lower()


@lru_cache(maxsize=1024)  # a job names a handful of standards, on every circuit
def normalise_standard(text: str) -> str:
    """``"bs en60898"`` → ``"BS EN 60898"``, ``"BS88-2"`` → ``"BS 88-2"``."""
    out = re.sub(r"\s+", " ", text.strip().upper())
    out = re.sub(r"^BSEN\b|^BS\s*EN(?=\d)", "BS EN ", out)
    out = re.sub(r"^(BS|IEC|EN)(?=\d)", r"\1 ", out)
    out = re.sub(r"^BS EN(?=\d)", "BS EN ", out)
    return re.sub(r"\s+", " ", out)


def coerce_field(
    name: str,
    raw: Any,
    *,
    default_unit: str | None = None,
    decimal_comma: bool = False,
    source: str | None = None,
) -> Any:
    """Turn one raw value into the field's typed value; ``None`` means absent.

    Raises :class:`ReadingError` (a subclass of ``EngineError``) for a bad value.
    """
    spec = FIELDS.get(name)
    if spec is None:
        raise ReadingError(f"unknown field {name!r}", field=name, text=None)
    if raw is None:
        return None
    if spec.kind == "reading":
        if isinstance(raw, Reading):
            return raw
        assert spec.unit is not None
        return parse_reading(raw, field=name, unit=spec.unit, default_unit=default_unit,
                             decimal_comma=decimal_comma, source=source)
    if isinstance(raw, str) and raw.strip().lower() in {"", "n/a", "na", "-", "none", "null"}:
        return None
    return _COERCE[spec.kind](spec, raw, default_unit, decimal_comma)


def _text(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> str:
    if isinstance(raw, bool) or not isinstance(raw, str | int | float):
        raise ReadingError(f"{spec.name}: expected text", field=spec.name, text=repr(raw))
    text = format_number(raw) if isinstance(raw, float) else str(raw).strip()
    if spec.name == "device_standard":
        return normalise_standard(text)
    return text


def _choice(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> str:
    if type(raw) is int and str(raw) in spec.choices:  # reference method 100 as a JSON number
        return str(raw)
    if not isinstance(raw, str):
        raise ReadingError(f"{spec.name}: expected one of {', '.join(spec.choices)}",
                           field=spec.name, text=repr(raw))
    if raw in spec.choices:  # already canonical (every stored record): what the folding gives
        return raw
    folded = _fold(raw)
    aliases = _CHOICE_ALIASES.get(spec.name, {})
    if folded in aliases:
        return aliases[folded]
    for choice in spec.choices:
        if _fold(choice) == folded:
            return choice
    raise ReadingError(f"{spec.name}: {raw!r} is not one of {', '.join(spec.choices)}",
                       field=spec.name, text=raw)


def _flag(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> bool:
    if isinstance(raw, bool):
        return raw
    if isinstance(raw, int) and raw in (0, 1):
        return bool(raw)
    if isinstance(raw, str):
        folded = raw.strip().lower()
        if folded in _TRUE:
            return True
        if folded in _FALSE:
            return False
    raise ReadingError(f"{spec.name}: expected true or false, got {raw!r}",
                       field=spec.name, text=str(raw))


def _count(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> int:
    value: Any = raw
    if isinstance(raw, str):
        value = raw.strip()
        value = int(value) if value.isdigit() else value
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    if isinstance(value, bool) or not isinstance(value, int) or str(value) not in spec.choices:
        raise ReadingError(f"{spec.name}: expected one of {', '.join(spec.choices)}, got {raw!r}",
                           field=spec.name, text=str(raw))
    return value


def _number(spec: FieldSpec, raw: Any, default_unit: str | None, decimal_comma: bool) -> float:
    if isinstance(raw, bool):
        raise ReadingError(f"{spec.name}: expected a number", field=spec.name, text=str(raw))
    if spec.unit == "degC":
        return _temperature(spec, raw, decimal_comma)
    if default_unit is None and type(raw) in (int, float) and math.isfinite(raw):
        value = tidy_value(float(raw))  # what parse_reading gives a bare number, without the Reading
    else:
        assert spec.unit is not None
        reading = parse_reading(raw, field=spec.name, unit=spec.unit, default_unit=default_unit,
                                decimal_comma=decimal_comma)
        if reading is None:
            raise ReadingError(f"{spec.name}: expected a number", field=spec.name, text=str(raw))
        if not reading.exact:
            raise ReadingError(f"{spec.name}: a design value cannot be bounded or over range",
                               field=spec.name, text=str(raw))
        assert reading.value is not None
        value = reading.value
    if not value > 0.0:
        raise ReadingError(f"{spec.name}: a design value must be above zero, got {raw!r}",
                           field=spec.name, text=str(raw))
    return value


_TEMPERATURE = re.compile(r"^\s*([+-]?[\d.,]+)\s*(°\s*C|deg\s*C|C|degC)?\s*$", re.IGNORECASE)


def _temperature(spec: FieldSpec, raw: Any, decimal_comma: bool) -> float:
    if isinstance(raw, int | float):
        value = float(raw)
    else:
        match = _TEMPERATURE.match(str(raw))
        if match is None:
            raise ReadingError(f"{spec.name}: expected a temperature in °C, got {raw!r}",
                               field=spec.name, text=str(raw))
        try:
            value = parse_number(match.group(1), decimal_comma=decimal_comma)
        except ValueError as exc:
            raise ReadingError(f"{spec.name}: {exc}", field=spec.name, text=str(raw)) from exc
    if not math.isfinite(value) or not -60.0 <= value <= 250.0:
        raise ReadingError(f"{spec.name}: {raw!r} is outside -60…250 °C",
                           field=spec.name, text=str(raw))
    return value


_COERCE = {"text": _text, "choice": _choice, "flag": _flag, "count": _count, "number": _number}


def build_record(
    data: Mapping[str, Any],
    *,
    decimal_comma: bool = False,
    source: str | None = None,
) -> tuple[CircuitRecord | None, list[FieldError]]:
    """Build a record from loose data; bad fields become errors, good ones are kept.

    Returns ``(None, errors)`` only when ``board`` or ``circuit`` is missing.
    """
    values: dict[str, Any] = {}
    errors: list[FieldError] = []
    rejected: dict[str, str] = {}
    for name, raw in data.items():
        if name == REJECTED_KEY:
            rejected.update(_rejected_map(raw, errors))
            continue
        if name not in FIELDS:
            errors.append(FieldError(field=name, code="unknown_field",
                                     reason=f"unknown field {name!r}"))
            continue
        try:
            value = coerce_field(name, raw, decimal_comma=decimal_comma, source=source)
        except ReadingError as exc:
            errors.append(FieldError(field=name, reason=exc.message, text=exc.text))
            if name not in ("board", "circuit"):
                rejected[name] = exc.text if exc.text is not None else repr(raw)
            continue
        if value is not None:
            values[name] = value
    for name in [n for n in rejected if n in values]:
        del rejected[name]  # a valid value clears the rejection
    if rejected:
        values[REJECTED_KEY] = rejected
    for key in ("board", "circuit"):
        if not values.get(key):
            errors.append(FieldError(field=key, code="missing_key",
                                     reason=f"{key} is required to key the circuit record"))
    if errors and any(e.code == "missing_key" for e in errors):
        return None, errors
    return CircuitRecord(**values), errors


def _rejected_map(raw: Any, errors: list[FieldError]) -> dict[str, str]:
    """A stored record's ``rejected`` member, checked: known fields mapped to text."""
    if not isinstance(raw, Mapping):
        errors.append(FieldError(field=REJECTED_KEY, reason="rejected must map fields to the text refused"))
        return {}
    out: dict[str, str] = {}
    for name, text in raw.items():
        if name not in FIELDS or name in ("board", "circuit") or not isinstance(text, str):
            errors.append(FieldError(field=REJECTED_KEY, text=str(name),
                                     reason=f"rejected: {name!r} is not a field with refused text"))
            continue
        out[name] = text
    return out


def record_to_dict(record: CircuitRecord) -> dict[str, Any]:
    """The record as JSON-ready data: absent fields left out, readings as number or text.

    Refused values travel under ``"rejected"`` (field → text), after the fields.
    """
    out: dict[str, Any] = {}
    for name in FIELDS:
        value = getattr(record, name)
        if value is None:
            continue
        out[name] = value.to_json() if isinstance(value, Reading) else value
    if record.rejected:
        out[REJECTED_KEY] = dict(record.rejected)
    return out
