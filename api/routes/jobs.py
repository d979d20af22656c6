"""Jobs (site visits): create, list (cursor pages), read; their merged circuits and verdicts."""

from __future__ import annotations

from typing import Any

from flask import Response, request
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE

from api.answers import VerifyAnswer, circuit_state
from api.db.repository import create_job, get_job, job_circuits, job_history, list_jobs, records_of
from api.db.session import get_session
from api.http.auth import tenant
from api.http.conditional import if_none_match, parse_rfc3339, verdicts_etag
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC
from api.routes.common import json_body, json_body_doc, resolve_ruleset, settings
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
from engine import verify

IF_NONE_MATCH_DOC = {"in": "header", "name": "If-None-Match", "required": False, "schema": {"type": "string"},
                     "description": "an ETag of an earlier answer: 304 while the verdicts are unchanged"}

__all__ = ["blp"]

blp = Blueprint("jobs", __name__, url_prefix="/v1", description="Jobs, their circuits and verdicts")


@blp.route("/jobs")
class Jobs(MethodView):
    @blp.doc(requestBody=json_body_doc(JobCreateSchema), parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(201, JobSchema)
    def post(self) -> Any:
        """Create a job: reference, site, and the ruleset its verdicts use."""
        data = json_body(JobCreateSchema())
        ruleset = resolve_ruleset(data.get("ruleset"), pointer="/ruleset")
        session = get_session()
        job = create_job(session, tenant(), reference=data["reference"], site=data["site"],
                         ruleset=ruleset.id, external_ref=data.get("external_ref"))
        emit_job_created(session, job, JobSchema().dump(job))  # committed with the job, or not at all
        return job, 201, {"Location": f"/v1/jobs/{job.id}"}

    @blp.arguments(JobListQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, JobListSchema)
    def get(self, **query: Any) -> Any:
        """Jobs in creation order, a page at a time (`next_cursor` → `?cursor=`).

        `?updated_since=` (RFC 3339) keeps jobs changed at or after that time;
        `?external_ref=` the jobs with that reference in the caller's system.
        """
        limit = query.get("limit") or settings().page_limit
        since = query.get("updated_since")
        jobs, cursor = list_jobs(get_session(), tenant(), limit=limit, cursor=query.get("cursor"),
                                 reference=query.get("reference"), external_ref=query.get("external_ref"),
                                 updated_since=since and parse_rfc3339(since, parameter="updated_since"))
        return {"items": jobs, "next_cursor": cursor, "limit": limit}


@blp.route("/jobs/<int:job_id>")
class JobDetail(MethodView):
    @blp.response(200, JobSchema)
    def get(self, job_id: int) -> Any:
        """One job."""
        return get_job(get_session(), tenant(), job_id)


@blp.route("/jobs/<int:job_id>/circuits")
class JobCircuits(MethodView):
    @blp.arguments(CircuitsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, CircuitsResponseSchema)
    def get(self, job_id: int, history: bool = False) -> Any:
        """The job's merged circuit records; `?history=true` adds every value of each field."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        rows = job_circuits(session, job)
        by_circuit = job_history(session, job) if history else {}
        states = [circuit_state(row, record, by_circuit.get(row.id, {}) if history else None)
                  for row, record in zip(rows, records_of(rows), strict=True)]
        return {"job_id": job.id, "circuits": states}


@blp.route("/jobs/<int:job_id>/verdicts")
class JobVerdicts(MethodView):
    @blp.doc(parameters=[IF_NONE_MATCH_DOC], responses={304: {"description": "unchanged since that ETag"}})
    @blp.response(200, JobVerdictsSchema, headers={"ETag": {"schema": {"type": "string"}}})
    def get(self, job_id: int) -> Any:
        """Verdicts of all the job's circuits, recomputed now; `If-None-Match` → 304 if unchanged."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        ruleset = resolve_ruleset(job.ruleset)
        etag = verdicts_etag(job, ruleset)  # from the job row alone: a 304 reads no record
        if if_none_match(request.headers.get("If-None-Match"), etag):
            return Response(status=304, headers={"ETag": etag})
        records = records_of(job_circuits(session, job))
        return VerifyAnswer(ruleset=ruleset, verdicts=verify(records, ruleset), job_id=job.id), {"ETag": etag}
