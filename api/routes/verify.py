"""``POST /v1/verify``: stateless verification of a body of readings; nothing is stored."""

from __future__ import annotations

from typing import Any

from flask import Response
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE, Schema, fields, validate

from api.answers import VerifyAnswer, compact_body, verify_body
from api.http.limits import body_limits
from api.intake.bodies import read_body
from api.render import (
    FAIL_ON_CHOICES,
    FORMATS,
    MEDIA_TYPES,
    WARN_ON_CHOICES,
    Treatment,
    policy_from_names,
    render,
)
from api.routes.common import (
    NOTICE_HEADER,
    READINGS_BODY_DOC,
    chosen_ruleset_id,
    compact_doc,
    compact_response,
    raw_body,
    resolve_ruleset,
    settings,
    view_of,
)
from api.schemas.compact import CompactVerifyResponseSchema
from api.schemas.fields import view_field
from api.schemas.verdicts import VerifyResponseSchema
from engine import NOTICE, verify

__all__ = ["DECIMALS", "ReadingsQuerySchema", "VerifyQuerySchema", "blp"]

DECIMALS = {"comma": True, "point": False}  # ?decimal= → the adapters' decimal_comma

blp = Blueprint("verify", __name__, url_prefix="/v1", description="Stateless verification")


class ReadingsQuerySchema(Schema):
    class Meta:
        unknown = RAISE

    adapter = fields.String(metadata={"description": "adapter name (default: from the Content-Type)"})
    profile = fields.String(metadata={"description": "mapping or line profile for the adapter"})
    ruleset = fields.String(metadata={"description": "ruleset id (JSON bodies may name it instead)"})
    decimal = fields.String(validate=validate.OneOf(tuple(DECIMALS)), metadata={
        "description": "the text body's decimal separator: comma (0,82) or point; default: as the "
                       "profile or a '#% decimal=' line says (CSV detects it)"})


class VerifyQuerySchema(ReadingsQuerySchema):
    """/verify only: the output format, the view and the pipeline policy (the renderers of api.render)."""

    view = view_field()

    format = fields.String(validate=validate.OneOf(FORMATS),
                           metadata={"description": "json (default), junit, csv, table or html (a page "
                                                    "a person reads): the bytes `ohmtally verify "
                                                    "--format` prints"})
    fail_on = fields.String(validate=validate.OneOf(FAIL_ON_CHOICES),
                            metadata={"description": "least severe outcome that fails (default fail)"})
    warn_on = fields.String(validate=validate.OneOf(WARN_ON_CHOICES),
                            metadata={"description": "least severe outcome that warns (default incomplete)"})


_TEXT = {"schema": {"type": "string"}}
FAILING_HEADER = "Ohmtally-Failing-Circuits"
_FORMATS_DOC: dict[int, Any] = {200: {
    "content": {**{media.split(";")[0]: _TEXT for fmt, media in MEDIA_TYPES.items() if fmt != "json"},
                **compact_doc(CompactVerifyResponseSchema)},
    "headers": {FAILING_HEADER: {"schema": {"type": "integer"},
                                 "description": "circuits failing under fail_on (so a curl step can gate)"},
                "Ohmtally-Notice": {"schema": {"type": "string"},
                                    "description": "the safety caution, also in the JSON body's notice"}}}}


@blp.route("/verify")
class Verify(MethodView):
    @blp.arguments(VerifyQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(requestBody=READINGS_BODY_DOC, responses=_FORMATS_DOC)
    @blp.response(200, VerifyResponseSchema)
    def post(self, **query: Any) -> Any:
        """Verify circuits: `{ruleset, summary, verdicts, rejected, notice}`.

        JSON bodies are all or nothing (422 with a pointer per bad field); CSV,
        lines and NDJSON take the good rows and list the bad ones in `rejected`.
        `?format=junit|csv|table|html` renders the same body for a pipeline or a person;
        `?view=compact` answers rows of figures instead of sentences.
        """
        view = view_of(query)
        if query.get("ruleset"):  # a bad name is reported before the body is read
            resolve_ruleset(query["ruleset"])
        body, media_type, charset = raw_body()
        intake = read_body(body, media_type, charset=charset, adapter=query.get("adapter"),
                               decimal_comma=DECIMALS.get(query.get("decimal") or ""),
                           profile=query.get("profile"), profile_dir=settings().profile_dir,
                           limits=body_limits())
        ruleset_id, where = chosen_ruleset_id(query.get("ruleset"), intake.ruleset)
        ruleset = resolve_ruleset(ruleset_id, **where)
        site = intake.site()
        policy = policy_from_names(query.get("fail_on"), query.get("warn_on"))
        if view == "compact":
            compact = compact_body(ruleset, verify(intake.records(), ruleset, site=site, view="compact"),
                                   intake.rejected, intake.warnings, site=site)
            failing = policy.failing_circuits(compact["verdicts"])
            return compact_response(compact, {FAILING_HEADER: str(failing), NOTICE_HEADER: NOTICE})
        answer = VerifyAnswer(ruleset=ruleset, verdicts=verify(intake.records(), ruleset, site=site),
                              rejected=intake.rejected, warnings=intake.warnings, site=site)
        failing = sum(1 for v in answer.verdicts if policy.treat(v.outcome.value) is Treatment.FAIL)
        headers = {FAILING_HEADER: str(failing), NOTICE_HEADER: NOTICE}
        if query.get("format") is None:
            return answer, headers
        text, media_type = render(verify_body(ruleset, answer.verdicts, answer.rejected, answer.warnings,
                                              site=site), query["format"], policy)
        return Response(text, status=200, content_type=media_type, headers=headers)
