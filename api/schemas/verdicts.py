"""Verdicts and the verify response body (``api.answers.verify_body``), for the OpenAPI document."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

from engine import CHECK_IDS

__all__ = [
    "CheckSchema",
    "RejectedSchema",
    "RulesetRefSchema",
    "SummarySchema",
    "VerdictSchema",
    "VerifyResponseSchema",
]

_OUTCOMES = ("pass", "fail", "investigate", "incomplete")


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class CheckSchema(_Strict):
    check = fields.String(required=True, validate=validate.OneOf(CHECK_IDS))
    outcome = fields.String(required=True, validate=validate.OneOf(_OUTCOMES))
    value = fields.Float(required=True, allow_none=True)
    relation = fields.String(required=True, validate=validate.OneOf(("=", ">", "<")))
    limit = fields.Float(required=True, allow_none=True)
    limit_kind = fields.String(required=True, allow_none=True, validate=validate.OneOf(("max", "min")))
    unit = fields.String(required=True, allow_none=True)
    margin = fields.Float(required=True, allow_none=True,
                          metadata={"description": "(limit − value) / limit for an upper limit; "
                                                   "positive inside the limit"})
    method = fields.String(required=True, allow_none=True)
    basis = fields.String(required=True, allow_none=True, metadata={"description": "published basis"})
    inputs = fields.Dict(required=True, metadata={"description": "the figures the check used"})
    detail = fields.String(required=True)


class VerdictSchema(_Strict):
    board = fields.String(required=True)
    circuit = fields.String(required=True)
    outcome = fields.String(required=True, validate=validate.OneOf(_OUTCOMES),
                            metadata={"description": "worst check: fail > investigate > incomplete > pass"})
    checks = fields.List(fields.Nested(CheckSchema), required=True)
    defaults_applied = fields.Dict(required=True)
    errors = fields.List(fields.Dict(), metadata={"description": "checks that could not be evaluated"})


class RejectedSchema(Schema):
    """One input that was not taken: a JSON pointer or an input line number, and why."""

    class Meta:
        unknown = RAISE

    pointer = fields.String()
    line = fields.Integer()
    file = fields.String()
    field = fields.String()
    column = fields.String()
    text = fields.String()
    code = fields.String(required=True)
    reason = fields.String(required=True)


class RulesetRefSchema(_Strict):
    id = fields.String(required=True)
    title = fields.String(required=True)
    edition = fields.String(required=True)
    version = fields.String(required=True)
    description = fields.String(required=True)
    base = fields.String(required=True, allow_none=True)


class SummarySchema(_Strict):
    circuits = fields.Integer(required=True)
    passed = fields.Integer(required=True, data_key="pass")
    fail = fields.Integer(required=True)
    investigate = fields.Integer(required=True)
    incomplete = fields.Integer(required=True)
    rejected = fields.Integer(required=True)


class VerifyResponseSchema(_Strict):
    ruleset = fields.Nested(RulesetRefSchema, required=True)
    summary = fields.Nested(SummarySchema, required=True)
    verdicts = fields.List(fields.Nested(VerdictSchema), required=True)
    rejected = fields.List(fields.Nested(RejectedSchema), required=True)
    notice = fields.String(required=True, metadata={"description": "the safety caution"})
