"""RFC 9457 problem details, as every error response of the API carries them."""

from __future__ import annotations

from marshmallow import INCLUDE, Schema, fields

__all__ = ["ProblemErrorSchema", "ProblemSchema"]


class ProblemErrorSchema(Schema):
    """One bad input: where (pointer, query parameter or line) and why."""

    class Meta:
        unknown = INCLUDE

    pointer = fields.String(metadata={"description": "RFC 6901 JSON pointer into the body"})
    parameter = fields.String(metadata={"description": "query or path parameter"})
    line = fields.Integer(metadata={"description": "input line number (CSV, lines)"})
    code = fields.String(required=True)
    reason = fields.String(required=True)


class ProblemSchema(Schema):
    """``application/problem+json``; extension members (choices, upload …) may follow."""

    class Meta:
        unknown = INCLUDE

    type = fields.String(required=True)
    title = fields.String(required=True)
    status = fields.Integer(required=True)
    detail = fields.String(required=True)
    code = fields.String(required=True, metadata={"description": "stable error code"})
    errors = fields.List(fields.Nested(ProblemErrorSchema), required=True)
    request_id = fields.String()
    choices = fields.List(fields.String(), metadata={"description": "valid values, where one was unknown"})
