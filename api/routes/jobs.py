"""Jobs (site visits): create, list (cursor pages), read; their merged circuits and verdicts."""

from __future__ import annotations

from typing import Any

from flask import Response, request
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE, ValidationError

from api.answers import verify_body
from api.db import get_session
from api.db.models import Circuit, Job
from api.db.repository import create_job, get_job, job_circuits, job_history, list_jobs, records_of
from api.errors import ApiError
from api.http.conditional import if_none_match, parse_rfc3339, verdicts_etag
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC, commit_with
from api.intake.bodies import JSON_MEDIA_TYPE, read_json_document, validation_problem
from api.routes.common import json_response, raw_body, resolve_ruleset, settings
from api.schemas.jobs import (
    CircuitsQuerySchema,
    CircuitsResponseSchema,
    JobCreateSchema,
    JobListQuerySchema,
    JobListSchema,
    JobSchema,
    JobVerdictsSchema,
)
from api.webhooks.outbox import emit_job_created
from engine import CircuitRecord, record_to_dict, verify

IF_NONE_MATCH_DOC = {"in": "header", "name": "If-None-Match", "required": False, "schema": {"type": "string"},
                     "description": "an ETag of an earlier answer: 304 while the verdicts are unchanged"}

__all__ = ["blp", "circuit_dict", "job_dict"]

blp = Blueprint("jobs", __name__, url_prefix="/v1", description="Jobs, their circuits and verdicts")


def job_dict(job: Job) -> dict[str, Any]:
    return {"id": job.id, "organisation": job.organisation.slug, "reference": job.reference,
            "site": job.site, "ruleset": job.ruleset, "external_ref": job.external_ref,
            "created_at": job.created_at.isoformat(), "updated_at": job.updated_at.isoformat(),
            "revision": job.revision}


def circuit_dict(row: Circuit, record: CircuitRecord) -> dict[str, Any]:
    return {"board": row.board, "circuit": row.circuit, "external_ref": row.external_ref,
            "record": record_to_dict(record), "updated_at": row.updated_at.isoformat(),
            "upload_id": row.upload_id}


def _json_body(schema: Any) -> dict[str, Any]:
    body, media_type, _charset = raw_body()
    if media_type != JSON_MEDIA_TYPE:
        raise ApiError(415, "unsupported_media_type",
                       f"send application/json, not {media_type or 'a body without a Content-Type'}",
                       errors=[{"parameter": "Content-Type", "code": "unsupported_media_type",
                                "reason": "expected application/json"}], extra={"choices": [JSON_MEDIA_TYPE]})
    try:
        loaded: dict[str, Any] = schema.load(read_json_document(body))
    except ValidationError as exc:
        raise validation_problem(exc) from None
    return loaded


@blp.route("/jobs")
class Jobs(MethodView):
    @blp.doc(requestBody={"required": True, "content": {JSON_MEDIA_TYPE: {"schema": JobCreateSchema}}},
             parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(201, JobSchema)
    def post(self) -> Any:
        """Create a job: reference, site, and the ruleset its verdicts use."""
        data = _json_body(JobCreateSchema())
        ruleset = resolve_ruleset(data.get("ruleset"), pointer="/ruleset")
        session = get_session()
        job = create_job(session, reference=data["reference"], site=data["site"], ruleset=ruleset.id,
                         external_ref=data.get("external_ref"))
        emit_job_created(session, job, job_dict(job))  # committed with the job, or not at all
        return commit_with(session, json_response(job_dict(job), 201, {"Location": f"/v1/jobs/{job.id}"}))

    @blp.arguments(JobListQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, JobListSchema)
    def get(self, **query: Any) -> Any:
        """Jobs in creation order, a page at a time (`next_cursor` → `?cursor=`).

        `?updated_since=` (RFC 3339) keeps jobs changed at or after that time;
        `?external_ref=` the jobs with that reference in the caller's system.
        """
        limit = query.get("limit") or settings().page_limit
        since = query.get("updated_since")
        jobs, cursor = list_jobs(get_session(), limit=limit, cursor=query.get("cursor"),
                                 reference=query.get("reference"), external_ref=query.get("external_ref"),
                                 updated_since=since and parse_rfc3339(since, parameter="updated_since"))
        return json_response({"items": [job_dict(j) for j in jobs], "next_cursor": cursor, "limit": limit})


@blp.route("/jobs/<int:job_id>")
class JobDetail(MethodView):
    @blp.response(200, JobSchema)
    def get(self, job_id: int) -> Any:
        """One job."""
        return json_response(job_dict(get_job(get_session(), job_id)))


@blp.route("/jobs/<int:job_id>/circuits")
class JobCircuits(MethodView):
    @blp.arguments(CircuitsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, CircuitsResponseSchema)
    def get(self, job_id: int, history: bool = False) -> Any:
        """The job's merged circuit records; `?history=true` adds every value of each field."""
        session = get_session()
        job = get_job(session, job_id)
        rows = job_circuits(session, job)
        by_circuit = job_history(session, job) if history else {}
        out = []
        for row, record in zip(rows, records_of(rows), strict=True):
            item = circuit_dict(row, record)
            if history:
                item["history"] = by_circuit.get(row.id, {})
            out.append(item)
        return json_response({"job_id": job.id, "circuits": out})


@blp.route("/jobs/<int:job_id>/verdicts")
class JobVerdicts(MethodView):
    @blp.doc(parameters=[IF_NONE_MATCH_DOC], responses={304: {"description": "unchanged since that ETag"}})
    @blp.response(200, JobVerdictsSchema, headers={"ETag": {"schema": {"type": "string"}}})
    def get(self, job_id: int) -> Any:
        """Verdicts of all the job's circuits, recomputed now; `If-None-Match` → 304 if unchanged."""
        session = get_session()
        job = get_job(session, job_id)
        ruleset = resolve_ruleset(job.ruleset)
        etag = verdicts_etag(job, ruleset)  # from the job row alone: a 304 reads no record
        if if_none_match(request.headers.get("If-None-Match"), etag):
            return Response(status=304, headers={"ETag": etag})
        records = records_of(job_circuits(session, job))
        return json_response({"job_id": job.id, **verify_body(ruleset, verify(records, ruleset), [])},
                             headers={"ETag": etag})
