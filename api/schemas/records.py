"""The circuit record as a request body: every field of ``engine.fields.FIELDS``.

Invariants:
- The schema is generated from the engine's field table, so a field added
  there appears here and in the OpenAPI document without an edit.
- Unknown fields are rejected, each by name (marshmallow's RAISE).
- Types only: whether ``"350 mΩ"`` fits ``zs_ohm`` is the engine's call
  (``api.intake.records_from_objects``), reported with the same pointers.
- :func:`load_verify_request` answers exactly what ``VerifyRequestSchema().load``
  answers. A body that is valid as it stands (the common case) is recognised by a
  check of each value against its field's own :meth:`JsonTypes.accepts`, since
  every circuit field returns a valid value unchanged; anything else goes through
  the schema, so every error is marshmallow's own (tests/api/test_verify_load.py).
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields

from api.schemas.fields import JsonTypes
from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS, FieldSpec, builtin_ruleset_ids
from engine.record_notation import NOTATION_INPUTS

__all__ = [
    "KNOWN_NAMES",
    "BoardInSchema",
    "CircuitInSchema",
    "InstallationInSchema",
    "VerifyRequestSchema",
    "load_verify_request",
]

# JSON types accepted per engine field kind; strings carry units ("32 A") or words ("yes").
_KIND_TYPES: dict[str, tuple[str, ...]] = {
    "text": ("string", "number"),
    "choice": ("string",),
    "flag": ("boolean", "string"),
    "count": ("integer", "string"),
    "number": ("number", "string"),
    "reading": ("number", "string"),
}


def _field(spec: FieldSpec, *, required: bool = False) -> JsonTypes:
    description = spec.meaning
    if spec.symbol:
        description += f" ({spec.symbol})"
    metadata: dict[str, Any] = {"description": description + "; N/A or LIM where the schedule says so"
                                if spec.name not in ("board", "circuit") else description}
    if spec.choices and spec.kind == "choice":
        metadata["examples"] = list(spec.choices)
    return JsonTypes(*_KIND_TYPES[spec.kind], required=required, allow_none=not required,
                     metadata=metadata)


_NOTATION_DOC = {
    "device": "the protective device as a schedule writes it: B32, RCBO B20 30mA A, BS 88-3 32A …",
    "cable": "line/cpc cross-sections as a schedule writes them: 2.5/1.5",
    "rcd": "the RCD as a schedule writes it: 30mA A, 100mA S",
}


# No count of circuits here: a body's rows are bounded by OHMTALLY_MAX_ROWS (413 too_many_rows,
# api.http.limits), for JSON as for every other format, and the schema must not refuse earlier.


class _StrictSchema(Schema):
    class Meta:
        unknown = RAISE


CircuitInSchema: type[Schema] = _StrictSchema.from_dict(
    {**{name: _field(spec, required=name in ("board", "circuit")) for name, spec in FIELDS.items()},
     **{name: JsonTypes("string", allow_none=True, metadata={"description": _NOTATION_DOC[name]})
        for name in sorted(NOTATION_INPUTS)}},
    name="CircuitIn")
InstallationInSchema: type[Schema] = _StrictSchema.from_dict(
    {name: _field(spec) for name, spec in INSTALLATION_FIELDS.items()}, name="InstallationIn")
BoardInSchema: type[Schema] = _StrictSchema.from_dict(
    {name: _field(spec, required=name == "board") for name, spec in BOARD_FIELDS.items()}, name="BoardIn")


class VerifyRequestSchema(Schema):
    class Meta:
        unknown = RAISE

    ruleset = fields.String(metadata={"description": "ruleset id (default: the server's default)",
                                      "examples": list(builtin_ruleset_ids())})
    installation = fields.Nested(InstallationInSchema, metadata={
        "description": "facts recorded once for the installation, which every circuit inherits"})
    boards = fields.List(fields.Nested(BoardInSchema), metadata={
        "description": "facts recorded once per board (Zdb, PFC, what feeds it), inherited by its circuits"})
    circuits = fields.List(fields.Nested(CircuitInSchema), load_default=list)


# name → (field, may it be null): read off the schema itself, not declared a second time
_CIRCUIT_SCHEMA_FIELDS = CircuitInSchema().fields
_CIRCUIT_FIELDS: dict[str, tuple[JsonTypes, bool]] = {
    name: (field, field.allow_none) for name, field in _CIRCUIT_SCHEMA_FIELDS.items()
    if isinstance(field, JsonTypes)
}
_REQUIRED = tuple(name for name, field in _CIRCUIT_SCHEMA_FIELDS.items() if field.required)
_CIRCUIT_ORDER = tuple(_CIRCUIT_FIELDS)
_ENVELOPE_ORDER = tuple(VerifyRequestSchema().fields)
_FAST_ENVELOPE = frozenset({"ruleset", "circuits"})  # a site document's other parts go through the schema


def _valid_as_is(document: Any) -> bool:
    if not isinstance(document, dict) or not _FAST_ENVELOPE.issuperset(document):
        return False
    ruleset = document.get("ruleset", "")
    circuits = document.get("circuits", [])
    if not isinstance(ruleset, str) or not isinstance(circuits, list):
        return False
    for circuit in circuits:
        if not isinstance(circuit, dict):
            return False
        for name in _REQUIRED:
            if circuit.get(name) is None:
                return False
        for name, value in circuit.items():
            known = _CIRCUIT_FIELDS.get(name)
            if known is None:
                return False
            field, nullable = known
            if value is None:
                if not nullable:
                    return False
            elif not field.accepts(value):
                return False
    return True


def load_verify_request(document: Any) -> dict[str, Any]:
    """``VerifyRequestSchema().load(document)``, without the schema's per-field cost on a valid body."""
    if _valid_as_is(document):  # the schema's output: its own key order, values unchanged
        out: dict[str, Any] = {}
        for key in _ENVELOPE_ORDER:
            if key in document:
                value = document[key]
                out[key] = ([{name: c[name] for name in _CIRCUIT_ORDER if name in c} for c in value]
                            if key == "circuits" else value)
        out.setdefault("circuits", [])
        return out
    loaded: dict[str, Any] = VerifyRequestSchema().load(document)
    return loaded


#: The names each part of a site document knows (anything else is read as nothing: a warning).
KNOWN_NAMES: dict[str, frozenset[str]] = {
    "document": frozenset(_ENVELOPE_ORDER),
    "circuit": frozenset(_CIRCUIT_SCHEMA_FIELDS),
    "installation": frozenset(InstallationInSchema().fields),
    "board": frozenset(BoardInSchema().fields),
}
