"""The installation's and boards' facts as answered by ``/v1/jobs/<id>/installation`` and ``…/boards``."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

from api.schemas.jobs import HistoryOnRequest, UploadRefSchema, history_field
from api.schemas.verdicts import notice_field, warning_list

__all__ = ["BoardListSchema", "FactsAnswerSchema", "FactsQuerySchema", "FactsStateSchema"]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class FactsQuerySchema(_Strict):
    history = fields.Boolean(load_default=False, metadata={
        "description": "true: every value each field had, oldest first, with its upload"})


class FactsStateSchema(HistoryOnRequest, _Strict):
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
    history = history_field()


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
