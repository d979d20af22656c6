"""Jobs (site visits), their merged circuits with field history, uploads and readings answers.

The response schemas dump what the views return (``Job`` and ``Upload`` rows, the
answers of :mod:`api.answers`); they are also the OpenAPI document's description.
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields, post_dump, validate

from api.render import FORMATS
from api.schemas.changes import VisitFieldsSchema
from api.schemas.fields import view_field
from api.schemas.verdicts import (
    VerifyResponseSchema,
    notice_field,
    rejected_list,
    verdict_list,
    warning_list,
)
from engine import record_to_dict

__all__ = [
    "CircuitStateSchema",
    "CircuitsQuerySchema",
    "CircuitsResponseSchema",
    "HistoryOnRequest",
    "JobCreateSchema",
    "JobListQuerySchema",
    "JobListSchema",
    "JobSchema",
    "JobVerdictsSchema",
    "ReadingsResponseSchema",
    "UploadListSchema",
    "UploadRefSchema",
    "UploadSchema",
    "VerdictsQuerySchema",
    "history_field",
]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class JobCreateSchema(VisitFieldsSchema):
    reference = fields.String(required=True, validate=validate.Length(min=1, max=200),
                              metadata={"description": "the firm's job reference"})
    site = fields.String(required=True, validate=validate.Length(min=1, max=2000))
    ruleset = fields.String(metadata={"description": "ruleset id; default: the server's default"})
    external_ref = fields.String(allow_none=True, validate=validate.Length(max=200),
                                 metadata={"description": "the calling system's own id"})


class JobSchema(_Strict):
    id = fields.Integer(required=True)
    organisation = fields.String(required=True, attribute="organisation.slug")
    reference = fields.String(required=True)
    site = fields.String(required=True)
    ruleset = fields.String(required=True)
    external_ref = fields.String(required=True, allow_none=True)
    created_at = fields.DateTime(required=True)
    updated_at = fields.DateTime(required=True)
    revision = fields.Integer(required=True, metadata={"description": "+1 on every change to the job"})
    installation_ref = fields.String(required=True, allow_none=True,
                                     metadata={"description": "the firm's id for the installation"})
    tested_on = fields.Date(required=True, allow_none=True,
                            metadata={"description": "the date the readings were taken"})
    previous_job_id = fields.Integer(required=True, allow_none=True,
                                     metadata={"description": "the previous visit, when named explicitly"})
    visit_map = fields.Raw(required=True, allow_none=True, metadata={
        "type": "object", "description": "boards and circuits renamed since the previous visit: "
        "{boards: {old: new}, circuits: [{from: {board, circuit}, to: {board, circuit}}]}"})


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
    value = fields.Raw(required=True, allow_none=True, metadata={
        "type": ["number", "string", "boolean", "object"],
        "description": "the value as recorded; a refusal as {rejected: text}, an N/A or LIM as {mark: …}, "
                       "a fact cleared by a PUT as null"})
    upload_id = fields.Integer(required=True)
    location = fields.String(required=True, allow_none=True)
    recorded_at = fields.DateTime(required=True)


def history_field() -> fields.Dict:
    """``history``: every value of each field, oldest first, only when ``?history=true`` asked."""
    return fields.Dict(keys=fields.String(), values=fields.List(fields.Nested(HistoryEntrySchema)),
                       metadata={"description": "with ?history=true: every value of each field, "
                                                "oldest first"})


class HistoryOnRequest:
    """A schema whose ``history`` (:func:`history_field`) is left out when it was not asked for."""

    @post_dump
    def _history_only_when_asked(self, data: dict[str, Any], **_kwargs: Any) -> dict[str, Any]:
        if data.get("history") is None:
            data.pop("history", None)
        return data


class CircuitStateSchema(HistoryOnRequest, _Strict):
    board = fields.String(required=True)
    circuit = fields.String(required=True)
    external_ref = fields.String(required=True, allow_none=True,
                                 metadata={"description": "the circuit's id in the caller's system"})
    record = fields.Function(lambda state: record_to_dict(state.record), required=True,
                             metadata={"type": "object", "description": "the merged circuit record"})
    updated_at = fields.DateTime(required=True)
    upload_id = fields.Integer(required=True, allow_none=True,
                               metadata={"description": "the upload that last changed it"})
    history = history_field()


MAX_CIRCUITS_PAGE = 1000


class _CircuitPageQuery(_Strict):
    limit = fields.Integer(validate=validate.Range(min=1, max=MAX_CIRCUITS_PAGE), metadata={
        "description": f"circuits per page (default OHMTALLY_PAGE_LIMIT, at most {MAX_CIRCUITS_PAGE})"})
    cursor = fields.String(metadata={"description": "opaque; the next_cursor of the previous page"})
    board = fields.String(validate=validate.Length(min=1, max=200),
                          metadata={"description": "only the circuits of this board"})


class CircuitsQuerySchema(_CircuitPageQuery):
    history = fields.Boolean(load_default=False)


class VerdictsQuerySchema(_CircuitPageQuery):
    view = view_field()
    format = fields.String(validate=validate.OneOf(FORMATS), metadata={
        "description": "json (default), junit, csv, table or html: the page rendered as `ohmtally verify "
                       "--format` renders it"})


def _next_cursor() -> fields.String:
    return fields.String(required=True, allow_none=True, metadata={
        "description": "pass as ?cursor= for the next page (also in the Link header, rel=next); "
                       "null on the last page"})


class CircuitsResponseSchema(_Strict):
    job_id = fields.Integer(required=True)
    circuits = fields.List(fields.Nested(CircuitStateSchema), required=True)
    next_cursor = _next_cursor()
    limit = fields.Integer(required=True)


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
    rejected = rejected_list()
    warnings = fields.Function(lambda upload: upload.warnings or [], required=True, metadata={
        "type": "array", "items": {"$ref": "#/components/schemas/InputWarning"},
        "description": "names the input carried that were read as nothing (none recorded before 0.2)"})
    href = fields.Function(lambda upload: f"/v1/jobs/{upload.job_id}/uploads/{upload.id}", required=True,
                           metadata={"type": "string", "description": "the raw bytes as received"})


class UploadListSchema(_Strict):
    job_id = fields.Integer(required=True)
    uploads = fields.List(fields.Nested(UploadSchema), required=True)


class ReadingsResponseSchema(_Strict):
    accepted = fields.Integer(required=True, metadata={"description": "field values merged"})
    rejected = rejected_list()
    warnings = warning_list()
    upload = fields.Nested(UploadRefSchema, required=True)
    verdicts = verdict_list(metadata={"description": "verdicts of the circuits this upload touched"})
    notice = notice_field()
    facts = fields.List(fields.String(), required=True, metadata={
        "description": "the records whose facts this post changed ('installation', 'board DB2'); the "
                       "verdicts include the circuits of those boards, an installation change reaches "
                       "every circuit (GET …/verdicts)"})
    duplicate_of = fields.Integer(metadata={
        "description": "present when this exact body was the job's latest upload moments ago: "
                       "nothing merged; the answer is that upload's"})

    @post_dump
    def _duplicate_only_when_so(self, data: dict[str, Any], **_kwargs: Any) -> dict[str, Any]:
        if data.get("duplicate_of") is None:
            data.pop("duplicate_of", None)
        return data


class JobVerdictsSchema(VerifyResponseSchema):
    """One page of a job's verdicts; ``summary`` counts the verdicts of this page."""

    job_id = fields.Integer(required=True)
    next_cursor = _next_cursor()
    limit = fields.Integer(required=True)

    class Meta:
        ordered = True
        unknown = RAISE


