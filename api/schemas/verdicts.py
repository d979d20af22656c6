"""Verdicts and the verify answer: the OpenAPI document's description and the serialiser in one.

Invariants:
- :class:`VerifyResponseSchema` dumps an ``api.answers.VerifyAnswer``: the ruleset's
  summary, counts by outcome, the verdicts, what was rejected and the safety notice.
- Verdicts serialise through their own ``as_dict`` (:class:`api.schemas.fields.Prepared`);
  :class:`VerdictSchema` describes exactly that shape, and every answer in the tests is
  validated against the served document.
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields, validate

from api.schemas.fields import Prepared
from engine import CHECK_IDS, NOTICE, board_to_dict, installation_to_dict, summarise

__all__ = [
    "CheckSchema",
    "InputWarningSchema",
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
    description = fields.String(required=True, allow_none=True,
                                metadata={"description": "the circuit's description, as recorded"})
    outcome = fields.String(required=True, validate=validate.OneOf(_OUTCOMES),
                            metadata={"description": "worst check: fail > investigate > incomplete > pass"})
    checks = fields.List(fields.Nested(CheckSchema), required=True)
    defaults_applied = fields.Dict(required=True, metadata={
        "description": "field → the ruleset default the checks used because the record was silent"})
    inherited = fields.Dict(required=True, metadata={
        "description": "field → where a value the checks used came from when the circuit did not say: "
                       "'board DB2' or 'installation'"})
    inferred = fields.Dict(required=True, metadata={
        "description": "field → what the record's readings imply where it did not say (ring readings "
                       "mean a ring; a curve letter means a circuit-breaker; a trip time means an RCD)"})
    errors = fields.List(fields.Dict(), metadata={"description": "checks that could not be evaluated"})


class RejectedSchema(Schema):
    """One input that was not taken: a JSON pointer or an input line number, and why."""

    class Meta:
        unknown = RAISE

    pointer = fields.String()
    parameter = fields.String(metadata={"description": "the query parameter or header a refused upload "
                                                      "was refused for"})
    line = fields.Integer()
    file = fields.String()
    field = fields.String()
    column = fields.String()
    text = fields.String()
    code = fields.String(required=True)
    reason = fields.String(required=True)


class InputWarningSchema(_Strict):
    """A name in the input that was read as nothing (an unknown or ambiguous column or key): said
    out loud, nothing rejected. Reported once per input, where the name first appears."""

    line = fields.Integer(metadata={"description": "input line (CSV header, lines format line)"})
    pointer = fields.String(metadata={"description": "JSON pointer (JSON bodies)"})
    file = fields.String()
    code = fields.String(required=True, metadata={
        "description": "unknown_field, ambiguous_label, duplicate_column, ignored_column, too_many_names"})
    reason = fields.String(required=True)
    column = fields.String(metadata={"description": "the name as the input spells it"})
    field = fields.String(metadata={"description": "the field it was taken as, if any"})
    fields_ = fields.List(fields.String(), data_key="fields",
                          metadata={"description": "the fields an ambiguous name could mean"})


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
    warnings = fields.Integer(required=True)


def verdict_list(**kwargs: Any) -> Prepared:
    """The ``verdicts`` member of an answer: engine verdicts, each as its ``as_dict()``."""
    return Prepared(fields.Nested(VerdictSchema), lambda v: v.as_dict(), required=True, **kwargs)


def rejected_list(**kwargs: Any) -> Prepared:
    """The ``rejected`` member: each entry as recorded (pointer or line, code, reason …)."""
    return Prepared(fields.Nested(RejectedSchema), dict, required=True, **kwargs)


def warning_list(**kwargs: Any) -> Prepared:
    """The ``warnings`` member: names in the input that were read as nothing, each once."""
    return Prepared(fields.Nested(InputWarningSchema), dict, required=True, **kwargs)


def notice_field() -> fields.Constant[str]:
    return fields.Constant(NOTICE, required=True, metadata={
        "description": "the safety caution: a decision aid on recorded readings; the person "
                       "who signs decides; local codes and licensed practice prevail"})


def _installation(answer: Any) -> dict[str, Any] | None:
    site = getattr(answer, "site", None)
    return None if site is None or site.installation is None else installation_to_dict(site.installation)


def _boards(answer: Any) -> list[dict[str, Any]]:
    site = getattr(answer, "site", None)
    return [] if site is None else [board_to_dict(board) for board in site.boards.values()]


class VerifyResponseSchema(_Strict):
    ruleset = fields.Nested(RulesetRefSchema, required=True)
    summary = fields.Method("_summary", required=True,
                            metadata={"description": "circuits counted by outcome, and rejected inputs"})
    installation = fields.Function(_installation, metadata={
        "type": ["object", "null"],
        "description": "the installation's facts the circuits inherit (null: none recorded)"})
    boards = fields.Function(_boards, metadata={
        "type": "array", "items": {"type": "object"},
        "description": "each board's facts (Zdb, PFC, what feeds it) its circuits inherit"})
    verdicts = verdict_list()
    rejected = rejected_list()
    warnings = warning_list()
    notice = notice_field()

    def _summary(self, answer: Any) -> dict[str, int]:
        return {**summarise(answer.verdicts), "rejected": len(answer.rejected),
                "warnings": len(answer.warnings)}
