"""The compact view of a verdict answer (``?view=compact``): outcomes and figures, no prose.

For systems that store outcomes, not sentences. Each check of each circuit is a row
``[legend index, outcome, value, relation, limit]``; the answer's ``legend`` gives, once
for the whole answer, what each index stands for: ``[check, unit, basis_id]``.
``basis_id`` is the ruleset entry the limit rests on (``section.key``, which
``GET /v1/rulesets/<id>`` lists with its source), ``record:<field>`` where the limit is
the record's own figure, or ``null``. (``engine.compact`` builds both; its
``decode`` turns an answer back into one row per check with the legend spelt out.)

Invariants:
- A compact answer is served as ``application/vnd.ohmtally.compact+json`` (RFC 6838
  vendor tree, RFC 6839 ``+json`` suffix: any JSON parser reads it), so the OpenAPI
  document describes the full and the compact answer of one operation apart, each by
  its media type.
- The envelope is the full answer's (ruleset, summary, rejected, warnings, notice, and
  on a job's page job_id, next_cursor, limit), with ``view: "compact"`` and ``legend``.
- It carries the same outcomes, values and limits as the full view of the same
  circuits (tests/engine/test_compact_view.py, tests/api/test_compact_answers.py).
"""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, fields

from api.schemas.fields import COMPACT_MEDIA_TYPE, Prepared
from api.schemas.jobs import JobVerdictsSchema
from api.schemas.verdicts import VerifyResponseSchema
from engine.compact import LEGEND_COLUMNS

__all__ = ["COMPACT_MEDIA_TYPE", "CompactJobVerdictsSchema", "CompactVerdictSchema",
           "CompactVerifyResponseSchema"]

_OUTCOMES = ("pass", "fail", "investigate", "incomplete")
_ROW = {
    "type": "array", "minItems": 5, "maxItems": 5,
    "items": {"type": ["integer", "number", "string", "null"]},
    "description": "[legend index, outcome, value, relation, limit]: the legend entry says which check, "
                   "its unit and the basis id; value and limit are null where there is no figure",
}
_LEGEND_ENTRY = {
    "type": "array", "minItems": len(LEGEND_COLUMNS), "maxItems": len(LEGEND_COLUMNS),
    "items": {"type": ["string", "null"]},
    "description": "[" + ", ".join(LEGEND_COLUMNS) + "]",
}


class CompactVerdictSchema(Schema):
    class Meta:
        ordered = True
        unknown = RAISE

    board = fields.String(required=True)
    circuit = fields.String(required=True)
    outcome = fields.String(required=True, metadata={"enum": list(_OUTCOMES),
                                                     "description": "the worst outcome of its checks"})
    checks = fields.List(fields.Raw(metadata=_ROW), required=True)


def _same(item: Any) -> Any:
    return item


class _CompactMembers:
    """What a compact answer has instead of, and besides, the full answer's verdicts."""

    view = fields.Constant("compact", required=True, metadata={"enum": ["compact"]})
    legend = fields.List(fields.Raw(metadata=_LEGEND_ENTRY), required=True, metadata={
        "description": "what each row's first number stands for, written once per answer"})
    verdicts = Prepared(fields.Nested(CompactVerdictSchema), _same, required=True)


class CompactVerifyResponseSchema(_CompactMembers, VerifyResponseSchema):
    """``POST /v1/verify?view=compact``."""


class CompactJobVerdictsSchema(_CompactMembers, JobVerdictsSchema):
    """``GET /v1/jobs/<id>/verdicts?view=compact``: one page, compact."""
