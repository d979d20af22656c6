"""The previous visit: the job fields that name it, and ``GET /v1/jobs/<id>/changes``'s answer.

The answer is :func:`engine.visit_changes`'s listing with the job's id: per circuit the
readings and records that differ since the previous visit (and whether each needs a
look), the circuits that appeared and the ones gone, and the supply's Ze and the boards'
Zdb. On a first visit ``previous`` is ``null`` and every list is empty.
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, ValidationError, fields, post_load, validate, validates_schema

from api.db.models.jobs import MAX_JOB_ID

__all__ = ["VISIT_FIELDS", "ChangesSchema", "VisitFieldsSchema", "VisitMapSchema"]

VISIT_FIELDS = ("installation_ref", "tested_on", "previous_job_id", "visit_map")

_REF = validate.Length(min=1, max=200)


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class _CircuitRefSchema(_Strict):
    board = fields.String(required=True, validate=_REF)
    circuit = fields.String(required=True, validate=_REF)


class _MoveSchema(_Strict):
    from_ = fields.Nested(_CircuitRefSchema, required=True, data_key="from",
                          metadata={"description": "the circuit as the previous visit named it"})
    to = fields.Nested(_CircuitRefSchema, required=True, metadata={"description": "the circuit now"})


class VisitMapSchema(_Strict):
    """Boards and circuits renamed since the previous visit: the only way a renamed one is matched."""

    boards = fields.Dict(keys=fields.String(), values=fields.String(validate=_REF),
                         validate=validate.Length(max=500),
                         metadata={"description": "old board reference → the board's reference now"})
    circuits = fields.List(fields.Nested(_MoveSchema), validate=validate.Length(max=5000), metadata={
        "description": "circuits moved or renamed (wins over boards for that circuit)"})

    @validates_schema
    def _each_old_circuit_once(self, data: dict[str, Any], **_kwargs: Any) -> None:
        seen: set[tuple[str, str]] = set()
        for at, move in enumerate(data.get("circuits") or []):
            key = (move["from_"]["board"], move["from_"]["circuit"])
            if key in seen:
                raise ValidationError({"circuits": {at: {"from": ["this circuit is already mapped"]}}})
            seen.add(key)

    @post_load
    def _as_stored(self, data: dict[str, Any], **_kwargs: Any) -> dict[str, Any]:
        """The map as stored and served (``from`` keeps its JSON name)."""
        moves = data.get("circuits") or []
        return {"boards": dict(data.get("boards") or {}),
                "circuits": [{"from": dict(m["from_"]), "to": dict(m["to"])} for m in moves]}


class VisitFieldsSchema(_Strict):
    """What a job says of its installation and its previous visit (create and PATCH)."""

    installation_ref = fields.String(allow_none=True, validate=validate.Length(min=1, max=200), metadata={
        "description": "the firm's id for the installation: jobs of the organisation with the same one are "
                       "visits to it"})
    tested_on = fields.Date(allow_none=True, metadata={
        "description": "the date the readings were taken (orders the visits; default: the job's creation "
                       "date)"})
    previous_job_id = fields.Integer(allow_none=True, validate=validate.Range(min=1, max=MAX_JOB_ID),
                                     metadata={
        "description": "the previous visit, named explicitly (a job of the same organisation); default: the "
                       "latest earlier job with the same installation_ref"})
    visit_map = fields.Nested(VisitMapSchema, allow_none=True)


class _ValueSchema(_Strict):
    value = fields.Raw(required=True, allow_none=True, metadata={
        "type": ["number", "string", "boolean"], "description": "null: over range (OL)"})
    relation = fields.String(required=True, validate=validate.OneOf(("=", "<", ">")))
    unit = fields.String(required=True, allow_none=True)


class _ChangeSchema(_Strict):
    field = fields.String(required=True, metadata={"description": "the record field"})
    rule = fields.String(required=True, validate=validate.OneOf(("fall", "rise", "either", "changed")))
    previous = fields.Nested(_ValueSchema, required=True)
    current = fields.Nested(_ValueSchema, required=True)
    change = fields.Float(required=True, allow_none=True, metadata={"description": "current − previous"})
    fraction = fields.Float(required=True, allow_none=True, metadata={"description": "change / previous"})
    limit = fields.Float(required=True, allow_none=True, metadata={
        "description": "the reading now beyond which the change needs a look"})
    limit_kind = fields.String(required=True, allow_none=True, validate=validate.OneOf(("max", "min")))
    unit = fields.String(required=True, allow_none=True)
    needs_look = fields.Boolean(required=True, allow_none=True, metadata={
        "description": "beyond the previous_visit thresholds; null: a bounded reading settles nothing"})


class _CircuitChangesSchema(_Strict):
    board = fields.String(required=True)
    circuit = fields.String(required=True)
    previous_key = fields.Nested(_CircuitRefSchema, required=True,
                                 metadata={"description": "the circuit as the previous visit named it"})
    needs_look = fields.Boolean(required=True)
    changes = fields.List(fields.Nested(_ChangeSchema), required=True)


class _SupplySchema(_Strict):
    where = fields.String(required=True, metadata={"description": "'installation' or 'board DB2'"})
    field = fields.String(required=True, validate=validate.OneOf(("ze_ohm", "zdb_ohm")))
    previous = fields.Nested(_ValueSchema, required=True)
    current = fields.Nested(_ValueSchema, required=True)
    change = fields.Float(required=True, allow_none=True)
    fraction = fields.Float(required=True, allow_none=True)
    needs_look = fields.Boolean(required=True, allow_none=True)


class _VisitSchema(_Strict):
    job = fields.Integer(required=True)
    date = fields.String(required=True, metadata={"format": "date",
                                                  "description": "the date its readings were taken"})


class ChangesSchema(_Strict):
    job_id = fields.Integer(required=True)
    previous = fields.Nested(_VisitSchema, required=True, allow_none=True,
                             metadata={"description": "null: a first visit (nothing to compare)"})
    circuits = fields.List(fields.Nested(_CircuitChangesSchema), required=True)
    appeared = fields.List(fields.Nested(_CircuitRefSchema), required=True)
    gone = fields.List(fields.Nested(_CircuitRefSchema), required=True)
    ambiguous = fields.List(fields.Nested(_CircuitRefSchema), required=True, metadata={
        "description": "previous circuits the rename map puts on one key twice: matched to nothing"})
    supply = fields.List(fields.Nested(_SupplySchema), required=True)
