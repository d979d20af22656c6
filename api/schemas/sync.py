"""Bodies of the sync PATCHes: a job's own fields and a circuit's external reference."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

from api.schemas.changes import VisitFieldsSchema

__all__ = ["CircuitPatchSchema", "JobPatchSchema"]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class JobPatchSchema(VisitFieldsSchema):
    """Only the fields given change (RFC 7396 merge patch); ``null`` clears ``external_ref`` and the
    previous visit's fields."""

    external_ref = fields.String(allow_none=True, validate=validate.Length(max=200),
                                 metadata={"description": "the calling system's own id for the job"})
    reference = fields.String(validate=validate.Length(min=1, max=200))
    site = fields.String(validate=validate.Length(min=1, max=2000))


class CircuitPatchSchema(_Strict):
    external_ref = fields.String(required=True, allow_none=True, validate=validate.Length(max=200),
                                 metadata={"description": "the calling system's own id for the circuit"})
