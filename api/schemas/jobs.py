"""Jobs (site visits), their merged circuits with field history, uploads and readings responses."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

from api.schemas.verdicts import RejectedSchema, RulesetRefSchema, SummarySchema, VerdictSchema

__all__ = [
    "CircuitStateSchema",
    "CircuitsQuerySchema",
    "CircuitsResponseSchema",
    "JobCreateSchema",
    "JobListQuerySchema",
    "JobListSchema",
    "JobSchema",
    "JobVerdictsSchema",
    "ReadingsResponseSchema",
    "UploadListSchema",
    "UploadRefSchema",
    "UploadSchema",
]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class JobCreateSchema(_Strict):
    reference = fields.String(required=True, validate=validate.Length(min=1, max=200),
                              metadata={"description": "the firm's job reference"})
    site = fields.String(required=True, validate=validate.Length(min=1, max=2000))
    ruleset = fields.String(metadata={"description": "ruleset id; default: the server's default"})
    external_ref = fields.String(allow_none=True, validate=validate.Length(max=200),
                                 metadata={"description": "the calling system's own id"})


class JobSchema(_Strict):
    id = fields.Integer(required=True)
    organisation = fields.String(required=True)
    reference = fields.String(required=True)
    site = fields.String(required=True)
    ruleset = fields.String(required=True)
    external_ref = fields.String(required=True, allow_none=True)
    created_at = fields.DateTime(required=True)
    updated_at = fields.DateTime(required=True)
    revision = fields.Integer(required=True, metadata={"description": "+1 on every change to the job"})


class JobListQuerySchema(_Strict):
    limit = fields.Integer(validate=validate.Range(min=1, max=500))
    cursor = fields.String(metadata={"description": "opaque; the next_cursor of the previous page"})
    reference = fields.String(metadata={"description": "only jobs with exactly this reference"})
    external_ref = fields.String(metadata={"description": "only jobs with this id in the caller's system"})
    updated_since = fields.String(metadata={"description": "RFC 3339 date-time: only jobs changed at "
                                            "or after it", "format": "date-time"})


class JobListSchema(_Strict):
    items = fields.List(fields.Nested(JobSchema), required=True)
    next_cursor = fields.String(required=True, allow_none=True)
    limit = fields.Integer(required=True)


class HistoryEntrySchema(_Strict):
    value = fields.Raw(required=True, metadata={"type": ["number", "string", "boolean"]})
    upload_id = fields.Integer(required=True)
    location = fields.String(required=True, allow_none=True)
    recorded_at = fields.DateTime(required=True)


class CircuitStateSchema(_Strict):
    board = fields.String(required=True)
    circuit = fields.String(required=True)
    external_ref = fields.String(required=True, allow_none=True,
                                 metadata={"description": "the circuit's id in the caller's system"})
    record = fields.Dict(required=True, metadata={"description": "the merged circuit record"})
    updated_at = fields.DateTime(required=True)
    upload_id = fields.Integer(required=True, allow_none=True,
                               metadata={"description": "the upload that last changed it"})
    history = fields.Dict(keys=fields.String(), values=fields.List(fields.Nested(HistoryEntrySchema)),
                          metadata={"description": "with ?history=true: every value of each field, "
                                                   "oldest first"})


class CircuitsQuerySchema(_Strict):
    history = fields.Boolean(load_default=False)


class CircuitsResponseSchema(_Strict):
    job_id = fields.Integer(required=True)
    circuits = fields.List(fields.Nested(CircuitStateSchema), required=True)


class UploadRefSchema(_Strict):
    id = fields.Integer(required=True)
    sha256 = fields.String(required=True)
    size = fields.Integer(required=True)


class UploadSchema(_Strict):
    id = fields.Integer(required=True)
    job_id = fields.Integer(required=True)
    content_type = fields.String(required=True)
    adapter = fields.String(required=True, allow_none=True)
    profile = fields.String(required=True, allow_none=True)
    sha256 = fields.String(required=True)
    size = fields.Integer(required=True)
    received_at = fields.DateTime(required=True)
    status = fields.String(required=True, validate=validate.OneOf(("merged", "rejected")))
    accepted = fields.Integer(required=True)
    rejected = fields.List(fields.Nested(RejectedSchema), required=True)
    href = fields.String(required=True, metadata={"description": "the raw bytes as received"})


class UploadListSchema(_Strict):
    job_id = fields.Integer(required=True)
    uploads = fields.List(fields.Nested(UploadSchema), required=True)


class ReadingsResponseSchema(_Strict):
    accepted = fields.Integer(required=True, metadata={"description": "field values merged"})
    rejected = fields.List(fields.Nested(RejectedSchema), required=True)
    upload = fields.Nested(UploadRefSchema, required=True)
    verdicts = fields.List(fields.Nested(VerdictSchema), required=True,
                           metadata={"description": "verdicts of the circuits this upload touched"})
    notice = fields.String(required=True)
    duplicate_of = fields.Integer(metadata={
        "description": "present when this exact body was the job's latest upload moments ago: "
                       "nothing merged; the answer is that upload's"})


class JobVerdictsSchema(_Strict):
    job_id = fields.Integer(required=True)
    ruleset = fields.Nested(RulesetRefSchema, required=True)
    summary = fields.Nested(SummarySchema, required=True)
    verdicts = fields.List(fields.Nested(VerdictSchema), required=True)
    rejected = fields.List(fields.Nested(RejectedSchema), required=True)
    notice = fields.String(required=True)


