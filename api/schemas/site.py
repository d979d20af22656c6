"""The installation's and boards' facts as answered by ``/v1/jobs/<id>/installation`` and ``…/boards``."""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields, post_dump, validate

from api.schemas.jobs import HistoryEntrySchema, UploadRefSchema
from api.schemas.verdicts import notice_field, warning_list

__all__ = ["BoardListSchema", "FactsAnswerSchema", "FactsQuerySchema", "FactsStateSchema"]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class FactsQuerySchema(_Strict):
    history = fields.Boolean(load_default=False, metadata={
        "description": "true: every value each field had, oldest first, with its upload"})


class FactsStateSchema(_Strict):
    job_id = fields.Integer(required=True)
    scope = fields.String(required=True, validate=validate.OneOf(("installation", "board")))
    board = fields.String(required=True, allow_none=True,
                          metadata={"description": "null for the installation"})
    facts = fields.Dict(required=True, allow_none=True, attribute="fields", metadata={
        "description": "the current facts, readings as recorded (null: none recorded); refused values "
                       "under 'rejected', N/A and LIM under 'marks'"})
    updated_at = fields.DateTime(required=True, allow_none=True)
    upload_id = fields.Integer(required=True, allow_none=True,
                               metadata={"description": "the upload that last changed them"})
    history = fields.Dict(keys=fields.String(), values=fields.List(fields.Nested(HistoryEntrySchema)),
                          metadata={"description": "with ?history=true: every value of each field, "
                                                   "oldest first"})

    @post_dump
    def _history_only_when_asked(self, data: dict[str, Any], **_kwargs: Any) -> dict[str, Any]:
        if data.get("history") is None:
            data.pop("history", None)
        return data


class BoardListSchema(_Strict):
    job_id = fields.Integer(required=True)
    boards = fields.List(fields.Nested(FactsStateSchema), required=True)


class ChangedSchema(_Strict):
    board = fields.String(required=True)
    circuit = fields.String(required=True)
    before = fields.String(required=True, allow_none=True, metadata={"description": "null: a new circuit"})
    after = fields.String(required=True)


class FactsAnswerSchema(_Strict):
    state = fields.Nested(FactsStateSchema, required=True)
    upload = fields.Nested(UploadRefSchema, required=True)
    changed = fields.List(fields.Nested(ChangedSchema), required=True, metadata={
        "description": "the circuits whose outcome the change turned (verdict.changed fires for each)"})
    warnings = warning_list()
    notice = notice_field()
