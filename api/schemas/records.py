"""The circuit record as a request body: every field of ``engine.fields.FIELDS``.

Invariants:
- The schema is generated from the engine's field table, so a field added
  there appears here and in the OpenAPI document without an edit.
- Unknown fields are rejected, each by name (marshmallow's RAISE).
- Types only: whether ``"350 mΩ"`` fits ``zs_ohm`` is the engine's call
  (``api.intake.records_from_objects``), reported with the same pointers.
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields, validate

from engine import FIELDS, builtin_ruleset_ids

from .fields import JsonTypes

__all__ = ["CircuitInSchema", "VerifyRequestSchema"]

# JSON types accepted per engine field kind; strings carry units ("32 A") or words ("yes").
_KIND_TYPES: dict[str, tuple[str, ...]] = {
    "text": ("string", "number"),
    "choice": ("string",),
    "flag": ("boolean", "string"),
    "count": ("integer", "string"),
    "number": ("number", "string"),
    "reading": ("number", "string"),
}


def _field(name: str) -> JsonTypes:
    spec = FIELDS[name]
    description = spec.meaning
    if spec.symbol:
        description += f" ({spec.symbol})"
    metadata: dict[str, Any] = {"description": description}
    if spec.choices and spec.kind == "choice":
        metadata["examples"] = list(spec.choices)
    required = name in ("board", "circuit")
    return JsonTypes(*_KIND_TYPES[spec.kind], required=required, allow_none=not required,
                     metadata=metadata)


class _StrictSchema(Schema):
    class Meta:
        unknown = RAISE


CircuitInSchema: type[Schema] = _StrictSchema.from_dict(
    {name: _field(name) for name in FIELDS}, name="CircuitIn")


class VerifyRequestSchema(Schema):
    class Meta:
        unknown = RAISE

    ruleset = fields.String(metadata={"description": "ruleset id (default: the server's default)",
                                      "examples": list(builtin_ruleset_ids())})
    circuits = fields.List(fields.Nested(CircuitInSchema), required=True,
                           validate=validate.Length(max=10000))
