"""``POST /v1/verify``: stateless verification of a body of readings; nothing is stored."""

from __future__ import annotations

from typing import Any

import orjson
from flask import Response
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE, Schema, fields, validate

from api.answers import verify_body
from api.errors import ApiError
from api.http.limits import check_row_count, check_text_limits
from api.intake.bodies import read_body
from api.render import FAIL_ON_CHOICES, FORMATS, MEDIA_TYPES, WARN_ON_CHOICES, policy_from_names, render
from api.routes.common import READINGS_BODY_DOC, json_response, raw_body, resolve_ruleset, settings
from api.schemas.verdicts import VerifyResponseSchema
from engine import verify
from engine.verify import collector_paused

__all__ = ["ReadingsQuerySchema", "VerifyQuerySchema", "blp", "verdicts_response"]

blp = Blueprint("verify", __name__, url_prefix="/v1", description="Stateless verification")


class ReadingsQuerySchema(Schema):
    class Meta:
        unknown = RAISE

    adapter = fields.String(metadata={"description": "adapter name (default: from the Content-Type)"})
    profile = fields.String(metadata={"description": "mapping or line profile for the adapter"})
    ruleset = fields.String(metadata={"description": "ruleset id (JSON bodies may name it instead)"})


class VerifyQuerySchema(ReadingsQuerySchema):
    """/verify only: the output format and the pipeline policy (the renderers of api.render)."""

    format = fields.String(validate=validate.OneOf(FORMATS),
                           metadata={"description": "json (default), junit, csv or table: the bytes "
                                                    "`ohmtally verify --format` prints"})
    fail_on = fields.String(validate=validate.OneOf(FAIL_ON_CHOICES),
                            metadata={"description": "least severe outcome that fails (default fail)"})
    warn_on = fields.String(validate=validate.OneOf(WARN_ON_CHOICES),
                            metadata={"description": "least severe outcome that warns (default incomplete)"})


_TEXT = {"schema": {"type": "string"}}
FAILING_HEADER = "Ohmtally-Failing-Circuits"
# CSV has no place for prose, so every rendered answer also carries the caution in a header.
NOTICE_HEADER = "Ohmtally-Notice"
_FORMATS_DOC: dict[int, Any] = {200: {
    "content": {media.split(";")[0]: _TEXT for fmt, media in MEDIA_TYPES.items() if fmt != "json"},
    "headers": {FAILING_HEADER: {"schema": {"type": "integer"},
                                 "description": "circuits failing under fail_on (so a curl step can gate)"},
                "Ohmtally-Notice": {"schema": {"type": "string"},
                                    "description": "the safety caution, also in the JSON body's notice"}}}}


def verdicts_response(data: dict[str, Any], headers: dict[str, str] | None = None) -> Response:
    """``json_response`` for bodies of verdicts, encoded by orjson: the same JSON document, but
    a 48-circuit answer is ~300 kB and the stdlib encoder took a tenth of the request (tests/bench)."""
    try:
        encoded = orjson.dumps(data, option=orjson.OPT_NON_STR_KEYS)
    except TypeError:  # a type orjson does not know: Flask's provider knows more
        return json_response(data, headers=headers)
    return Response(encoded, status=200, mimetype="application/json", headers=headers)


def chosen_ruleset_id(query_id: str | None, body_id: str | None) -> tuple[str | None, dict[str, str]]:
    """The ruleset the request names, and where (for the pointer of a 404)."""
    if query_id and body_id and query_id != body_id:
        raise ApiError(422, "conflicting_ruleset",
                       f"the query names ruleset {query_id!r} and the body {body_id!r}; name one",
                       errors=[{"pointer": "/ruleset", "code": "conflicting_ruleset",
                                "reason": f"differs from ?ruleset={query_id}"}])
    if body_id:
        return body_id, {"pointer": "/ruleset"}
    return query_id, {"parameter": "ruleset"}


@blp.route("/verify")
class Verify(MethodView):
    @blp.arguments(VerifyQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(requestBody=READINGS_BODY_DOC, responses=_FORMATS_DOC)
    @blp.response(200, VerifyResponseSchema)
    def post(self, **query: Any) -> Any:
        """Verify circuits: `{ruleset, summary, verdicts, rejected, notice}`.

        JSON bodies are all or nothing (422 with a pointer per bad field); CSV,
        lines and NDJSON take the good rows and list the bad ones in `rejected`.
        `?format=junit|csv|table` renders the same body for a pipeline or a person.
        """
        if query.get("ruleset"):  # a bad name is reported before the body is read
            resolve_ruleset(query["ruleset"])
        body, media_type, charset = raw_body()
        check_text_limits(body, media_type)
        intake = read_body(body, media_type, charset=charset, adapter=query.get("adapter"),
                           profile=query.get("profile"), profile_dir=settings().profile_dir)
        check_row_count(intake.items)
        ruleset_id, where = chosen_ruleset_id(query.get("ruleset"), intake.ruleset)
        ruleset = resolve_ruleset(ruleset_id, **where)
        records = intake.records()
        with collector_paused():  # the body is fresh acyclic dicts: see engine.verify.collector_paused
            answer = verify_body(ruleset, verify(records, ruleset), intake.rejected)
        policy = policy_from_names(query.get("fail_on"), query.get("warn_on"))
        failing = {FAILING_HEADER: str(policy.failing_circuits(answer["verdicts"])),
                   NOTICE_HEADER: answer["notice"]}
        if query.get("format") is None:
            return verdicts_response(answer, headers=failing)
        text, media_type = render(answer, query["format"], policy)
        return Response(text, status=200, content_type=media_type, headers=failing)
